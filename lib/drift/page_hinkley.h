// PageHinkley: the Page–Hinkley test for an upward change in the mean of a stream
// (Page 1954, "Continuous inspection schemes", Biometrika 41).
//
// For each value xₜ (t = 1, 2, ...):
//   x̄ₜ = running mean of x₁..xₜ (including xₜ)
//   Uₜ = α·Uₜ₋₁ + (xₜ − x̄ₜ − δ),   U₀ = 0
//   mₜ = min(U₀, U₁, ..., Uₜ)
//   statistic = Uₜ − mₜ;  alarm when statistic > λ and t >= min_n.
// δ is the change in mean that is tolerated, λ the alarm threshold and α a forgetting
// factor of the cumulative sum (1 = none; below 1 the statistic recovers by itself
// after a change). All in the unit of x.
//
// Non-finite values are ignored (not counted). Owned by one thread.
#pragma once

#include <cstddef>
#include <cstdint>
#include <nlohmann/json.hpp>

#include "base/status.h"

namespace seston {

struct PageHinkleyParameters {
  double delta = 0.005;    // tolerated change in mean, unit of x, >= 0
  double lambda = 50.0;    // alarm threshold on the statistic, unit of x, > 0
  double alpha = 1.0;      // forgetting factor in (0, 1]
  std::size_t min_n = 30;  // no alarm before this many values
};

class PageHinkley {
 public:
  // Fails unless delta >= 0, lambda > 0 and 0 < alpha <= 1 (all finite).
  static Result<PageHinkley> Create(PageHinkleyParameters parameters);

  // Adds one value; true when the test is in alarm after it.
  bool Add(double x);

  double statistic() const { return cumulative_ - minimum_; }  // Uₜ − mₜ
  bool alarm() const { return statistic() > parameters_.lambda && n_ >= parameters_.min_n; }
  std::uint64_t n() const { return n_; }
  double mean() const { return mean_; }  // x̄ₜ; 0 before the first value
  const PageHinkleyParameters& parameters() const { return parameters_; }

  // Forgets every value (as when the new normal is accepted).
  void Reset();

  // {"n": ..., "mean": ..., "cumulative": Uₜ, "minimum": mₜ}; parameters come from the
  // configuration on restore.
  nlohmann::json ToJson() const;
  static Result<PageHinkley> FromJson(const nlohmann::json& state,
                                      PageHinkleyParameters parameters);

 private:
  explicit PageHinkley(PageHinkleyParameters parameters) : parameters_(parameters) {}

  PageHinkleyParameters parameters_;
  std::uint64_t n_ = 0;
  double mean_ = 0;
  double cumulative_ = 0;  // Uₜ
  double minimum_ = 0;     // mₜ
};

}  // namespace seston
