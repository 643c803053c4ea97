#include "api/status_page.h"

namespace seston {
namespace {

constexpr std::string_view kPage =
#include "api/page/status_page.html.inc"
    ;

}  // namespace

std::string_view StatusPageHtml() { return kPage; }

}  // namespace seston
