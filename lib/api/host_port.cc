#include "api/host_port.h"

#include <charconv>

namespace seston {

Result<HostPort> ParseHostPort(std::string_view text) {
  auto invalid = [&] {
    return Status::InvalidArgument("\"" + std::string(text) +
                                   "\" is not HOST:PORT; expected e.g. 127.0.0.1:7460, "
                                   "[::1]:7460 or localhost:7460, with PORT 0 to 65535");
  };
  std::size_t colon = text.rfind(':');
  if (colon == std::string_view::npos) return invalid();
  std::string_view host = text.substr(0, colon);
  std::string_view port_text = text.substr(colon + 1);
  if (host.starts_with('[')) {
    if (!host.ends_with(']') || host.size() < 3) return invalid();
    host = host.substr(1, host.size() - 2);
  } else if (host.find(':') != std::string_view::npos) {
    return invalid();  // an IPv6 address needs its brackets
  }
  HostPort result;
  result.host = host.empty() ? "127.0.0.1" : std::string(host);
  const char* end = port_text.data() + port_text.size();
  auto [parsed_to, error] = std::from_chars(port_text.data(), end, result.port);
  if (port_text.empty() || error != std::errc() || parsed_to != end) return invalid();
  return result;
}

}  // namespace seston
