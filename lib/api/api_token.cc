#include "api/api_token.h"

namespace seston {

Result<std::string> LoadApiToken(FileSystem& file_system, const std::string& path) {
  constexpr std::size_t kMinCharacters = 16;
  constexpr std::size_t kMaxCharacters = 4096;
  constexpr std::uint64_t kMaxFileBytes = kMaxCharacters + 1024;  // room for whitespace
  Result<std::string> content = file_system.ReadFile(path, kMaxFileBytes);
  if (!content.ok()) return content.status().WithContext("token file " + path);
  constexpr std::string_view kWhitespace = " \t\r\n";
  std::string_view token = *content;
  token.remove_prefix(std::min(token.find_first_not_of(kWhitespace), token.size()));
  token.remove_suffix(token.size() - (token.find_last_not_of(kWhitespace) + 1));
  bool printable = true;
  for (char c : token) printable = printable && c > ' ' && c < 0x7F;
  if (!printable || token.size() < kMinCharacters || token.size() > kMaxCharacters) {
    return Status::InvalidArgument(
        "token file " + path + ": the token must be " + std::to_string(kMinCharacters) + " to " +
        std::to_string(kMaxCharacters) +
        " printable ASCII characters without spaces (e.g. from `openssl rand -hex 32`), got " +
        std::to_string(token.size()) + (printable ? " characters" : " with other characters"));
  }
  return std::string(token);
}

}  // namespace seston
