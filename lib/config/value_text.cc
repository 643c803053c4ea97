#include "config/value_text.h"

#include <charconv>
#include <nlohmann/json.hpp>

namespace seston {

std::string NumberText(double value) {
  constexpr std::ptrdiff_t kLongestPlain = 21;
  char buffer[400];  // fixed notation of the largest double has 309 digits
  const auto fixed = std::to_chars(buffer, buffer + sizeof buffer, value, std::chars_format::fixed);
  if (fixed.ec == std::errc() && fixed.ptr - buffer <= kLongestPlain) {
    return std::string(buffer, fixed.ptr);
  }
  const auto shortest = std::to_chars(buffer, buffer + sizeof buffer, value);
  return std::string(buffer, shortest.ptr);
}

std::string QuotedText(std::string_view text) { return nlohmann::json(std::string(text)).dump(); }

}  // namespace seston
