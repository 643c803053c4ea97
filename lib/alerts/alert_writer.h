// AlertWriter: writes each alert event as one pretty-printed JSON file (format in
// alerts/alert_event.h) in the alert directory.
//
// Files are written atomically (WriteFileAtomically: temp "<name>.tmp", fsync, rename,
// fsync of the directory), so a reader globbing *.json never sees half a file. Names sort
// by event time, then by sequence:
//   <FormatCompact(time)>-<sequence, 6 digits or more>-<event>-<kind>.json
//   e.g. 20261202T030405Z-000042-raised-composition.json
// Names are built from our own fields only — never from labels, messages or the station
// — and `event` and `kind` must be lower-case words ([a-z0-9_], 1..64 characters), so no
// text from outside can reach a path.
//
// Thread safety: one writer per thread; the file system decides the rest.
#pragma once

#include <filesystem>

#include "alerts/alert_event.h"
#include "base/file_system.h"
#include "base/status.h"

namespace seston {

class AlertWriter {
 public:
  // Creates `dir` (and parents) when missing. `fs` must outlive the writer.
  static Result<AlertWriter> Create(FileSystem& fs, std::filesystem::path dir);

  // Writes `event`; returns the path of the file written.
  Result<std::filesystem::path> Write(const AlertEvent& event);

  // The file name Write would use, or kInvalidArgument when `event` or `kind` is not a
  // lower-case word.
  static Result<std::string> FileNameOf(const AlertEvent& event);

  const std::filesystem::path& dir() const { return dir_; }

 private:
  AlertWriter(FileSystem& fs, std::filesystem::path dir) : fs_(&fs), dir_(std::move(dir)) {}

  FileSystem* fs_;
  std::filesystem::path dir_;
};

}  // namespace seston
