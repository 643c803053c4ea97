#include "pipeline/progress_meter.h"

#include <unistd.h>

#include <algorithm>

namespace seston {

ProgressMeter::ProgressMeter(std::FILE* out, const Clock& clock, std::uint64_t total_files,
                             bool quiet, double interval_seconds)
    : out_(out),
      clock_(clock),
      total_files_(total_files),
      quiet_(quiet),
      interactive_(!quiet && ::isatty(::fileno(out)) == 1),
      interval_seconds_(interval_seconds),
      start_seconds_(clock.MonotonicSeconds()),
      last_draw_seconds_(start_seconds_) {}

void ProgressMeter::FileDone(std::uint64_t bytes, std::uint64_t particles) {
  ++files_;
  bytes_ += bytes;
  particles_ += particles;
  double now = clock_.MonotonicSeconds();
  if (interactive_ && now - last_draw_seconds_ >= interval_seconds_) {
    last_draw_seconds_ = now;
    Draw(false);
  }
}

void ProgressMeter::Finish() {
  if (quiet_) return;
  if (interactive_) std::fputc('\r', out_);
  Draw(true);
}

void ProgressMeter::Draw(bool final_line) {
  double elapsed = std::max(clock_.MonotonicSeconds() - start_seconds_, 1e-9);
  double rate = static_cast<double>(particles_) / elapsed;
  double megabytes_per_second = static_cast<double>(bytes_) / 1e6 / elapsed;
  if (final_line) {
    std::fprintf(out_, "replay: %llu files, %llu particles in %.1f s (%.0f particles/s, %.1f MB/s)%s\n",
                 static_cast<unsigned long long>(files_),
                 static_cast<unsigned long long>(particles_), elapsed, rate,
                 megabytes_per_second, interactive_ ? "\x1b[K" : "");
  } else {
    std::fprintf(out_, "\rreplay: %llu/%llu files, %.0f particles/s", 
                 static_cast<unsigned long long>(files_),
                 static_cast<unsigned long long>(total_files_), rate);
    if (total_files_ > files_ && files_ > 0) {
      double left = elapsed / static_cast<double>(files_) *
                    static_cast<double>(total_files_ - files_);
      std::fprintf(out_, ", %.0f s left", left);
    }
    std::fputs("\x1b[K", out_);
  }
  std::fflush(out_);
}

}  // namespace seston
