// Standardizer: z-scores each dimension with the mean and sd of a warm-up sample.
//
// Life cycle: Create → Add each warm-up row (already transformed) → Freeze → Apply /
// Inverse for the rest of the run. The scale is frozen on purpose: if it kept learning,
// a slow drift of the instrument would be standardised away instead of showing up
// downstream. z = (x − mean) / sd with the population sd (divide by n), computed with
// Welford's update (RunningStats). A dimension whose warm-up values are all equal has
// sd 0; it gets scale 1 (z = x − mean) and a warning in warnings().
// With enabled = false the standardiser is the identity and needs no warm-up rows.
//
// Units: input rows are on the transformed scale of each feature; z-scores are unitless.
// Thread safety: Add and Freeze change the object (one thread); after Freeze, the const
// methods may be called from any number of threads.
#pragma once

#include <cstddef>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "base/matrix.h"
#include "base/status.h"
#include "features/running_stats.h"

namespace seston {

class Standardizer {
 public:
  // `dimension_names` (at least one) name the dimensions in warnings, in order.
  static Result<Standardizer> Create(std::vector<std::string> dimension_names, bool enabled);

  // Adds one warm-up row of dims() values. Before Freeze only; ignored when disabled.
  void Add(const double* row);
  // Ends the warm-up. FailedPrecondition when enabled and no row was added, or when
  // already frozen.
  Status Freeze();

  bool enabled() const { return enabled_; }
  bool frozen() const { return frozen_; }
  std::size_t dims() const { return names_.size(); }
  const std::vector<std::string>& dimension_names() const { return names_; }
  // Warm-up statistics of dimension d (empty when disabled).
  const RunningStats& stats(std::size_t d) const { return stats_[d]; }
  // Per dimension, set by Freeze: mean subtracted (0 when disabled) and divisor (the
  // population sd; 1 when disabled or when the sd is 0).
  const std::vector<double>& means() const { return means_; }
  const std::vector<double>& scales() const { return scales_; }
  // One sentence per constant dimension, set by Freeze.
  const std::vector<std::string>& warnings() const { return warnings_; }

  // In place, dims() values; frozen() must be true.
  void Apply(double* row) const;
  void Inverse(double* row) const;
  // Every row of `rows` (rows->cols() == dims()).
  void Apply(RowMatrix* rows) const;

  nlohmann::json ToJson() const;
  static Result<Standardizer> FromJson(const nlohmann::json& json);

 private:
  Standardizer(std::vector<std::string> names, bool enabled);
  // Sets means_, scales_ and warnings_ from stats_.
  void ComputeScale();

  std::vector<std::string> names_;
  bool enabled_ = true;
  bool frozen_ = false;
  std::vector<RunningStats> stats_;
  std::vector<double> means_;
  std::vector<double> scales_;
  std::vector<std::string> warnings_;
};

}  // namespace seston
