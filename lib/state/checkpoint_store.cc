#include "state/checkpoint_store.h"

#include <boost/crc.hpp>
#include <charconv>
#include <cstdio>

namespace seston {
namespace {

constexpr std::string_view kMagic = "seston-checkpoint";
constexpr std::string_view kVersion = "v1";
constexpr std::size_t kMaxHeaderBytes = 128;
constexpr std::string_view kHeaderShape = "\"seston-checkpoint v1 crc32=<8 hex digits> bytes=<n>\"";

std::uint32_t Crc32(std::string_view data) {
  boost::crc_32_type crc;
  crc.process_bytes(data.data(), data.size());
  return crc.checksum();
}

std::string Hex8(std::uint32_t value) {
  char buffer[9];
  std::snprintf(buffer, sizeof buffer, "%08x", value);
  return buffer;
}

// The next space-separated word of `line`, removed from it.
std::string_view NextWord(std::string_view& line) {
  std::size_t space = line.find(' ');
  std::string_view word = line.substr(0, space);
  line.remove_prefix(space == std::string_view::npos ? line.size() : space + 1);
  return word;
}

template <typename T>
bool ParseNumber(std::string_view text, int base, T& value) {
  if (text.empty()) return false;
  auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value, base);
  return error == std::errc() && end == text.data() + text.size();
}

}  // namespace

std::string CheckpointStore::Encode(std::string_view payload) {
  std::string file(kMagic);
  file += " ";
  file += kVersion;
  file += " crc32=" + Hex8(Crc32(payload)) + " bytes=" + std::to_string(payload.size()) + "\n";
  file += payload;
  return file;
}

Result<std::string> CheckpointStore::Decode(std::string_view file) {
  std::size_t newline = file.substr(0, kMaxHeaderBytes).find('\n');
  if (newline == std::string_view::npos) {
    return Status::Corruption("has no header line; expected " + std::string(kHeaderShape));
  }
  std::string_view header = file.substr(0, newline);
  std::string_view payload = file.substr(newline + 1);
  std::string_view rest = header;
  if (NextWord(rest) != kMagic) {
    return Status::Corruption("does not start with \"seston-checkpoint\"; expected " +
                              std::string(kHeaderShape));
  }
  std::string_view version = NextWord(rest);
  if (version != kVersion) {
    return Status::Corruption("is format version \"" + std::string(version) +
                              "\"; this build reads v1");
  }
  std::string_view crc_field = NextWord(rest);
  std::string_view bytes_field = NextWord(rest);
  std::uint32_t crc = 0;
  std::uint64_t bytes = 0;
  if (crc_field.substr(0, 6) != "crc32=" || crc_field.size() != 14 ||
      !ParseNumber(crc_field.substr(6), 16, crc) || bytes_field.substr(0, 6) != "bytes=" ||
      !ParseNumber(bytes_field.substr(6), 10, bytes) || !rest.empty()) {
    return Status::Corruption("has a malformed header \"" + std::string(header) + "\"; expected " +
                              std::string(kHeaderShape));
  }
  if (payload.size() != bytes) {
    return Status::Corruption(
        std::string(payload.size() < bytes ? "is truncated" : "is longer than its header says") +
        ": the header says " + std::to_string(bytes) + " payload bytes, the file holds " +
        std::to_string(payload.size()));
  }
  std::uint32_t actual = Crc32(payload);
  if (actual != crc) {
    return Status::Corruption("fails its checksum: the header says crc32=" + Hex8(crc) +
                              ", the payload has crc32=" + Hex8(actual));
  }
  return std::string(payload);
}

Result<CheckpointStore> CheckpointStore::Create(FileSystem& fs, const StateOptions& options) {
  if (options.dir.empty()) {
    return Status::InvalidArgument("state.dir must name the directory for checkpoints, got \"\"");
  }
  SESTON_RETURN_IF_ERROR(fs.CreateDirectories(options.dir));
  return CheckpointStore(fs, options);
}

Result<nlohmann::json> CheckpointStore::Read(const std::filesystem::path& path) {
  SESTON_ASSIGN_OR_RETURN(std::string file, fs_->ReadFile(path, options_.max_checkpoint_bytes));
  Result<std::string> payload = Decode(file);
  if (!payload.ok()) return payload.status();
  try {
    return nlohmann::json::parse(*payload);
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("has a payload that is not valid JSON: ") + error.what());
  }
}

Result<LoadedCheckpoint> CheckpointStore::Load() {
  const std::filesystem::path current = dir_ / kCurrentName;
  const std::filesystem::path previous = dir_ / kPreviousName;
  LoadedCheckpoint loaded;
  Result<nlohmann::json> from_current = Read(current);
  current_is_valid_ = from_current.ok();
  if (from_current.ok()) {
    loaded.state = std::move(*from_current);
    return loaded;
  }
  const bool current_missing = from_current.status().code() == StatusCode::kNotFound;
  std::string current_problem =
      current.string() + (current_missing ? " is missing" : " " + from_current.status().message());

  Result<nlohmann::json> from_previous = Read(previous);
  if (from_previous.ok()) {
    loaded.state = std::move(*from_previous);
    loaded.used_fallback = true;
    loaded.problem = current_problem + "; using " + previous.string() + " instead";
    return loaded;
  }
  const bool previous_missing = from_previous.status().code() == StatusCode::kNotFound;
  if (current_missing && previous_missing) return loaded;  // nothing written yet
  std::string both = current_problem + "; " + previous.string() +
                     (previous_missing ? " is missing" : " " + from_previous.status().message());
  if (options_.start_fresh_if_unreadable) {
    loaded.problem = both + "; starting with empty state as state.start_fresh_if_unreadable says";
    return loaded;
  }
  return Status::Corruption("no usable checkpoint: " + both +
                            ". Restore a copy of either file, or set "
                            "state.start_fresh_if_unreadable: true to start with empty state");
}

Status CheckpointStore::Write(const nlohmann::json& state) {
  Status status = WriteSteps(state);
  std::lock_guard lock(health_->mutex);
  health_->last = status;
  if (status.ok()) {
    ++health_->successes;
  } else {
    if (health_->failures == 0) health_->first_failure = status;
    ++health_->failures;
  }
  return status;
}

Status CheckpointStore::WriteSteps(const nlohmann::json& state) {
  std::string payload;
  try {
    payload = state.dump();
  } catch (const nlohmann::json::exception& error) {
    return Status::InvalidArgument(std::string("checkpoint state cannot be serialised: ") +
                                   error.what());
  }
  std::string file = Encode(payload);
  if (file.size() > options_.max_checkpoint_bytes) {
    return Status::ResourceExhausted("checkpoint would be " + std::to_string(file.size()) +
                                     " bytes, more than state.max_checkpoint_bytes = " +
                                     std::to_string(options_.max_checkpoint_bytes));
  }
  const std::filesystem::path current = dir_ / kCurrentName;
  const std::filesystem::path next = dir_ / kNextName;
  if (!current_is_valid_) current_is_valid_ = Read(current).ok();

  SESTON_RETURN_IF_ERROR(WriteFileAtomically(*fs_, next, file).WithContext("checkpoint"));
  if (*current_is_valid_) {
    Status renamed = fs_->Rename(current, dir_ / kPreviousName);
    if (!renamed.ok()) return renamed.WithContext("checkpoint");
    current_is_valid_ = false;  // moved away: a failure from here on leaves no current
  }
  SESTON_RETURN_IF_ERROR(fs_->Rename(next, current).WithContext("checkpoint"));
  current_is_valid_ = true;
  return fs_->SyncDirectory(dir_).WithContext("checkpoint");
}

Status CheckpointStore::LastWriteStatus() const {
  std::lock_guard lock(health_->mutex);
  return health_->last;
}

Status CheckpointStore::FirstWriteFailure() const {
  std::lock_guard lock(health_->mutex);
  return health_->first_failure;
}

std::uint64_t CheckpointStore::successful_writes() const {
  std::lock_guard lock(health_->mutex);
  return health_->successes;
}

std::uint64_t CheckpointStore::failed_writes() const {
  std::lock_guard lock(health_->mutex);
  return health_->failures;
}

}  // namespace seston
