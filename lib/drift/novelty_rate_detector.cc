#include "drift/novelty_rate_detector.h"

#include <algorithm>
#include <boost/math/distributions/binomial.hpp>
#include <cmath>
#include <exception>
#include <string>

#include "drift/reading_text.h"

namespace seston {

Result<double> BinomialUpperTail(std::uint64_t k, std::uint64_t n, double p) {
  if (k > n || !(p >= 0 && p <= 1)) {
    return Status::InvalidArgument(
        "binomial upper tail needs k <= n and 0 <= p <= 1, got k = " + std::to_string(k) +
        ", n = " + std::to_string(n) + ", p = " + std::to_string(p));
  }
  if (k == 0) return 1.0;
  try {
    boost::math::binomial_distribution<double> distribution(static_cast<double>(n), p);
    return boost::math::cdf(boost::math::complement(distribution, static_cast<double>(k - 1)));
  } catch (const std::exception& error) {
    return Status::Internal(std::string("Boost.Math binomial upper tail failed: ") + error.what());
  }
}

Result<NoveltyRateDetector> NoveltyRateDetector::Create(NoveltyRateOptions options) {
  if (!(options.alpha > 0 && options.alpha < 1)) {
    return Status::InvalidArgument("drift.novelty.alpha is " + std::to_string(options.alpha) +
                                   "; must be between 0 and 1 (exclusive)");
  }
  if (!(options.warn_ratio >= 1 && options.warn_ratio <= options.alarm_ratio &&
        std::isfinite(options.alarm_ratio))) {
    return Status::InvalidArgument(
        "drift.novelty.warn_ratio and alarm_ratio are " + std::to_string(options.warn_ratio) +
        " and " + std::to_string(options.alarm_ratio) + "; need 1 <= warn_ratio <= alarm_ratio");
  }
  if (!(options.min_baseline_rate > 0 && options.min_baseline_rate < 1)) {
    return Status::InvalidArgument("drift.novelty.min_baseline_rate is " +
                                   std::to_string(options.min_baseline_rate) +
                                   "; must be between 0 and 1 (exclusive)");
  }
  return NoveltyRateDetector(options);
}

Status NoveltyRateDetector::SetBaseline(double unclassified_rate) {
  if (!(unclassified_rate >= 0 && unclassified_rate <= 1)) {
    return Status::InvalidArgument("baseline unclassified rate is " +
                                   std::to_string(unclassified_rate) +
                                   "; must be a fraction from 0 to 1");
  }
  baseline_rate_ = unclassified_rate;
  has_baseline_ = true;
  return Status::Ok();
}

double NoveltyRateDetector::tested_rate() const {
  return std::max(baseline_rate_, options_.min_baseline_rate);
}

Result<DetectorReading> NoveltyRateDetector::Evaluate(std::uint64_t unclassified,
                                                      std::uint64_t total) const {
  if (!has_baseline_) {
    return Status::FailedPrecondition(
        "novelty rate detector has no baseline yet; set one after warm-up");
  }
  if (unclassified > total) {
    return Status::InvalidArgument(std::to_string(unclassified) +
                                   " unclassified particles out of " + std::to_string(total) +
                                   "; cannot be more than the total");
  }
  DetectorReading reading;
  reading.kind = "novelty";
  reading.statistic_name = "unclassified_rate_ratio";
  reading.threshold = options_.alarm_ratio;
  if (total == 0) {
    reading.what_changed = "No particles in the recent window; nothing to compare.";
    return reading;
  }
  const double p0 = tested_rate();
  const double rate = static_cast<double>(unclassified) / static_cast<double>(total);
  SESTON_ASSIGN_OR_RETURN(double p_value, BinomialUpperTail(unclassified, total, p0));
  reading.statistic = rate / p0;
  const bool significant = p_value < options_.alpha;
  if (significant && reading.statistic >= options_.alarm_ratio) {
    reading.level = DriftLevel::kAlarm;
  } else if (significant && reading.statistic >= options_.warn_ratio) {
    reading.level = DriftLevel::kWarn;
  }
  reading.what_changed =
      "Unclassified particles: " + std::to_string(unclassified) + " of " + std::to_string(total) +
      " (" + FormatFixed(100 * rate, 2) + " %) against a baseline of " + FormatFixed(100 * p0, 2) +
      " %, " + FormatFixed(reading.statistic, 2) + " times the baseline (warn at " +
      FormatFixed(options_.warn_ratio, 2) + ", alarm at " + FormatFixed(options_.alarm_ratio, 2) +
      " times); one-sided binomial p = " + FormatSignificant(p_value, 3) +
      (significant ? " (significant" : " (not significant") + " at alpha " +
      FormatSignificant(options_.alpha, 3) + ").";
  if (reading.level != DriftLevel::kOk) {
    reading.what_to_check =
        "Particles far from every group arrive more often: a new kind of particle, debris, "
        "bubbles, or an instrument out of focus. Look at the unclassified images; a tight "
        "new group among them will be offered as a new cluster. " +
        std::string(kScreeningAidCaution);
  }
  return reading;
}

nlohmann::json NoveltyRateDetector::ToJson() const {
  return {{"baseline_rate", has_baseline_ ? nlohmann::json(baseline_rate_) : nlohmann::json()}};
}

Result<NoveltyRateDetector> NoveltyRateDetector::FromJson(const nlohmann::json& state,
                                                          NoveltyRateOptions options) {
  SESTON_ASSIGN_OR_RETURN(NoveltyRateDetector detector, Create(options));
  try {
    const nlohmann::json& rate = state.at("baseline_rate");
    if (rate.is_null()) return detector;
    Status set = detector.SetBaseline(rate.get<double>());
    if (!set.ok()) return Status::Corruption("novelty rate state: " + set.message());
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("novelty rate state: ") + error.what());
  }
  return detector;
}

}  // namespace seston
