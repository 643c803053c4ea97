// FileMover: moves a finished sample file out of the drop directory, to done/ or to
// quarantine/, without ever overwriting anything.
//
//   MoveToDone(name, event_seconds)
//     drop_dir/<name> -> done_dir/<YYYY-MM-DD>/<name>, the day being the UTC day of
//     `event_seconds` (event time, s since the epoch; e.g. the sample's first record),
//     so that the archive is arranged by when the water was sampled, not when it was
//     read. The day folder is made when missing.
//   MoveToQuarantine(name, note)
//     drop_dir/<name> -> quarantine_dir/<name>, beside a text note <name>.reason saying
//     what was wrong, in which file and line, when, and what to do. The note is written
//     (atomically) before the file is moved, so a quarantined file never lacks its note.
//
// Never overwrite: when the target name (or, in quarantine, its note) exists, ".1",
// ".2", ... is appended to the name, up to ".999". Durability: after the rename both
// directories are fsynced, and a newly made day folder's parent too.
//
// Names: `name` must be one path component (IsSafeEntryName): "../x" or "a/b" are
// refused with kInvalidArgument before anything is touched; spaces, newlines and bytes
// that are not UTF-8 are moved as they are and written escaped in notes.
//
// Defaults: an empty done_dir means <drop_dir>/done, an empty quarantine_dir means
// <drop_dir>/quarantine (the watcher skips directories, so both may sit inside drop_dir).
//
// Threading: one thread at a time (the pipeline's). The "exists, then rename" check is
// not atomic against a second writer into done_dir; seston is the only writer there.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>

#include "base/clock.h"
#include "base/file_system.h"
#include "base/status.h"
#include "ingest/input_options.h"

namespace seston {

// What goes into a quarantine note.
struct QuarantineNote {
  std::string problem;     // what was wrong, e.g. "header has no column \"time\""
  std::uint64_t line = 0;  // 1-based line where it was found; 0: the whole file
  // What the technician should do; empty gives the default advice (fix the file and
  // move it back into the drop directory to have it read again).
  std::string remedy;
};

class FileMover {
 public:
  // Resolves the default folders and makes done_dir and quarantine_dir if missing, so a
  // permission problem shows at startup rather than with the first finished file.
  static Result<FileMover> Create(FileSystem& fs, const Clock& clock, const InputOptions& options);

  // Returns where the file now is.
  Result<std::filesystem::path> MoveToDone(const std::string& name, double event_seconds);
  Result<std::filesystem::path> MoveToQuarantine(const std::string& name,
                                                 const QuarantineNote& note);

  const std::filesystem::path& done_dir() const { return done_dir_; }
  const std::filesystem::path& quarantine_dir() const { return quarantine_dir_; }

 private:
  FileMover(FileSystem& fs, const Clock& clock, std::filesystem::path drop_dir,
            std::filesystem::path done_dir, std::filesystem::path quarantine_dir);

  // drop_dir/<name>, checked to be a safe name of a regular file.
  Result<std::filesystem::path> Source(const std::string& name);
  // The first of <directory>/<name>, <name>.1, ... that is free; with `with_note`, the
  // matching ".reason" name must be free too.
  Result<std::filesystem::path> FreeTarget(const std::filesystem::path& directory,
                                           const std::string& name, bool with_note);
  Status MoveAndSync(const std::filesystem::path& from, const std::filesystem::path& to);

  FileSystem* fs_;
  const Clock* clock_;
  std::filesystem::path drop_dir_;
  std::filesystem::path done_dir_;
  std::filesystem::path quarantine_dir_;
};

}  // namespace seston
