// ProgressMeter: the one-line progress display of long runs (sestond replay).
//
// Shows files done / total, particles per second and the time left, redrawn at most
// every `interval_seconds` of monotonic time on one terminal line (carriage return).
// Silent when the output is not a terminal or when quiet; Finish() prints a final
// summary line either way unless quiet.
//
// Thread safety: one thread.
#pragma once

#include <cstdint>
#include <cstdio>

#include "base/clock.h"

namespace seston {

class ProgressMeter {
 public:
  // `out` is where the line goes (stderr in sestond); `total_files` may be 0 (unknown).
  ProgressMeter(std::FILE* out, const Clock& clock, std::uint64_t total_files, bool quiet,
                double interval_seconds = 0.5);

  // Adds one finished file of `bytes` bytes and `particles` rows.
  void FileDone(std::uint64_t bytes, std::uint64_t particles);
  void Finish();

 private:
  void Draw(bool final_line);

  std::FILE* out_;
  const Clock& clock_;
  std::uint64_t total_files_;
  bool quiet_;
  bool interactive_;
  double interval_seconds_;
  double start_seconds_;
  double last_draw_seconds_;
  std::uint64_t files_ = 0;
  std::uint64_t bytes_ = 0;
  std::uint64_t particles_ = 0;
};

}  // namespace seston
