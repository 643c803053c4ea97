// AlertEvent: one alert raised or resolved, as the technician will read it.
//
// The alerts module (lib/alerts/) turns drift readings into alert events (AlertPolicy,
// pure), writes each event as one JSON file (AlertWriter) and runs an optional hook
// command on it (AlertHook). Only AlertWriter and AlertHook touch the outside world.
//
// Times are event time, seconds since 1970-01-01T00:00:00Z (UTC); in JSON they appear
// twice, as ISO 8601 text for people ("time", "since") and as numbers for programs
// ("time_seconds", "since_seconds", exact).
//
// Alert file format (one object, pretty-printed; fields may be added, never renamed):
//   sequence        integer, 1, 2, 3... across all events of this daemon's state
//   event           "raised" | "resolved"
//   kind            detector kind: "composition", "centre_drift", "instrument_drift",
//                   "fit", "novelty", ... (see drift/detector_reading.h)
//   severity        "alarm" (the policy raises only alarms) | "warning" (kept for
//                   events raised outside the policy, e.g. a checkpoint fallback)
//   time            when this event happened, "2026-12-02T03:04:05Z"
//   since           when the condition began: the first alarm evaluation of the run
//   clusters        [{"id": 3, "label": "diatom chains"}, ...], label "" when none
//   statistic, statistic_name, threshold   the detector's number and its alarm threshold
//   message         what changed, how much and since when, in plain words
//   what_to_check   advice for the technician
//   caution         the screening-aid caution (drift/detector_reading.h)
//   station         the station named in the configuration
//   time_seconds, since_seconds   the same two times as numbers
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "base/status.h"

namespace seston {

struct AlertEvent {
  std::uint64_t sequence = 0;
  std::string event;     // "raised" | "resolved"
  std::string kind;      // detector kind
  std::string severity;  // "warning" | "alarm"
  double time_seconds = 0;
  double since_seconds = 0;
  std::vector<std::pair<std::uint32_t, std::string>> clusters;  // id, label
  double statistic = 0;
  std::string statistic_name;
  double threshold = 0;
  std::string message;
  std::string what_to_check;
  std::string station;

  bool operator==(const AlertEvent&) const = default;
};

// The alert file object described above.
nlohmann::json ToJson(const AlertEvent& event);

// Reads what ToJson wrote (numeric times are used, the ISO text is ignored). kCorruption
// naming the field when one is missing or of the wrong type.
Result<AlertEvent> AlertEventFromJson(const nlohmann::json& json);

}  // namespace seston
