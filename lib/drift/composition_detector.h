// CompositionDetector: has the mix of clusters changed since the baseline?
//
// Compares a recent window of particle counts per cluster with the baseline counts by
// the G-test of homogeneity (p-value from Boost.Math) AND the Jensen–Shannon divergence
// (JSD, bits) of the two sets of shares. Significance alone is not enough: with tens of
// thousands of particles a trivial shift is significant, so the effect size gates it:
//   alarm  when p < alpha and JSD >= alarm_jsd,
//   warn   when p < alpha and JSD >= warn_jsd,
//   ok     otherwise.
// A cluster missing from the baseline counts 0 there (a newcomer); one missing from the
// recent counts counts 0 there. The reading names the clusters whose share changed most
// (rose or fell, by how many times, baseline and recent share in %).
//
// Counts are particles (fractional counts, e.g. decayed ones, are fine). Owned by the
// pipeline; one thread at a time. Evaluate is const and pure.
#pragma once

#include <cstdint>
#include <map>
#include <nlohmann/json.hpp>

#include "base/status.h"
#include "drift/detector_reading.h"
#include "drift/drift_options.h"

namespace seston {

class CompositionDetector {
 public:
  // Fails unless 0 < alpha < 1 and 0 <= warn_jsd <= alarm_jsd <= 1.
  static Result<CompositionDetector> Create(CompositionOptions options);

  // Replaces the baseline. Counts must be finite and >= 0 with a positive total.
  Status SetBaseline(std::map<std::uint32_t, double> counts_by_cluster);
  bool has_baseline() const { return !baseline_.empty(); }
  const std::map<std::uint32_t, double>& baseline() const { return baseline_; }

  // Kind "composition", statistic the JSD in bits, threshold alarm_jsd. An empty (or
  // all-zero) recent window reads ok. Fails before SetBaseline, or on a negative or
  // non-finite recent count.
  Result<DetectorReading> Evaluate(const std::map<std::uint32_t, double>& recent_counts) const;

  // State is the baseline; options come from the configuration on restore.
  // {"baseline": [[cluster_id, count], ...]}
  nlohmann::json ToJson() const;
  static Result<CompositionDetector> FromJson(const nlohmann::json& state,
                                              CompositionOptions options);

 private:
  explicit CompositionDetector(CompositionOptions options) : options_(options) {}

  CompositionOptions options_;
  std::map<std::uint32_t, double> baseline_;
};

}  // namespace seston
