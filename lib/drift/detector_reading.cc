#include "drift/detector_reading.h"

namespace seston {

std::string_view DriftLevelName(DriftLevel level) {
  switch (level) {
    case DriftLevel::kOk:
      return "ok";
    case DriftLevel::kWarn:
      return "warn";
    case DriftLevel::kAlarm:
      return "alarm";
  }
  return "unknown";
}

}  // namespace seston
