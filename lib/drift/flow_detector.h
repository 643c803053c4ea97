// FlowDetector: is the instrument still analysing as much water per sample as at
// baseline?
//
// A fall in flow (a clogging flow cell, a tired pump, a fouled inlet) leaves the
// concentrations and the mix of groups unchanged — fewer particles are counted, but in
// less water — so no composition test can see it. This detector watches the analysed
// volume of each sample instead:
//   baseline  the median volume of the first `baseline_samples` samples after
//             RestartBaseline() (or the recent window's median on AcceptRecentAsBaseline);
//   recent    the median volume of the last `window_samples` samples;
//   ratio     recent / baseline;
//   alarm     when ratio <= alarm_ratio or ratio >= 1 / alarm_ratio,
//   warn      when ratio <= warn_ratio or ratio >= 1 / warn_ratio,
//   ok        otherwise, and while the baseline or the recent window is not yet full.
// Medians, not means, so one odd sample (a short acquisition) does not move it.
//
// Volumes in mL. Owned by the pipeline; one thread at a time; no clock, no I/O.
#pragma once

#include <cstddef>
#include <deque>
#include <nlohmann/json.hpp>
#include <optional>
#include <vector>

#include "base/status.h"
#include "drift/detector_reading.h"
#include "drift/drift_options.h"

namespace seston {

class FlowDetector {
 public:
  // Fails unless baseline_samples >= 1, window_samples >= 1 and
  // 0 < alarm_ratio <= warn_ratio < 1.
  static Result<FlowDetector> Create(FlowOptions options);

  // One finalised sample's analysed volume, mL. Non-finite or non-positive volumes are
  // ignored (the ingest stage rejects them; a sample without one uses the default).
  void Add(double volume_ml);

  // Forgets the baseline and the window; the next baseline_samples volumes form the new
  // baseline.
  void RestartBaseline();
  // The baseline becomes the recent window's median. FailedPrecondition when the window
  // is empty.
  Status AcceptRecentAsBaseline();

  bool has_baseline() const { return baseline_ml_.has_value(); }
  std::optional<double> baseline_ml() const { return baseline_ml_; }

  // Kind "flow", statistic "analysed_volume_ratio" (recent / baseline median volume),
  // threshold alarm_ratio.
  DetectorReading Evaluate() const;

  // {"baseline_ml": v or null, "collecting": [volumes], "recent": [volumes]}
  nlohmann::json ToJson() const;
  static Result<FlowDetector> FromJson(const nlohmann::json& state, FlowOptions options);

 private:
  explicit FlowDetector(FlowOptions options) : options_(options) {}

  FlowOptions options_;
  std::optional<double> baseline_ml_;
  std::vector<double> collecting_;  // volumes towards the next baseline
  std::deque<double> recent_;       // the last window_samples volumes, oldest first
};

// Median of `values` (mean of the two middle ones for an even count); nullopt when empty.
std::optional<double> Median(std::vector<double> values);

}  // namespace seston
