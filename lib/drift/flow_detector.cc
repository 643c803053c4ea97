#include "drift/flow_detector.h"

#include <algorithm>
#include <cmath>
#include <string>

#include "drift/reading_text.h"

namespace seston {

std::optional<double> Median(std::vector<double> values) {
  if (values.empty()) return std::nullopt;
  const std::size_t middle = values.size() / 2;
  std::nth_element(values.begin(), values.begin() + static_cast<std::ptrdiff_t>(middle),
                   values.end());
  const double upper = values[middle];
  if (values.size() % 2 == 1) return upper;
  const double lower =
      *std::max_element(values.begin(), values.begin() + static_cast<std::ptrdiff_t>(middle));
  return (lower + upper) / 2;
}

Result<FlowDetector> FlowDetector::Create(FlowOptions options) {
  if (options.baseline_samples < 1 || options.window_samples < 1) {
    return Status::InvalidArgument("drift.flow.baseline_samples and window_samples are " +
                                   std::to_string(options.baseline_samples) + " and " +
                                   std::to_string(options.window_samples) +
                                   "; both must be at least 1 sample");
  }
  if (!(options.alarm_ratio > 0 && options.alarm_ratio <= options.warn_ratio &&
        options.warn_ratio < 1)) {
    return Status::InvalidArgument(
        "drift.flow.alarm_ratio and warn_ratio are " + std::to_string(options.alarm_ratio) +
        " and " + std::to_string(options.warn_ratio) + "; need 0 < alarm_ratio <= warn_ratio < 1");
  }
  return FlowDetector(options);
}

void FlowDetector::Add(double volume_ml) {
  if (!(std::isfinite(volume_ml) && volume_ml > 0)) return;
  if (!baseline_ml_) {
    collecting_.push_back(volume_ml);
    if (collecting_.size() >= options_.baseline_samples) {
      baseline_ml_ = Median(collecting_);
      collecting_.clear();
    }
  }
  recent_.push_back(volume_ml);
  while (recent_.size() > options_.window_samples) recent_.pop_front();
}

void FlowDetector::RestartBaseline() {
  baseline_ml_.reset();
  collecting_.clear();
  recent_.clear();
}

Status FlowDetector::AcceptRecentAsBaseline() {
  if (recent_.empty()) {
    return Status::FailedPrecondition(
        "no sample volume has been seen since the last baseline; the flow baseline needs at "
        "least one sample");
  }
  baseline_ml_ = Median({recent_.begin(), recent_.end()});
  collecting_.clear();
  return Status::Ok();
}

DetectorReading FlowDetector::Evaluate() const {
  DetectorReading reading;
  reading.kind = "flow";
  reading.statistic_name = "analysed_volume_ratio";
  reading.threshold = options_.alarm_ratio;
  if (!baseline_ml_ || recent_.size() < options_.window_samples) {
    reading.statistic = 1;
    reading.what_changed = "Not enough samples yet to compare the analysed volume (" +
                           std::to_string(recent_.size()) + " recent, baseline " +
                           (baseline_ml_ ? "set" : "still being collected") + ").";
    return reading;
  }
  const double recent = *Median({recent_.begin(), recent_.end()});
  const double ratio = recent / *baseline_ml_;
  reading.statistic = ratio;
  const auto beyond = [ratio](double limit) { return ratio <= limit || ratio >= 1 / limit; };
  if (beyond(options_.alarm_ratio)) {
    reading.level = DriftLevel::kAlarm;
  } else if (beyond(options_.warn_ratio)) {
    reading.level = DriftLevel::kWarn;
  }
  const std::string direction = ratio < 1 ? "fell" : "rose";
  reading.what_changed =
      "Water analysed per sample " + direction + " to " + FormatFixed(100 * ratio, 1) +
      " % of the baseline: median " + FormatFixed(recent, 3) + " mL over the last " +
      std::to_string(recent_.size()) + " samples against " + FormatFixed(*baseline_ml_, 3) +
      " mL at baseline (alarm below " + FormatFixed(100 * options_.alarm_ratio, 0) +
      " % or above " + FormatFixed(100 / options_.alarm_ratio, 0) +
      " %). Concentrations stay comparable, but each sample counts fewer particles.";
  if (reading.level != DriftLevel::kOk) {
    reading.what_to_check =
        ratio < 1 ? "Check the flow path: a clogging or fouled flow cell, the pump, the inlet "
                    "screen, air in the line, or a changed acquisition setting."
                  : "Check the flow settings and the volume the instrument reports: more water "
                    "per sample than at baseline usually means a changed setting.";
  }
  return reading;
}

nlohmann::json FlowDetector::ToJson() const {
  return {{"baseline_ml", baseline_ml_ ? nlohmann::json(*baseline_ml_) : nlohmann::json()},
          {"collecting", collecting_},
          {"recent", recent_}};
}

Result<FlowDetector> FlowDetector::FromJson(const nlohmann::json& state, FlowOptions options) {
  SESTON_ASSIGN_OR_RETURN(FlowDetector detector, Create(options));
  try {
    if (const nlohmann::json& baseline = state.at("baseline_ml"); !baseline.is_null()) {
      detector.baseline_ml_ = baseline.get<double>();
    }
    detector.collecting_ = state.at("collecting").get<std::vector<double>>();
    for (double volume : state.at("recent").get<std::vector<double>>()) {
      detector.recent_.push_back(volume);
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("flow detector state: ") + error.what());
  }
  while (detector.recent_.size() > options.window_samples) detector.recent_.pop_front();
  return detector;
}

}  // namespace seston
