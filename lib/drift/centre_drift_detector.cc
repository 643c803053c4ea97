#include "drift/centre_drift_detector.h"

#include <algorithm>
#include <cmath>
#include <set>
#include <string>

#include "drift/reading_text.h"

namespace seston {
namespace {

Status CheckFinite(const ClusterRef& cluster, const char* which) {
  for (double value : cluster.centre) {
    if (!std::isfinite(value)) {
      return Status::InvalidArgument(std::string(which) + " centre of cluster " +
                                     std::to_string(cluster.id) + " has a non-finite coordinate");
    }
  }
  return Status::Ok();
}

Status CheckUniqueIds(const std::vector<ClusterRef>& clusters, const char* which) {
  std::set<std::uint32_t> seen;
  for (const ClusterRef& cluster : clusters) {
    if (!seen.insert(cluster.id).second) {
      return Status::InvalidArgument(std::string(which) + " clusters list id " +
                                     std::to_string(cluster.id) + " twice; ids must be unique");
    }
  }
  return Status::Ok();
}

double Dot(const std::vector<double>& a, const std::vector<double>& b) {
  double sum = 0;
  for (std::size_t i = 0; i < a.size(); ++i) sum += a[i] * b[i];
  return sum;
}

// Mean over pairs i < j of cos(angle between displacement i and j); all have length > 0.
double MeanPairwiseCosine(const std::vector<const CentreDisplacement*>& moved) {
  double sum = 0;
  std::size_t pairs = 0;
  for (std::size_t i = 0; i < moved.size(); ++i) {
    for (std::size_t j = i + 1; j < moved.size(); ++j) {
      sum += Dot(moved[i]->displacement, moved[j]->displacement) /
             (moved[i]->distance * moved[j]->distance);
      ++pairs;
    }
  }
  return pairs == 0 ? 0.0 : sum / static_cast<double>(pairs);
}

DriftLevel LevelOf(double spreads, const CentreDriftOptions& options) {
  if (spreads >= options.alarm_spreads) return DriftLevel::kAlarm;
  if (spreads >= options.warn_spreads) return DriftLevel::kWarn;
  return DriftLevel::kOk;
}

std::string Thresholds(const CentreDriftOptions& options) {
  return "warn at " + FormatFixed(options.warn_spreads, 2) + ", alarm at " +
         FormatFixed(options.alarm_spreads, 2) + " spreads";
}

std::string MeanShift(const std::vector<const CentreDisplacement*>& moved) {
  std::vector<double> mean(moved.front()->displacement.size(), 0.0);
  for (const CentreDisplacement* d : moved) {
    for (std::size_t i = 0; i < mean.size(); ++i) mean[i] += d->displacement[i];
  }
  std::string text = "(";
  for (std::size_t i = 0; i < mean.size(); ++i) {
    text += (i == 0 ? "" : ", ") + FormatSigned(mean[i] / static_cast<double>(moved.size()), 2);
  }
  return text + ")";
}

DetectorReading BaseReading(const char* kind, const CentreDriftOptions& options) {
  DetectorReading reading;
  reading.kind = kind;
  reading.statistic_name = std::string(kind) == "instrument_drift"
                               ? "common_centre_displacement_spreads"
                               : "largest_centre_displacement_spreads";
  reading.threshold = options.alarm_spreads;
  return reading;
}

}  // namespace

Result<CentreDriftDetector> CentreDriftDetector::Create(CentreDriftOptions options) {
  if (!(options.warn_spreads > 0 && options.warn_spreads <= options.alarm_spreads &&
        std::isfinite(options.alarm_spreads))) {
    return Status::InvalidArgument("drift.centre.warn_spreads and alarm_spreads are " +
                                   std::to_string(options.warn_spreads) + " and " +
                                   std::to_string(options.alarm_spreads) +
                                   "; need 0 < warn_spreads <= alarm_spreads (spreads)");
  }
  if (!(options.common_fraction > 0 && options.common_fraction <= 1)) {
    return Status::InvalidArgument("drift.centre.common_fraction is " +
                                   std::to_string(options.common_fraction) + "; must be in (0, 1]");
  }
  if (!(options.same_direction_cosine >= -1 && options.same_direction_cosine < 1)) {
    return Status::InvalidArgument("drift.centre.same_direction_cosine is " +
                                   std::to_string(options.same_direction_cosine) +
                                   "; must be in [-1, 1)");
  }
  return CentreDriftDetector(options);
}

Status CentreDriftDetector::SetBaseline(std::vector<ClusterRef> clusters) {
  SESTON_RETURN_IF_ERROR(CheckUniqueIds(clusters, "baseline"));
  for (const ClusterRef& cluster : clusters) {
    if (cluster.centre.empty() || cluster.centre.size() != clusters.front().centre.size()) {
      return Status::InvalidArgument(
          "baseline centre of cluster " + std::to_string(cluster.id) + " has " +
          std::to_string(cluster.centre.size()) + " coordinates; all centres need the same, " +
          "non-zero number (" + std::to_string(clusters.front().centre.size()) + ")");
    }
    SESTON_RETURN_IF_ERROR(CheckFinite(cluster, "baseline"));
    if (!(cluster.spread > 0 && std::isfinite(cluster.spread))) {
      return Status::InvalidArgument("baseline spread of cluster " + std::to_string(cluster.id) +
                                     " is " + std::to_string(cluster.spread) +
                                     "; must be finite and > 0 (z units)");
    }
  }
  std::sort(clusters.begin(), clusters.end(),
            [](const ClusterRef& a, const ClusterRef& b) { return a.id < b.id; });
  baseline_ = std::move(clusters);
  return Status::Ok();
}

Result<std::vector<CentreDisplacement>> CentreDriftDetector::Displacements(
    const std::vector<ClusterRef>& current) const {
  if (!has_baseline()) {
    return Status::FailedPrecondition(
        "centre drift detector has no baseline yet; set one after warm-up");
  }
  SESTON_RETURN_IF_ERROR(CheckUniqueIds(current, "current"));
  std::vector<CentreDisplacement> result;
  for (const ClusterRef& now : current) {
    auto base = std::lower_bound(
        baseline_.begin(), baseline_.end(), now.id,
        [](const ClusterRef& cluster, std::uint32_t id) { return cluster.id < id; });
    if (base == baseline_.end() || base->id != now.id) continue;
    if (now.centre.size() != base->centre.size()) {
      return Status::InvalidArgument("current centre of cluster " + std::to_string(now.id) +
                                     " has " + std::to_string(now.centre.size()) +
                                     " coordinates; its baseline has " +
                                     std::to_string(base->centre.size()));
    }
    SESTON_RETURN_IF_ERROR(CheckFinite(now, "current"));
    CentreDisplacement d;
    d.id = now.id;
    for (std::size_t i = 0; i < now.centre.size(); ++i) {
      d.displacement.push_back(now.centre[i] - base->centre[i]);
    }
    d.distance = std::sqrt(Dot(d.displacement, d.displacement));
    d.spreads = d.distance / base->spread;
    result.push_back(std::move(d));
  }
  std::sort(result.begin(), result.end(),
            [](const CentreDisplacement& a, const CentreDisplacement& b) { return a.id < b.id; });
  return result;
}

Result<CentreDriftEvaluation> CentreDriftDetector::Evaluate(
    const std::vector<ClusterRef>& current) const {
  CentreDriftEvaluation evaluation;
  SESTON_ASSIGN_OR_RETURN(evaluation.displacements, Displacements(current));
  evaluation.instrument_drift = BaseReading("instrument_drift", options_);
  evaluation.centre_drift = BaseReading("centre_drift", options_);
  DetectorReading& instrument = evaluation.instrument_drift;
  DetectorReading& population = evaluation.centre_drift;

  const std::size_t matched = evaluation.displacements.size();
  std::vector<const CentreDisplacement*> moved;
  for (const CentreDisplacement& d : evaluation.displacements) {
    if (d.spreads >= options_.warn_spreads) moved.push_back(&d);
  }
  std::stable_sort(moved.begin(), moved.end(),
                   [](const CentreDisplacement* a, const CentreDisplacement* b) {
                     return a->spreads > b->spreads;
                   });

  const std::size_t needed = std::max<std::size_t>(
      2, static_cast<std::size_t>(
             std::ceil(options_.common_fraction * static_cast<double>(matched) - 1e-9)));
  const bool enough_moved = matched >= 2 && moved.size() >= needed;
  const double cosine = enough_moved ? MeanPairwiseCosine(moved) : 0.0;
  if (enough_moved && cosine > options_.same_direction_cosine) {
    instrument.statistic = moved[needed - 1]->spreads;
    instrument.level = LevelOf(instrument.statistic, options_);
    for (const CentreDisplacement* d : moved) instrument.clusters.push_back(d->id);
    instrument.what_changed = std::to_string(moved.size()) + " of " + std::to_string(matched) +
                              " cluster centres moved the same way (mean pairwise cosine " +
                              FormatFixed(cosine, 2) + "); " + std::to_string(needed) +
                              " of them moved " + FormatFixed(instrument.statistic, 2) +
                              " spreads or more (" + Thresholds(options_) +
                              "). Mean shift per feature, z units: " + MeanShift(moved) + ".";
    instrument.what_to_check =
        "A shift shared by most groups points to the instrument rather than the water: "
        "check focus, calibration against a size standard, fouling of the flow cell and "
        "the flow rate. Once the instrument is right again, consider refitting the model.";
    population.what_changed =
        "Centre movement is shared by most clusters; see the instrument_drift reading.";
    return evaluation;
  }

  instrument.what_changed =
      moved.empty()
          ? "No cluster centre moved " + FormatFixed(options_.warn_spreads, 2) + " spreads or more."
          : "The clusters that moved do not move together (" + std::to_string(moved.size()) +
                " of " + std::to_string(matched) +
                (moved.size() >= 2 ? ", mean pairwise cosine " + FormatFixed(cosine, 2)
                                   : std::string()) +
                ").";
  double largest = 0;
  for (const CentreDisplacement& d : evaluation.displacements)
    largest = std::max(largest, d.spreads);
  population.statistic = largest;
  population.level = LevelOf(largest, options_);
  if (moved.empty()) {
    population.what_changed = "Largest centre displacement " + FormatFixed(largest, 2) +
                              " spreads (" + Thresholds(options_) + ") over " +
                              std::to_string(matched) + " clusters.";
    return evaluation;
  }
  std::string described;
  for (const CentreDisplacement* d : moved) {
    population.clusters.push_back(d->id);
    described += (described.empty() ? "" : "; ") + std::string("cluster ") + std::to_string(d->id) +
                 " centre moved " + FormatFixed(d->spreads, 2) + " spreads (" +
                 FormatFixed(d->distance, 3) + " z units)";
  }
  population.what_changed = described + " since the baseline (" + Thresholds(options_) + "); " +
                            std::to_string(matched - moved.size()) + " of " +
                            std::to_string(matched) + " clusters stayed put.";
  population.what_to_check =
      "Only some groups moved, which points to a change in those populations (growth, "
      "life stage, a similar-looking kind of particle taking over): look at recent images "
      "of the clusters named and relabel them if they now hold something else. " +
      std::string(kScreeningAidCaution);
  return evaluation;
}

nlohmann::json CentreDriftDetector::ToJson() const {
  nlohmann::json baseline = nlohmann::json::array();
  for (const ClusterRef& cluster : baseline_) {
    baseline.push_back(
        {{"id", cluster.id}, {"centre", cluster.centre}, {"spread", cluster.spread}});
  }
  return {{"baseline", baseline}};
}

Result<CentreDriftDetector> CentreDriftDetector::FromJson(const nlohmann::json& state,
                                                          CentreDriftOptions options) {
  SESTON_ASSIGN_OR_RETURN(CentreDriftDetector detector, Create(options));
  std::vector<ClusterRef> baseline;
  try {
    for (const nlohmann::json& entry : state.at("baseline")) {
      ClusterRef cluster;
      cluster.id = entry.at("id").get<std::uint32_t>();
      cluster.centre = entry.at("centre").get<std::vector<double>>();
      cluster.spread = entry.at("spread").get<double>();
      baseline.push_back(std::move(cluster));
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("centre drift state: ") + error.what());
  }
  if (baseline.empty()) return detector;
  Status set = detector.SetBaseline(std::move(baseline));
  if (!set.ok()) return Status::Corruption("centre drift state: " + set.message());
  return detector;
}

}  // namespace seston
