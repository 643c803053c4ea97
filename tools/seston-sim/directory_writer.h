// DirectoryWriter: puts sample files into a directory the way an instrument would.
//
// Three ways to write, chosen by FileWriteMode:
//   kDirect    - write under the final name at once (batch mode: fastest);
//   kRenameIn  - write ".<name>.part", then rename it to <name>, so a watcher never sees
//                half a file under the final name (live mode default);
//   kSlowWrite - write under the final name in `slow_write_pieces` pieces spread over
//                `slow_write_seconds` of wall time, to exercise a reader's settle time.
// No fsync: a simulator's files are disposable, and batch runs write thousands.
//
// Thread safety: one writer per thread. The FileSystem must outlive the writer.
#pragma once

#include <filesystem>
#include <string_view>

#include "base/file_system.h"
#include "base/status.h"

namespace seston::sim {

enum class FileWriteMode { kDirect, kRenameIn, kSlowWrite };

struct DirectoryWriterOptions {
  FileWriteMode mode = FileWriteMode::kDirect;
  double slow_write_seconds = 3.0;  // wall seconds one slow write takes; > 0
  int slow_write_pieces = 6;        // pieces of a slow write; >= 2
};

class DirectoryWriter {
 public:
  // Creates `directory` when missing.
  static Result<DirectoryWriter> Create(FileSystem& fs, std::filesystem::path directory,
                                        DirectoryWriterOptions options);

  // Writes `contents` as `file_name` (a bare name, no directory part).
  Status Write(std::string_view file_name, std::string_view contents);

 private:
  DirectoryWriter(FileSystem& fs, std::filesystem::path directory, DirectoryWriterOptions options)
      : fs_(&fs), directory_(std::move(directory)), options_(options) {}

  Status WriteWhole(const std::filesystem::path& path, std::string_view contents);
  Status WriteInPieces(const std::filesystem::path& path, std::string_view contents);

  FileSystem* fs_;
  std::filesystem::path directory_;
  DirectoryWriterOptions options_;
};

}  // namespace seston::sim
