#include "ingest/file_mover.h"

#include <cmath>
#include <utility>

#include "base/time_format.h"
#include "ingest/drop_file_name.h"

namespace seston {
namespace {

constexpr int kMaxNameSuffix = 999;
// 10000-01-01T00:00:00Z: the first instant FormatDay cannot write as YYYY-MM-DD.
constexpr double kEndOfYear9999 = 253402300800.0;

std::filesystem::path WithNote(std::filesystem::path path) {
  path += ".reason";
  return path;
}

}  // namespace

Result<FileMover> FileMover::Create(FileSystem& fs, const Clock& clock,
                                    const InputOptions& options) {
  std::filesystem::path drop_dir(options.drop_dir);
  std::filesystem::path done_dir =
      options.done_dir.empty() ? drop_dir / "done" : std::filesystem::path(options.done_dir);
  std::filesystem::path quarantine_dir = options.quarantine_dir.empty()
                                             ? drop_dir / "quarantine"
                                             : std::filesystem::path(options.quarantine_dir);
  SESTON_RETURN_IF_ERROR(fs.CreateDirectories(done_dir).WithContext("done directory"));
  SESTON_RETURN_IF_ERROR(fs.CreateDirectories(quarantine_dir).WithContext("quarantine directory"));
  return FileMover(fs, clock, std::move(drop_dir), std::move(done_dir), std::move(quarantine_dir));
}

FileMover::FileMover(FileSystem& fs, const Clock& clock, std::filesystem::path drop_dir,
                     std::filesystem::path done_dir, std::filesystem::path quarantine_dir)
    : fs_(&fs),
      clock_(&clock),
      drop_dir_(std::move(drop_dir)),
      done_dir_(std::move(done_dir)),
      quarantine_dir_(std::move(quarantine_dir)) {}

Result<std::filesystem::path> FileMover::Source(const std::string& name) {
  if (!IsSafeEntryName(name)) {
    return Status::InvalidArgument("file name \"" + EscapeNameForText(name) +
                                   "\" is not a single name inside the drop directory; "
                                   "names may not be empty, \".\", \"..\" or contain '/'");
  }
  std::filesystem::path source = drop_dir_ / name;
  SESTON_ASSIGN_OR_RETURN(FileInfo info, fs_->Stat(source));
  if (!info.is_regular) {
    return Status::InvalidArgument(source.string() +
                                   " is not a regular file; only regular "
                                   "files are moved out of the drop directory");
  }
  return source;
}

Result<std::filesystem::path> FileMover::FreeTarget(const std::filesystem::path& directory,
                                                    const std::string& name, bool with_note) {
  for (int suffix = 0; suffix <= kMaxNameSuffix; ++suffix) {
    std::filesystem::path target = directory / name;
    if (suffix > 0) {
      // Two appends, not "." + to_string(): g++ 12 at -O3 warns (-Wrestrict, a false
      // positive) on the temporary.
      target += ".";
      target += std::to_string(suffix);
    }
    if (fs_->Exists(target) || (with_note && fs_->Exists(WithNote(target)))) continue;
    return target;
  }
  return Status::ResourceExhausted(
      (directory / name).string() + " and its numbered variants .1 to ." +
      std::to_string(kMaxNameSuffix) + " all exist; clear old copies from " + directory.string());
}

Status FileMover::MoveAndSync(const std::filesystem::path& from, const std::filesystem::path& to) {
  SESTON_RETURN_IF_ERROR(fs_->Rename(from, to));
  SESTON_RETURN_IF_ERROR(fs_->SyncDirectory(to.parent_path()));
  return fs_->SyncDirectory(from.parent_path());
}

Result<std::filesystem::path> FileMover::MoveToDone(const std::string& name, double event_seconds) {
  if (!std::isfinite(event_seconds) || event_seconds < 0 || event_seconds >= kEndOfYear9999) {
    return Status::InvalidArgument("event time " + std::to_string(event_seconds) + " of " +
                                   EscapeNameForText(name) +
                                   " is outside 1970-01-01 .. 9999-12-31; cannot choose a "
                                   "day folder");
  }
  SESTON_ASSIGN_OR_RETURN(std::filesystem::path source, Source(name));
  std::filesystem::path day_dir = done_dir_ / FormatDay(event_seconds);
  if (!fs_->Exists(day_dir)) {
    SESTON_RETURN_IF_ERROR(fs_->CreateDirectories(day_dir));
    SESTON_RETURN_IF_ERROR(fs_->SyncDirectory(done_dir_));
  }
  SESTON_ASSIGN_OR_RETURN(std::filesystem::path target,
                          FreeTarget(day_dir, name, /*with_note=*/false));
  SESTON_RETURN_IF_ERROR(MoveAndSync(source, target));
  return target;
}

Result<std::filesystem::path> FileMover::MoveToQuarantine(const std::string& name,
                                                          const QuarantineNote& note) {
  SESTON_ASSIGN_OR_RETURN(std::filesystem::path source, Source(name));
  SESTON_ASSIGN_OR_RETURN(std::filesystem::path target,
                          FreeTarget(quarantine_dir_, name, /*with_note=*/true));
  std::string text = "seston did not read this file to the end and set it aside.\n";
  text += "file: " + EscapeNameForText(source.string()) + "\n";
  text += "now at: " + EscapeNameForText(target.string()) + "\n";
  text += "when: " + FormatIso8601(clock_->WallSeconds()) + "\n";
  text += "problem: " + EscapeNameForText(note.problem) + "\n";
  text += "line: " + (note.line > 0 ? std::to_string(note.line) : std::string("whole file")) + "\n";
  text +=
      "what to do: " +
      (note.remedy.empty() ? "correct the file, then move it back into " +
                                 EscapeNameForText(drop_dir_.string()) + " to have it read again"
                           : EscapeNameForText(note.remedy)) +
      "\n";
  SESTON_RETURN_IF_ERROR(WriteFileAtomically(*fs_, WithNote(target), text));
  SESTON_RETURN_IF_ERROR(MoveAndSync(source, target));
  return target;
}

}  // namespace seston
