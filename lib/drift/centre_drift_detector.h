// CentreDriftDetector: have the cluster centres moved since the baseline, and is it the
// water or the instrument?
//
// Each centre's displacement from its baseline position is measured in units of that
// cluster's own baseline spread (z units over z units, so "spreads"). Two readings come
// out of each evaluation, so that an alert of either kind can resolve:
//   - "instrument_drift": at least `common_fraction` of the matched clusters (and at least
//     two) moved `warn_spreads` or more AND their displacement vectors point the same way
//     (mean pairwise cosine > `same_direction_cosine`, default 0.7). Focus, calibration,
//     flow-cell fouling or flow rate move every group alike. Its statistic is the smallest
//     displacement among the ceil(common_fraction · n) largest, i.e. "that many clusters
//     moved at least this far"; warn from warn_spreads, alarm from alarm_spreads.
//   - "centre_drift": otherwise, the largest displacement, for the one or few clusters
//     that moved (a change in those populations); warn/alarm by the same thresholds. It
//     reads ok while instrument_drift explains the movement.
// Clusters are matched by id; a baseline cluster absent now (retired) and a current one
// absent from the baseline (born since) are left out.
//
// Units: centre coordinates and spreads in z units (standardised features); the spread is
// whatever the model reports as a cluster's typical distance of members to its centre
// (e.g. RMS), and must be > 0. Owned by the pipeline; one thread at a time.
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>
#include <vector>

#include "base/status.h"
#include "drift/detector_reading.h"
#include "drift/drift_options.h"

namespace seston {

struct ClusterRef {
  std::uint32_t id = 0;
  std::vector<double> centre;  // z units, one per feature
  double spread = 0;           // z units, > 0 in a baseline
};

struct CentreDisplacement {
  std::uint32_t id = 0;
  std::vector<double> displacement;  // current − baseline centre, z units
  double distance = 0;               // Euclidean length of `displacement`, z units
  double spreads = 0;                // distance / baseline spread
};

struct CentreDriftEvaluation {
  DetectorReading instrument_drift;
  DetectorReading centre_drift;
  std::vector<CentreDisplacement> displacements;  // matched clusters, by id
};

class CentreDriftDetector {
 public:
  // Fails unless 0 < warn_spreads <= alarm_spreads, 0 < common_fraction <= 1 and
  // -1 <= same_direction_cosine < 1.
  static Result<CentreDriftDetector> Create(CentreDriftOptions options);

  // Replaces the baseline: unique ids, non-empty centres of one dimension, finite
  // coordinates, spreads finite and > 0.
  Status SetBaseline(std::vector<ClusterRef> clusters);
  bool has_baseline() const { return !baseline_.empty(); }
  const std::vector<ClusterRef>& baseline() const { return baseline_; }

  // Displacement of every current cluster that has a baseline, sorted by id. Fails
  // before SetBaseline, on duplicate ids, or when a centre's dimension or values are
  // wrong. The current spreads are not used.
  Result<std::vector<CentreDisplacement>> Displacements(
      const std::vector<ClusterRef>& current) const;

  // Both readings and the displacements behind them; same failures as Displacements.
  Result<CentreDriftEvaluation> Evaluate(const std::vector<ClusterRef>& current) const;

  // {"baseline": [{"id": 1, "centre": [...], "spread": 0.4}, ...]}
  nlohmann::json ToJson() const;
  static Result<CentreDriftDetector> FromJson(const nlohmann::json& state,
                                              CentreDriftOptions options);

 private:
  explicit CentreDriftDetector(CentreDriftOptions options) : options_(options) {}

  CentreDriftOptions options_;
  std::vector<ClusterRef> baseline_;  // sorted by id
};

}  // namespace seston
