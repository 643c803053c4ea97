// FaultyFileSystem: a FileSystem wrapper for fault tests. It passes every call to the
// wrapped file system, counts calls per kind, and makes chosen calls fail: the n-th call
// of a kind (or of any kind), once or from then on, with the Status a real failure would
// give (IoError for EIO, ResourceExhausted for ENOSPC, NotFound for ENOENT). A torn
// Append writes the first half of its data to the real file and then fails, as a write
// cut short by a crash or a full disk.
//
// A failed call does nothing to the wrapped file system (except the torn half), so a
// test can stop at the failure and look at the files as a crash at that instant would
// leave them. Exists cannot fail (it has no Status) and is not counted among "any".
//
// Files opened through it report to it, so the FaultyFileSystem must outlive them.
// Thread safety: one thread.
#pragma once

#include <cstdint>
#include <filesystem>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "base/file_system.h"

namespace seston::testing {

enum class FileOperation {
  kReadFile,
  kOpenForWrite,
  kAppend,
  kSync,
  kClose,
  kRename,
  kRemove,
  kTruncate,
  kSyncDirectory,
  kCreateDirectories,
  kStat,
  kListDirectory,
  kSpace,
  kExists,
};

std::string_view FileOperationName(FileOperation operation);

struct FileFault {
  std::optional<FileOperation> operation;  // nullopt: any failable operation
  std::uint64_t nth = 1;                   // 1-based, among matching calls made after Arm
  Status status = Status::IoError("injected input/output error");
  bool torn = false;        // an Append writes the first half of its data, then fails
  bool persistent = false;  // every later matching call fails too (a disk that stays full)
};

class FaultyFileSystem final : public FileSystem {
 public:
  explicit FaultyFileSystem(FileSystem& base) : base_(&base) {}

  // Adds a fault; several may be armed at once.
  void Arm(FileFault fault);
  void DisarmAll() { faults_.clear(); }
  // How many armed faults have fired.
  std::uint64_t faults_fired() const { return fired_; }

  // Calls made since construction or ResetCounts, per kind and over the failable kinds.
  std::uint64_t count(FileOperation operation) const;
  std::uint64_t failable_count() const { return failable_count_; }
  void ResetCounts();

  Result<std::string> ReadFile(const std::filesystem::path& path, std::uint64_t max_bytes) override;
  Result<std::unique_ptr<WritableFile>> OpenForWrite(const std::filesystem::path& path,
                                                     bool append) override;
  Status Rename(const std::filesystem::path& from, const std::filesystem::path& to) override;
  Status Remove(const std::filesystem::path& path) override;
  Status Truncate(const std::filesystem::path& path, std::uint64_t size_bytes) override;
  Status SyncDirectory(const std::filesystem::path& directory) override;
  Status CreateDirectories(const std::filesystem::path& directory) override;
  Result<FileInfo> Stat(const std::filesystem::path& path) override;
  bool Exists(const std::filesystem::path& path) override;
  Result<std::vector<DirectoryEntry>> ListDirectory(
      const std::filesystem::path& directory) override;
  Result<SpaceInfo> Space(const std::filesystem::path& path) override;

 private:
  friend class FaultyWritableFile;
  struct ArmedFault {
    FileFault fault;
    std::uint64_t seen = 0;  // matching calls since armed
    bool done = false;
  };
  // Counts the call; the fault that hits it, if any.
  const FileFault* Check(FileOperation operation);
  static Status Injected(const FileFault& fault, FileOperation operation,
                         const std::filesystem::path& path);

  FileSystem* base_;
  std::vector<ArmedFault> faults_;
  std::map<FileOperation, std::uint64_t> counts_;
  std::uint64_t failable_count_ = 0;
  std::uint64_t fired_ = 0;
};

}  // namespace seston::testing
