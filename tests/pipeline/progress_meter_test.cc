#include "pipeline/progress_meter.h"

#include <fcntl.h>
#include <gtest/gtest.h>
#include <stdlib.h>
#include <unistd.h>

#include <cstdio>
#include <string>

#include "base/clock.h"

namespace seston {
namespace {

// A pseudo-terminal: the meter writes to the terminal side; the test reads what a
// terminal would show from the other side.
class PseudoTerminal {
 public:
  PseudoTerminal() {
    controller_ = ::posix_openpt(O_RDWR | O_NOCTTY);
    if (controller_ < 0 || ::grantpt(controller_) != 0 || ::unlockpt(controller_) != 0) return;
    const char* name = ::ptsname(controller_);
    if (name != nullptr) terminal_ = std::fopen(name, "w");
    ::fcntl(controller_, F_SETFL, O_NONBLOCK);
  }
  ~PseudoTerminal() {
    if (terminal_ != nullptr) std::fclose(terminal_);
    if (controller_ >= 0) ::close(controller_);
  }
  std::FILE* terminal() const { return terminal_; }
  std::string Read() {
    std::string text;
    char buffer[4096];
    ssize_t got;
    while ((got = ::read(controller_, buffer, sizeof buffer)) > 0) text.append(buffer, got);
    return text;
  }

 private:
  int controller_ = -1;
  std::FILE* terminal_ = nullptr;
};

TEST(ProgressMeter, WritesNothingWhenNotATerminal) {
  std::FILE* file = std::tmpfile();
  ASSERT_NE(file, nullptr);
  ManualClock clock;
  ProgressMeter meter(file, clock, 10, 1000, /*quiet=*/false);
  EXPECT_FALSE(meter.drawing());
  for (int i = 0; i < 10; ++i) {
    clock.Advance(1);
    meter.FileDone(100, 50);
  }
  meter.Finish();
  EXPECT_EQ(std::ftell(file), 0);
  std::fclose(file);
}

TEST(ProgressMeter, QuietWritesNothingEvenOnATerminal) {
  PseudoTerminal pty;
  ASSERT_NE(pty.terminal(), nullptr);
  ManualClock clock;
  ProgressMeter meter(pty.terminal(), clock, 4, 400, /*quiet=*/true);
  EXPECT_FALSE(meter.drawing());
  clock.Advance(1);
  meter.FileDone(100, 50);
  meter.Finish();
  EXPECT_EQ(pty.Read(), "");
}

TEST(ProgressMeter, ShowsFilesRateAndTimeLeftByBytesOnATerminal) {
  PseudoTerminal pty;
  ASSERT_NE(pty.terminal(), nullptr);
  ManualClock clock;
  ProgressMeter meter(pty.terminal(), clock, 4, 1000, /*quiet=*/false, 0.5);
  EXPECT_TRUE(meter.drawing());
  // 2 s for the first file: 100 of 1000 bytes, 5000 particles. Rate 2500/s; time left
  // 2 s × 900 / 100 = 18 s.
  clock.Advance(2);
  meter.FileDone(100, 5000);
  std::string shown = pty.Read();
  EXPECT_NE(shown.find("1/4 files"), std::string::npos) << shown;
  EXPECT_NE(shown.find("5000 particles, 2500 particles/s"), std::string::npos) << shown;
  EXPECT_NE(shown.find("0:18 left"), std::string::npos) << shown;

  // Within the redraw interval nothing is drawn.
  clock.Advance(0.1);
  meter.FileSkipped(0);
  EXPECT_EQ(pty.Read(), "");

  // 4.1 s in, 3 of 4 files (one skipped), 400 of 1000 bytes: 4.1 × 600 / 400 = 6.15 s.
  clock.Advance(2);
  meter.FileDone(300, 5000);
  shown = pty.Read();
  EXPECT_NE(shown.find("3/4 files (1 skipped)"), std::string::npos) << shown;
  EXPECT_NE(shown.find("0:06 left"), std::string::npos) << shown;

  meter.Finish();
  shown = pty.Read();
  EXPECT_NE(shown.find("3 files, 10000 particles in 4.1 s"), std::string::npos) << shown;
}

}  // namespace
}  // namespace seston
