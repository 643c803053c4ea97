// Clock: the seam through which lib/ reads time.
//
// Two quantities, both in seconds as double:
//   WallSeconds()      - seconds since 1970-01-01T00:00:00Z (UTC), for timestamps a
//                        person reads (alert "time" when no event time applies, uptime).
//   MonotonicSeconds() - seconds from an arbitrary origin that never goes backwards,
//                        for timeouts, settle times and checkpoint intervals.
// Event time (the time written in particle records) never comes from a Clock.
//
// SystemClock reads the operating system; ManualClock is moved by tests so that days of
// simulated time pass in milliseconds. Thread safety: both may be read from any thread;
// ManualClock::Advance/Set must not race with readers in a test that relies on exact
// values (they are atomic, so a race is not undefined behaviour).
#pragma once

#include <atomic>

namespace seston {

class Clock {
 public:
  virtual ~Clock() = default;
  virtual double WallSeconds() const = 0;
  virtual double MonotonicSeconds() const = 0;
};

class SystemClock final : public Clock {
 public:
  double WallSeconds() const override;
  double MonotonicSeconds() const override;
  // A process-wide instance.
  static SystemClock& Instance();
};

class ManualClock final : public Clock {
 public:
  explicit ManualClock(double wall_seconds = 1.7e9, double monotonic_seconds = 0.0)
      : wall_(wall_seconds), monotonic_(monotonic_seconds) {}
  double WallSeconds() const override { return wall_.load(); }
  double MonotonicSeconds() const override { return monotonic_.load(); }
  // Moves both clocks forward by `seconds` (>= 0).
  void Advance(double seconds) {
    wall_.store(wall_.load() + seconds);
    monotonic_.store(monotonic_.load() + seconds);
  }
  void SetWall(double wall_seconds) { wall_.store(wall_seconds); }

 private:
  std::atomic<double> wall_;
  std::atomic<double> monotonic_;
};

}  // namespace seston
