// NoveltyRateDetector: are unclassified particles (too far from every centre) arriving
// more often than at baseline?
//
// One-sided binomial test of H0 "the recent rate equals the baseline rate p₀" against
// "it is higher": p = P(X >= unclassified) for X ~ Binomial(total, p₀), from Boost.Math.
// With ratio = (unclassified / total) / p₀:
//   alarm when p < alpha and ratio >= alarm_ratio,
//   warn  when p < alpha and ratio >= warn_ratio,
//   ok    otherwise.
// p₀ is the baseline rate raised to at least min_baseline_rate (NoveltyRateOptions).
//
// Rates are fractions (0..1), counts are particles. Owned by the pipeline; one thread.
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>

#include "base/status.h"
#include "drift/detector_reading.h"
#include "drift/drift_options.h"

namespace seston {

// P(X >= k) for X ~ Binomial(n, p) (Boost.Math); 1 when k = 0. Fails unless k <= n and
// 0 <= p <= 1.
Result<double> BinomialUpperTail(std::uint64_t k, std::uint64_t n, double p);

class NoveltyRateDetector {
 public:
  // Fails unless 0 < alpha < 1, 1 <= warn_ratio <= alarm_ratio and
  // 0 < min_baseline_rate < 1.
  static Result<NoveltyRateDetector> Create(NoveltyRateOptions options);

  // The unclassified fraction during the baseline, 0..1.
  Status SetBaseline(double unclassified_rate);
  bool has_baseline() const { return has_baseline_; }
  double baseline_rate() const { return baseline_rate_; }
  // The rate the test uses: max(baseline_rate, min_baseline_rate).
  double tested_rate() const;

  // Kind "novelty", statistic the ratio recent rate / tested rate, threshold
  // alarm_ratio. total = 0 reads ok. Fails before SetBaseline or when
  // unclassified > total.
  Result<DetectorReading> Evaluate(std::uint64_t unclassified, std::uint64_t total) const;

  // {"baseline_rate": r} or {"baseline_rate": null} before a baseline.
  nlohmann::json ToJson() const;
  static Result<NoveltyRateDetector> FromJson(const nlohmann::json& state,
                                              NoveltyRateOptions options);

 private:
  explicit NoveltyRateDetector(NoveltyRateOptions options) : options_(options) {}

  NoveltyRateOptions options_;
  bool has_baseline_ = false;
  double baseline_rate_ = 0;
};

}  // namespace seston
