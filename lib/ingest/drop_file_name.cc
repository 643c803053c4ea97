#include "ingest/drop_file_name.h"

#include <array>

namespace seston {

bool IsSafeEntryName(std::string_view name) {
  if (name.empty() || name == "." || name == "..") return false;
  return name.find('/') == std::string_view::npos && name.find('\0') == std::string_view::npos;
}

bool IsDropFileName(std::string_view name, std::string_view file_suffix) {
  if (!IsSafeEntryName(name) || name.front() == '.') return false;
  if (name.ends_with(".part") || name.ends_with(".tmp") || name.ends_with('~')) return false;
  return name.size() > file_suffix.size() && name.ends_with(file_suffix);
}

std::string EscapeNameForText(std::string_view name) {
  static constexpr std::array<char, 16> kHex = {'0', '1', '2', '3', '4', '5', '6', '7',
                                                '8', '9', 'a', 'b', 'c', 'd', 'e', 'f'};
  std::string out;
  out.reserve(name.size());
  for (char c : name) {
    auto byte = static_cast<unsigned char>(c);
    if (c == '\\') {
      out += "\\\\";
    } else if (c == '\n') {
      out += "\\n";
    } else if (c == '\t') {
      out += "\\t";
    } else if (byte < 0x20 || byte >= 0x7f) {
      out += "\\x";
      out += kHex[byte >> 4];
      out += kHex[byte & 0xf];
    } else {
      out += c;
    }
  }
  return out;
}

}  // namespace seston
