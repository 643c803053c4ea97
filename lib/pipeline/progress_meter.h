// ProgressMeter: the one-line progress display of long runs (sestond replay).
//
// On a terminal it redraws one line (carriage return, erase to end of line) at most every
// `interval_seconds` of monotonic time:
//   replay: 120/300 files (1 skipped), 1034512 particles, 815000 particles/s, 0:41 left
// The rate is the mean since the start. The time left is the time so far scaled by the
// input bytes still to go, when the total is known (files differ in size: a bloom makes
// bigger files), else by the files still to go. Finish() replaces the line with a
// closing summary. When `out` is not a terminal, or when quiet, nothing is written at
// all — a log or a pipe gets no carriage returns.
//
// Units: bytes; particles (data rows of the files taken); seconds of monotonic time.
// Thread safety: one thread.
#pragma once

#include <cstdint>
#include <cstdio>
#include <string>

#include "base/clock.h"

namespace seston {

class ProgressMeter {
 public:
  // `out` is where the line goes (stderr in sestond); `total_files` and `total_bytes`
  // describe the whole run (0: unknown).
  ProgressMeter(std::FILE* out, const Clock& clock, std::uint64_t total_files,
                std::uint64_t total_bytes, bool quiet, double interval_seconds = 0.5);

  // One file taken: `bytes` read, `particles` data rows.
  void FileDone(std::uint64_t bytes, std::uint64_t particles);
  // One file skipped after reading `bytes` (0 when it could not be read).
  void FileSkipped(std::uint64_t bytes);
  void Finish();

  bool drawing() const { return interactive_; }

 private:
  void MaybeDraw();
  void Draw(bool final_line);
  // "0:41" or "2:03:07": minutes and seconds, hours when there are any.
  static std::string FormatDuration(double seconds);

  std::FILE* out_;
  const Clock& clock_;
  std::uint64_t total_files_;
  std::uint64_t total_bytes_;
  bool interactive_;
  double interval_seconds_;
  double start_seconds_;
  double last_draw_seconds_;
  std::uint64_t files_ = 0;  // taken and skipped
  std::uint64_t skipped_ = 0;
  std::uint64_t bytes_ = 0;
  std::uint64_t particles_ = 0;
};

}  // namespace seston
