// FileSystem: the seam through which lib/ touches files.
//
// Every read, write, rename and directory listing in lib/ goes through this interface so
// that tests can inject faults (a failing rename or fsync, ENOSPC, a torn write) and count
// operations. PosixFileSystem is the real one. Paths are std::filesystem::path; no method
// ever builds a path from text it was not given by the caller.
//
// Durability vocabulary used by callers:
//   WriteFileAtomically(fs, path, data): temp file beside `path` -> write -> fsync ->
//   rename over `path` -> fsync(directory). A reader sees the old file or the new one,
//   never half of either; after it returns ok the new file survives a power cut.
//
// Thread safety: PosixFileSystem is stateless and may be used from any thread. A
// WritableFile belongs to one thread.
#pragma once

#include <cstdint>
#include <filesystem>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"

namespace seston {

struct FileInfo {
  std::uint64_t size_bytes = 0;
  double modified_seconds = 0;  // mtime, seconds since the Unix epoch
  bool is_regular = false;
  bool is_directory = false;
};

struct DirectoryEntry {
  std::string name;  // the entry's own name, not a path
  FileInfo info;
};

struct SpaceInfo {
  std::uint64_t available_bytes = 0;
  std::uint64_t capacity_bytes = 0;
};

class WritableFile {
 public:
  virtual ~WritableFile() = default;
  virtual Status Append(std::string_view data) = 0;
  virtual Status Sync() = 0;  // fdatasync: data durable on return
  virtual Status Close() = 0;
};

class FileSystem {
 public:
  virtual ~FileSystem() = default;

  // Reads at most `max_bytes`; a larger file is kResourceExhausted.
  virtual Result<std::string> ReadFile(const std::filesystem::path& path,
                                       std::uint64_t max_bytes) = 0;
  // Opens for writing; `append` keeps existing content, otherwise the file is truncated.
  virtual Result<std::unique_ptr<WritableFile>> OpenForWrite(const std::filesystem::path& path,
                                                             bool append) = 0;
  virtual Status Rename(const std::filesystem::path& from, const std::filesystem::path& to) = 0;
  virtual Status Remove(const std::filesystem::path& path) = 0;
  virtual Status Truncate(const std::filesystem::path& path, std::uint64_t size_bytes) = 0;
  virtual Status SyncDirectory(const std::filesystem::path& directory) = 0;
  virtual Status CreateDirectories(const std::filesystem::path& directory) = 0;
  virtual Result<FileInfo> Stat(const std::filesystem::path& path) = 0;
  virtual bool Exists(const std::filesystem::path& path) = 0;
  virtual Result<std::vector<DirectoryEntry>> ListDirectory(
      const std::filesystem::path& directory) = 0;
  virtual Result<SpaceInfo> Space(const std::filesystem::path& path) = 0;
};

class PosixFileSystem final : public FileSystem {
 public:
  Result<std::string> ReadFile(const std::filesystem::path& path,
                               std::uint64_t max_bytes) override;
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

  // A process-wide instance.
  static PosixFileSystem& Instance();
};

// temp -> write -> fsync -> rename -> fsync(dir); see the header comment.
Status WriteFileAtomically(FileSystem& fs, const std::filesystem::path& path,
                           std::string_view data);

}  // namespace seston
