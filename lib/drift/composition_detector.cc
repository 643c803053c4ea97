#include "drift/composition_detector.h"

#include <algorithm>
#include <cmath>
#include <set>
#include <string>
#include <vector>

#include "drift/contingency_tests.h"
#include "drift/reading_text.h"

namespace seston {
namespace {

// At most this many clusters are named, and only those whose share moved by at least
// this fraction of the largest move: enough to say what happened, short enough to read.
constexpr std::size_t kMostNamed = 3;
constexpr double kNamedFractionOfLargestMove = 0.25;

Status CheckCounts(const std::map<std::uint32_t, double>& counts, const char* which) {
  for (const auto& [id, count] : counts) {
    if (!std::isfinite(count) || count < 0) {
      return Status::InvalidArgument(std::string(which) + " count of cluster " +
                                     std::to_string(id) + " is " + std::to_string(count) +
                                     "; counts must be finite and >= 0");
    }
  }
  return Status::Ok();
}

double Total(const std::map<std::uint32_t, double>& counts) {
  double total = 0;
  for (const auto& entry : counts) total += entry.second;
  return total;
}

struct ShareChange {
  std::uint32_t id;
  double baseline_percent;
  double recent_percent;
};

std::string DescribeChange(const ShareChange& change) {
  const std::string cluster = "cluster " + std::to_string(change.id);
  const std::string from_to = FormatFixed(change.baseline_percent, 1) + " % at baseline, " +
                              FormatFixed(change.recent_percent, 1) + " % now";
  if (change.baseline_percent == 0) return cluster + " appeared (" + from_to + ")";
  if (change.recent_percent == 0) return cluster + " vanished (" + from_to + ")";
  const double times = change.recent_percent / change.baseline_percent;
  const std::string verb = times >= 1 ? " rose " : " fell ";
  const std::string factor =
      times >= 1 ? FormatFixed(times, 2) + " times" : "to " + FormatFixed(times, 2) + " times";
  return cluster + verb + factor + " (" + from_to + ")";
}

}  // namespace

Result<CompositionDetector> CompositionDetector::Create(CompositionOptions options) {
  if (!(options.alpha > 0 && options.alpha < 1)) {
    return Status::InvalidArgument("drift.composition.alpha is " + std::to_string(options.alpha) +
                                   "; must be between 0 and 1 (exclusive)");
  }
  if (!(options.warn_jsd >= 0 && options.warn_jsd <= options.alarm_jsd && options.alarm_jsd <= 1)) {
    return Status::InvalidArgument("drift.composition.warn_jsd and alarm_jsd are " +
                                   std::to_string(options.warn_jsd) + " and " +
                                   std::to_string(options.alarm_jsd) +
                                   "; need 0 <= warn_jsd <= alarm_jsd <= 1 (bits)");
  }
  return CompositionDetector(options);
}

Status CompositionDetector::SetBaseline(std::map<std::uint32_t, double> counts_by_cluster) {
  SESTON_RETURN_IF_ERROR(CheckCounts(counts_by_cluster, "baseline"));
  if (!(Total(counts_by_cluster) > 0)) {
    return Status::InvalidArgument(
        "composition baseline has no particles; it needs at least one positive count");
  }
  baseline_ = std::move(counts_by_cluster);
  return Status::Ok();
}

Result<DetectorReading> CompositionDetector::Evaluate(
    const std::map<std::uint32_t, double>& recent_counts) const {
  if (!has_baseline()) {
    return Status::FailedPrecondition(
        "composition detector has no baseline yet; set one after warm-up");
  }
  SESTON_RETURN_IF_ERROR(CheckCounts(recent_counts, "recent"));

  DetectorReading reading;
  reading.kind = "composition";
  reading.statistic_name = "jensen_shannon_divergence_bits";
  reading.threshold = options_.alarm_jsd;
  const double recent_total = Total(recent_counts);
  if (!(recent_total > 0)) {
    reading.what_changed = "No particles in the recent window; nothing to compare.";
    return reading;
  }

  std::set<std::uint32_t> ids;
  for (const auto& entry : baseline_) ids.insert(entry.first);
  for (const auto& entry : recent_counts) ids.insert(entry.first);
  std::vector<double> baseline_row;
  std::vector<double> recent_row;
  for (std::uint32_t id : ids) {
    auto b = baseline_.find(id);
    auto r = recent_counts.find(id);
    baseline_row.push_back(b == baseline_.end() ? 0.0 : b->second);
    recent_row.push_back(r == recent_counts.end() ? 0.0 : r->second);
  }
  SESTON_ASSIGN_OR_RETURN(HomogeneityTest g_test, GTestHomogeneity(baseline_row, recent_row));
  SESTON_ASSIGN_OR_RETURN(double jsd, JensenShannonDivergence(baseline_row, recent_row));

  const bool significant = g_test.p_value < options_.alpha;
  if (significant && jsd >= options_.alarm_jsd) {
    reading.level = DriftLevel::kAlarm;
  } else if (significant && jsd >= options_.warn_jsd) {
    reading.level = DriftLevel::kWarn;
  }
  reading.statistic = jsd;

  const double baseline_total = Total(baseline_);
  std::vector<ShareChange> changes;
  std::size_t column = 0;
  for (std::uint32_t id : ids) {
    changes.push_back(
        {id, 100 * baseline_row[column] / baseline_total, 100 * recent_row[column] / recent_total});
    ++column;
  }
  auto move = [](const ShareChange& c) { return std::abs(c.recent_percent - c.baseline_percent); };
  std::stable_sort(changes.begin(), changes.end(),
                   [&](const ShareChange& a, const ShareChange& b) { return move(a) > move(b); });
  const double largest_move = changes.empty() ? 0.0 : move(changes.front());
  std::string described;
  for (const ShareChange& change : changes) {
    if (reading.clusters.size() == kMostNamed || !(move(change) > 0) ||
        move(change) < kNamedFractionOfLargestMove * largest_move) {
      break;
    }
    reading.clusters.push_back(change.id);
    described += (described.empty() ? "" : "; ") + DescribeChange(change);
  }

  reading.what_changed =
      (described.empty() ? std::string("Cluster shares are unchanged")
                         : "Cluster mix: " + described) +
      ". Jensen-Shannon divergence " + FormatFixed(jsd, 4) + " bits (warn at " +
      FormatFixed(options_.warn_jsd, 4) + ", alarm at " + FormatFixed(options_.alarm_jsd, 4) +
      " bits); G-test G = " + FormatFixed(g_test.statistic, 2) + ", df " +
      std::to_string(g_test.degrees_of_freedom) + ", p = " + FormatSignificant(g_test.p_value, 3) +
      (significant ? " (significant" : " (not significant") + " at alpha " +
      FormatSignificant(options_.alpha, 3) + "); " + FormatFixed(recent_total, 0) +
      " recent particles against " + FormatFixed(baseline_total, 0) + " at baseline.";
  if (reading.level != DriftLevel::kOk) {
    reading.what_to_check =
        "Look at recent images of the clusters named: a bloom, a new source of particles "
        "(run-off, resuspended sediment) or a change of intake depth changes the mix. "
        "Relabel a cluster if it now holds something else. " +
        std::string(kScreeningAidCaution);
  }
  return reading;
}

nlohmann::json CompositionDetector::ToJson() const {
  nlohmann::json baseline = nlohmann::json::array();
  for (const auto& [id, count] : baseline_) baseline.push_back({id, count});
  return {{"baseline", baseline}};
}

Result<CompositionDetector> CompositionDetector::FromJson(const nlohmann::json& state,
                                                          CompositionOptions options) {
  SESTON_ASSIGN_OR_RETURN(CompositionDetector detector, Create(options));
  std::map<std::uint32_t, double> baseline;
  try {
    for (const nlohmann::json& entry : state.at("baseline")) {
      if (!entry.is_array() || entry.size() != 2) {
        return Status::Corruption(
            "composition state: each baseline entry must be [cluster_id, count], got " +
            entry.dump());
      }
      baseline[entry.at(0).get<std::uint32_t>()] = entry.at(1).get<double>();
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("composition state: ") + error.what());
  }
  if (baseline.empty()) return detector;
  Status set = detector.SetBaseline(std::move(baseline));
  if (!set.ok()) return Status::Corruption("composition state: " + set.message());
  return detector;
}

}  // namespace seston
