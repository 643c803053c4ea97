#include "alerts/alert_writer.h"

#include <cstdio>
#include <string>
#include <string_view>

#include "base/time_format.h"

namespace seston {
namespace {

bool IsLowerCaseWord(std::string_view text) {
  if (text.empty() || text.size() > 64) return false;
  for (char c : text) {
    if (!((c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') || c == '_')) return false;
  }
  return true;
}

}  // namespace

Result<AlertWriter> AlertWriter::Create(FileSystem& fs, std::filesystem::path dir) {
  Status created = fs.CreateDirectories(dir);
  if (!created.ok()) return created.WithContext("alert directory");
  return AlertWriter(fs, std::move(dir));
}

Result<std::string> AlertWriter::FileNameOf(const AlertEvent& event) {
  if (!IsLowerCaseWord(event.event) || !IsLowerCaseWord(event.kind)) {
    return Status::InvalidArgument(
        "alert event \"" + event.event + "\" of kind \"" + event.kind +
        "\" cannot name a file; event and kind must be 1 to 64 characters of a-z, 0-9, _");
  }
  char sequence[32];
  std::snprintf(sequence, sizeof sequence, "%06llu",
                static_cast<unsigned long long>(event.sequence));
  return FormatCompact(event.time_seconds) + "-" + sequence + "-" + event.event + "-" + event.kind +
         ".json";
}

Result<std::filesystem::path> AlertWriter::Write(const AlertEvent& event) {
  SESTON_ASSIGN_OR_RETURN(std::string name, FileNameOf(event));
  std::filesystem::path path = dir_ / name;
  // dump's error handler "replace" keeps a label with invalid UTF-8 from throwing.
  const std::string text =
      ToJson(event).dump(2, ' ', false, nlohmann::json::error_handler_t::replace) + "\n";
  Status written = WriteFileAtomically(*fs_, path, text);
  if (!written.ok()) return written.WithContext("alert file");
  return path;
}

}  // namespace seston
