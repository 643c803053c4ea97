#include "api/query_string.h"

#include <charconv>
#include <cmath>
#include <optional>
#include <utility>

namespace seston {
namespace {

std::optional<int> HexValue(char c) {
  if (c >= '0' && c <= '9') return c - '0';
  if (c >= 'a' && c <= 'f') return c - 'a' + 10;
  if (c >= 'A' && c <= 'F') return c - 'A' + 10;
  return std::nullopt;
}

}  // namespace

Result<std::string> PercentDecode(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (std::size_t i = 0; i < text.size(); ++i) {
    if (text[i] != '%') {
      out.push_back(text[i]);
      continue;
    }
    std::optional<int> high = i + 1 < text.size() ? HexValue(text[i + 1]) : std::nullopt;
    std::optional<int> low = i + 2 < text.size() ? HexValue(text[i + 2]) : std::nullopt;
    if (!high || !low) {
      return Status::InvalidArgument("bad percent escape at offset " + std::to_string(i) +
                                     " of \"" + std::string(text) +
                                     "\"; expected % followed by two hex digits");
    }
    out.push_back(static_cast<char>(*high * 16 + *low));
    i += 2;
  }
  return out;
}

std::string PercentEncode(std::string_view text) {
  constexpr char kHex[] = "0123456789ABCDEF";
  std::string out;
  for (char c : text) {
    bool unreserved = (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') ||
                      c == '-' || c == '.' || c == '_' || c == '~';
    if (unreserved) {
      out.push_back(c);
    } else {
      auto byte = static_cast<unsigned char>(c);
      out += {'%', kHex[byte >> 4], kHex[byte & 0xF]};
    }
  }
  return out;
}

Result<std::map<std::string, std::string, std::less<>>> ParseQuery(std::string_view query) {
  std::map<std::string, std::string, std::less<>> parameters;
  while (!query.empty()) {
    std::size_t end = query.find('&');
    std::string_view piece = query.substr(0, end);
    query = end == std::string_view::npos ? std::string_view() : query.substr(end + 1);
    if (piece.empty()) continue;
    std::size_t equals = piece.find('=');
    if (equals == std::string_view::npos || equals == 0 || equals + 1 == piece.size()) {
      return Status::InvalidArgument("query parameter \"" + std::string(piece) +
                                     "\" must have the form name=value");
    }
    SESTON_ASSIGN_OR_RETURN(std::string name, PercentDecode(piece.substr(0, equals)));
    SESTON_ASSIGN_OR_RETURN(std::string value, PercentDecode(piece.substr(equals + 1)));
    if (parameters.contains(name)) {
      return Status::InvalidArgument("query parameter \"" + name +
                                     "\" is given more than once; give it once");
    }
    parameters.emplace(std::move(name), std::move(value));
  }
  return parameters;
}

Result<double> ParseDurationSeconds(std::string_view text) {
  auto invalid = [&] {
    return Status::InvalidArgument("\"" + std::string(text) +
                                   "\" is not a duration; expected a positive number of "
                                   "seconds, optionally with a unit s, m, h or d (\"90m\")");
  };
  constexpr std::pair<char, double> kUnits[] = {{'s', 1}, {'m', 60}, {'h', 3600}, {'d', 86400}};
  double unit = 1;
  std::string_view number = text;
  for (const auto& [suffix, seconds] : kUnits) {
    if (!number.empty() && number.back() == suffix) {
      unit = seconds;
      number.remove_suffix(1);
      break;
    }
  }
  double value = 0;
  const char* end = number.data() + number.size();
  auto [parsed_to, error] = std::from_chars(number.data(), end, value);
  if (number.empty() || error != std::errc() || parsed_to != end || !std::isfinite(value) ||
      value <= 0) {
    return invalid();
  }
  return value * unit;
}

}  // namespace seston
