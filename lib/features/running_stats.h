// RunningStats: count, mean and variance of a stream of doubles in one pass.
//
// Uses Welford's online update (B. P. Welford 1962, "Note on a method for calculating
// corrected sums of squares and products", Technometrics 4(3)), which keeps the mean and
// the sum of squared deviations M2 instead of the raw sums Σx and Σx², so values with a
// large common offset (1e7 + small variations) lose no digits to cancellation. Two
// summaries of disjoint streams combine exactly as if one pass had seen both (Chan, Golub
// & LeVeque 1979, "Updating formulae and a pairwise algorithm for computing sample
// variances").
//
// The running mean is carried as an unevaluated sum of two doubles (mean + a low-order
// correction, kept with Knuth's TwoSum), so that each x − mean is as exact as the data.
// With a plain double mean, Welford's update loses about log10(|mean| / sd) digits to the
// rounding of the mean (1.4 digits short of the reachable sd on NIST StRD Michelso);
// with the correction it reaches the limit on every StRD univariate set. Hand-written
// because a multiprecision type (Boost.Multiprecision) would be far slower for what
// needs only two doubles.
//
// Units: whatever the added values are in; variances in those units squared.
// Thread safety: a value type; one thread changes an instance at a time.
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>

#include "base/status.h"

namespace seston {

class RunningStats {
 public:
  void Add(double x);
  // Combines `other` into this, as if every value added to `other` had been added here.
  void Merge(const RunningStats& other);

  std::uint64_t count() const { return count_; }
  // NaN when count() == 0.
  double mean() const;
  // Σ(x − mean)² / (n − 1); NaN when count() < 2.
  double sample_variance() const;
  // Σ(x − mean)² / n; NaN when count() == 0.
  double population_variance() const;
  double sample_sd() const;
  double population_sd() const;

  // {"count": n, "mean": m, "mean_low": correction, "m2": Σ(x − mean)²}; FromJson
  // restores the exact state.
  nlohmann::json ToJson() const;
  static Result<RunningStats> FromJson(const nlohmann::json& json);

 private:
  // mean += increment, keeping the low-order part.
  void AddToMean(double increment);

  std::uint64_t count_ = 0;
  double mean_ = 0.0;      // the mean, rounded to a double
  double mean_low_ = 0.0;  // what the rounding left out: |mean_low_| <= ulp(mean_) / 2
  double m2_ = 0.0;        // sum of squared deviations from the running mean
};

}  // namespace seston
