// CheckpointStore: keeps the daemon's whole state on disk so that a restart, a crash or
// a power cut loses nothing that was committed. The pipeline builds one JSON document of
// every stage (model, counts with their count-file offsets, drift, alerts, and the list
// of input files already done) and calls Write; at start it calls Load.
//
// Files in StateOptions::dir (format: lib/state/CHECKPOINT_FORMAT.md):
//   checkpoint.current   the newest checkpoint
//   checkpoint.previous  the one before, the fallback when current is damaged
//   checkpoint.next      a new checkpoint on its way in (ignored by Load)
// Each is a header line "seston-checkpoint v1 crc32=<8 hex digits> bytes=<n>" and then
// the JSON payload of exactly n bytes whose CRC-32 (IEEE 802.3, as boost::crc_32_type) is
// the hex number.
//
// Write, in this order:
//   1. WriteFileAtomically(checkpoint.next): next.tmp written, fsynced, renamed to
//      checkpoint.next, directory fsynced. A failure here (a full disk, the likely one)
//      leaves current and previous untouched.
//   2. rename checkpoint.current -> checkpoint.previous, but only while current is known
//      to be valid (this store wrote it, or Load or a check read it whole); a damaged or
//      missing current is not allowed to push out a good previous.
//   3. rename checkpoint.next -> checkpoint.current.
//   4. fsync the directory.
// Why at every instant (a crash, a failure of any step, or a power cut that keeps any
// subset of the renames of 2-3 in any order) Load returns the old state O or the new
// state N, never an error, once a checkpoint existed before Write. Before Write, either
// (a) current = O is valid, or (b) current is missing or damaged and previous = O.
// Step 1 only adds files Load ignores. Case (a): with neither rename durable, current =
// O; with 2 alone, current is missing and previous = O, so Load falls back to O; with 3
// (alone or with 2), current = N, complete and fsynced before it got the name. Case (b):
// step 2 is skipped, so previous = O stays until step 3 makes current = N. Renames are
// atomic, so no other combination exists.
//
// Errors. Load returns the state, whether it had to fall back (and why current was
// refused), nothing when no checkpoint exists yet, and kCorruption naming both files and
// their faults when neither is usable (unless start_fresh_if_unreadable, which returns
// no state and the problem). The first failed Write is kept (FirstWriteFailure) for the
// health endpoint together with the last outcome and counts; Write keeps trying when
// called again, and every failure is returned to the caller.
//
// Thread safety: Write and Load belong to one thread (the checkpoint duty); the health
// accessors may be called from any thread.
#pragma once

#include <cstdint>
#include <filesystem>
#include <memory>
#include <mutex>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>

#include "base/file_system.h"
#include "base/status.h"
#include "state/state_options.h"

namespace seston {

struct LoadedCheckpoint {
  std::optional<nlohmann::json> state;  // nullopt: none yet (or starting fresh)
  bool used_fallback = false;           // state came from checkpoint.previous
  std::string problem;                  // why checkpoint.current was refused; "" when it wasn't
};

class CheckpointStore {
 public:
  static constexpr std::string_view kCurrentName = "checkpoint.current";
  static constexpr std::string_view kPreviousName = "checkpoint.previous";
  static constexpr std::string_view kNextName = "checkpoint.next";

  // Creates the directory when needed. Fails when dir is empty or cannot be made.
  static Result<CheckpointStore> Create(FileSystem& fs, const StateOptions& options);

  CheckpointStore(CheckpointStore&&) = default;
  CheckpointStore& operator=(CheckpointStore&&) = default;

  // See the header comment. Fails with the file system's status (kResourceExhausted for
  // a full disk), kInvalidArgument when the state cannot be serialised (a string that is
  // not UTF-8), kResourceExhausted when it is over max_checkpoint_bytes.
  Status Write(const nlohmann::json& state);
  Result<LoadedCheckpoint> Load();

  // ok before the first Write.
  Status LastWriteStatus() const;
  // The first failed Write since Create; ok when none failed.
  Status FirstWriteFailure() const;
  std::uint64_t successful_writes() const;
  std::uint64_t failed_writes() const;

  // The bytes of a checkpoint file holding `payload`, and back. Decode fails with
  // kCorruption saying what is wrong (no header, other version, truncated, checksum).
  static std::string Encode(std::string_view payload);
  static Result<std::string> Decode(std::string_view file);

 private:
  struct Health {
    std::mutex mutex;
    Status last;
    Status first_failure;
    std::uint64_t successes = 0;
    std::uint64_t failures = 0;
  };

  CheckpointStore(FileSystem& fs, const StateOptions& options)
      : fs_(&fs), options_(options), dir_(options.dir), health_(std::make_unique<Health>()) {}

  // The state in one checkpoint file; kNotFound when it is missing.
  Result<nlohmann::json> Read(const std::filesystem::path& path);
  Status WriteSteps(const nlohmann::json& state);

  FileSystem* fs_;
  StateOptions options_;
  std::filesystem::path dir_;
  std::optional<bool> current_is_valid_;  // nullopt: not looked at yet
  std::unique_ptr<Health> health_;
};

}  // namespace seston
