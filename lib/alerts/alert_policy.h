// AlertPolicy: turns a stream of detector readings into raised and resolved alerts.
//
// Readings are keyed by (kind, primary cluster): the first id of reading.clusters, or 0
// when it names none. For each key:
//   - raise after `raise_after` consecutive alarm evaluations, unless the key is in
//     cool-down; `since` is the event time of the first alarm of that run;
//   - resolve after `resolve_after` consecutive ok evaluations (hysteresis), which starts
//     a cool-down of `cooldown_seconds` (event time) during which the key does not raise;
//     alarms during the cool-down still count, so a lasting condition raises as soon as
//     the cool-down ends;
//   - a warn evaluation is neither: it breaks a run of oks (an active alert is not
//     resolved while the detector still warns) and neither extends nor breaks a run of
//     alarms (alarm, warn, alarm, alarm raises with raise_after = 3). A signal hovering
//     between warn and alarm is a real, lasting condition, not flapping.
// One reading speaks for its whole kind: keys of the same kind that it does not name
// receive it as ok (the detector found nothing there), keys whose cluster it names
// (not first) receive its level. So an alert resolves when the detector stops naming
// its cluster, and only the primary cluster can start a new key.
//
// Pure and deterministic: no clock, no I/O; times are the event times the caller gives.
// Memory is bounded: idle keys (no alert, no alarm run, no cool-down) are dropped, and at
// most `recent_kept` resolved alerts are kept. Owned by the pipeline; one thread at a time.
#pragma once

#include <cstdint>
#include <deque>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "alerts/alert_event.h"
#include "alerts/alert_options.h"
#include "base/status.h"
#include "drift/detector_reading.h"

namespace seston {

class AlertPolicy {
 public:
  using LabelOf = std::function<std::string(std::uint32_t)>;

  // Fails unless raise_after >= 1, resolve_after >= 1 and cooldown_seconds >= 0 (finite).
  // `station` is copied into every event.
  static Result<AlertPolicy> Create(AlertOptions options, std::string station);

  // Applies one reading at `event_time_seconds`; returns the events it caused (none,
  // usually; at most one per key). `label_of` gives a cluster's label ("" for none).
  std::vector<AlertEvent> Observe(const DetectorReading& reading, double event_time_seconds,
                                  const LabelOf& label_of);

  // Alerts raised and not yet resolved, ordered by (kind, cluster).
  std::vector<AlertEvent> active() const;
  // The last `recent_kept` resolved events, oldest first.
  const std::deque<AlertEvent>& recent() const { return recent_; }
  std::uint64_t last_sequence() const { return sequence_; }

  // {"sequence": n, "keys": [{"kind", "cluster", "consecutive_alarms", "consecutive_oks",
  //  "run_start_seconds", "cooldown_until_seconds" (null = none), "active" (null or an
  //  alert event)}], "recent": [alert events]}; options and station come from the
  // configuration on restore.
  nlohmann::json ToJson() const;
  static Result<AlertPolicy> FromJson(const nlohmann::json& state, AlertOptions options,
                                      std::string station);

 private:
  using Key = std::pair<std::string, std::uint32_t>;  // kind, primary cluster id or 0
  struct KeyState {
    int consecutive_alarms = 0;
    int consecutive_oks = 0;
    double run_start_seconds = 0;  // first alarm of the current run
    std::optional<double> cooldown_until_seconds;
    std::optional<AlertEvent> active;
  };

  AlertPolicy(AlertOptions options, std::string station)
      : options_(std::move(options)), station_(std::move(station)) {}

  // Applies `level` to one key; returns the event raised or resolved, if any.
  std::optional<AlertEvent> Apply(const Key& key, KeyState& state, DriftLevel level,
                                  const DetectorReading& reading, double time,
                                  const LabelOf& label_of);

  AlertOptions options_;
  std::string station_;
  std::uint64_t sequence_ = 0;
  std::map<Key, KeyState> keys_;
  std::deque<AlertEvent> recent_;
};

}  // namespace seston
