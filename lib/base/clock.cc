#include "base/clock.h"

#include <chrono>

namespace seston {

double SystemClock::WallSeconds() const {
  using std::chrono::duration;
  return duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
}

double SystemClock::MonotonicSeconds() const {
  using std::chrono::duration;
  return duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

SystemClock& SystemClock::Instance() {
  static SystemClock clock;
  return clock;
}

}  // namespace seston
