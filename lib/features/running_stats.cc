#include "features/running_stats.h"

#include <cmath>
#include <limits>

namespace seston {
namespace {

// Knuth's TwoSum: *sum + *error == a + b exactly, *sum the rounded sum.
void TwoSum(double a, double b, double* sum, double* error) {
  *sum = a + b;
  const double b_part = *sum - a;
  *error = (a - (*sum - b_part)) + (b - b_part);
}

}  // namespace

void RunningStats::AddToMean(double increment) {
  double sum = 0.0;
  double error = 0.0;
  TwoSum(mean_, increment, &sum, &error);
  TwoSum(sum, mean_low_ + error, &mean_, &mean_low_);
}

void RunningStats::Add(double x) {
  ++count_;
  const double delta = (x - mean_) - mean_low_;
  AddToMean(delta / static_cast<double>(count_));
  m2_ += delta * ((x - mean_) - mean_low_);
}

void RunningStats::Merge(const RunningStats& other) {
  if (other.count_ == 0) return;
  if (count_ == 0) {
    *this = other;
    return;
  }
  const double n_a = static_cast<double>(count_);
  const double n_b = static_cast<double>(other.count_);
  const double n = n_a + n_b;
  const double delta = (other.mean_ - mean_) + (other.mean_low_ - mean_low_);
  AddToMean(delta * (n_b / n));
  m2_ += other.m2_ + delta * delta * (n_a * n_b / n);
  count_ += other.count_;
}

double RunningStats::mean() const {
  return count_ == 0 ? std::numeric_limits<double>::quiet_NaN() : mean_;
}

double RunningStats::sample_variance() const {
  if (count_ < 2) return std::numeric_limits<double>::quiet_NaN();
  return m2_ / static_cast<double>(count_ - 1);
}

double RunningStats::population_variance() const {
  if (count_ == 0) return std::numeric_limits<double>::quiet_NaN();
  return m2_ / static_cast<double>(count_);
}

double RunningStats::sample_sd() const { return std::sqrt(sample_variance()); }

double RunningStats::population_sd() const { return std::sqrt(population_variance()); }

nlohmann::json RunningStats::ToJson() const {
  return {{"count", count_}, {"mean", mean_}, {"mean_low", mean_low_}, {"m2", m2_}};
}

Result<RunningStats> RunningStats::FromJson(const nlohmann::json& json) {
  if (!json.is_object()) {
    return Status::Corruption("running stats: expected an object with count, mean, m2, got " +
                              std::string(json.type_name()));
  }
  const auto count = json.find("count");
  const auto mean = json.find("mean");
  const auto mean_low = json.find("mean_low");
  const auto m2 = json.find("m2");
  if (count == json.end() || !count->is_number_unsigned()) {
    return Status::Corruption("running stats: \"count\" must be a non-negative integer");
  }
  if (mean == json.end() || !mean->is_number() || mean_low == json.end() ||
      !mean_low->is_number() || m2 == json.end() || !m2->is_number()) {
    return Status::Corruption("running stats: \"mean\", \"mean_low\" and \"m2\" must be numbers");
  }
  RunningStats stats;
  stats.count_ = count->get<std::uint64_t>();
  stats.mean_ = mean->get<double>();
  stats.mean_low_ = mean_low->get<double>();
  stats.m2_ = m2->get<double>();
  if (!std::isfinite(stats.mean_) || !std::isfinite(stats.mean_low_) || !std::isfinite(stats.m2_) ||
      stats.m2_ < 0) {
    return Status::Corruption(
        "running stats: \"mean\" and \"mean_low\" must be finite and \"m2\" finite and >= 0");
  }
  return stats;
}

}  // namespace seston
