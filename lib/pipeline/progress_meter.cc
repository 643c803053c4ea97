#include "pipeline/progress_meter.h"

#include <unistd.h>

#include <algorithm>
#include <cmath>

namespace seston {

ProgressMeter::ProgressMeter(std::FILE* out, const Clock& clock, std::uint64_t total_files,
                             std::uint64_t total_bytes, bool quiet, double interval_seconds)
    : out_(out),
      clock_(clock),
      total_files_(total_files),
      total_bytes_(total_bytes),
      interactive_(!quiet && out != nullptr && ::isatty(::fileno(out)) == 1),
      interval_seconds_(interval_seconds),
      start_seconds_(clock.MonotonicSeconds()),
      last_draw_seconds_(start_seconds_) {}

void ProgressMeter::FileDone(std::uint64_t bytes, std::uint64_t particles) {
  ++files_;
  bytes_ += bytes;
  particles_ += particles;
  MaybeDraw();
}

void ProgressMeter::FileSkipped(std::uint64_t bytes) {
  ++files_;
  ++skipped_;
  bytes_ += bytes;
  MaybeDraw();
}

void ProgressMeter::Finish() {
  if (interactive_) Draw(true);
}

void ProgressMeter::MaybeDraw() {
  if (!interactive_) return;
  const double now = clock_.MonotonicSeconds();
  if (now - last_draw_seconds_ < interval_seconds_) return;
  last_draw_seconds_ = now;
  Draw(false);
}

std::string ProgressMeter::FormatDuration(double seconds) {
  const auto total = static_cast<long long>(std::llround(std::max(seconds, 0.0)));
  char text[32];
  if (total >= 3600) {
    std::snprintf(text, sizeof text, "%lld:%02lld:%02lld", total / 3600, total / 60 % 60,
                  total % 60);
  } else {
    std::snprintf(text, sizeof text, "%lld:%02lld", total / 60, total % 60);
  }
  return text;
}

void ProgressMeter::Draw(bool final_line) {
  const double elapsed = std::max(clock_.MonotonicSeconds() - start_seconds_, 1e-9);
  const double rate = static_cast<double>(particles_) / elapsed;
  std::string line = "\rreplay: ";
  char part[160];
  if (final_line) {
    std::snprintf(
        part, sizeof part, "%llu files, %llu particles in %.1f s (%.0f particles/s, %.1f MB/s)",
        static_cast<unsigned long long>(files_), static_cast<unsigned long long>(particles_),
        elapsed, rate, static_cast<double>(bytes_) / 1e6 / elapsed);
    line += part;
  } else {
    std::snprintf(part, sizeof part, "%llu/%llu files", static_cast<unsigned long long>(files_),
                  static_cast<unsigned long long>(total_files_));
    line += part;
    if (skipped_ > 0) {
      std::snprintf(part, sizeof part, " (%llu skipped)",
                    static_cast<unsigned long long>(skipped_));
      line += part;
    }
    std::snprintf(part, sizeof part, ", %llu particles, %.0f particles/s",
                  static_cast<unsigned long long>(particles_), rate);
    line += part;
    double fraction_done = 0;
    if (total_bytes_ > 0) {
      fraction_done = static_cast<double>(bytes_) / static_cast<double>(total_bytes_);
    } else if (total_files_ > 0) {
      fraction_done = static_cast<double>(files_) / static_cast<double>(total_files_);
    }
    if (fraction_done > 0 && fraction_done < 1) {
      line += ", " + FormatDuration(elapsed * (1 - fraction_done) / fraction_done) + " left";
    }
  }
  line += "\x1b[K";
  if (final_line) line += '\n';
  std::fputs(line.c_str(), out_);
  std::fflush(out_);
}

}  // namespace seston
