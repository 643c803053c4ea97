#include "pipeline/drift_monitor.h"

#include <algorithm>
#include <cmath>
#include <optional>

#include "base/time_format.h"
#include "drift/reading_text.h"
#include "pipeline/birth_finder.h"

namespace seston {
namespace {

// Cluster ids count the clusters ever made, a handful of births a week; a saved window
// naming an id above this is corrupt (and would size the count table by it).
constexpr std::uint32_t kMaxRecentId = 1U << 24;

std::vector<ClusterRef> ClusterRefs(const MiniBatchKMeans& model, bool baseline) {
  std::vector<ClusterRef> refs;
  for (const auto& cluster : model.clusters()) {
    if (cluster.retired) continue;
    // A baseline needs a spread to measure displacement in; a cluster with a single
    // warm-up member has none and is left out of the centre baseline.
    if (baseline && !(cluster.spread > 0 && std::isfinite(cluster.spread))) continue;
    refs.push_back(
        {cluster.id,
         std::vector<double>(cluster.centre.data(), cluster.centre.data() + cluster.centre.size()),
         cluster.spread});
  }
  return refs;
}

nlohmann::json ReadingToJson(const DetectorReading& reading) {
  return {{"kind", reading.kind},
          {"level", DriftLevelName(reading.level)},
          {"statistic", reading.statistic},
          {"threshold", reading.threshold},
          {"statistic_name", reading.statistic_name},
          {"clusters", reading.clusters},
          {"what_changed", reading.what_changed},
          {"what_to_check", reading.what_to_check}};
}

Result<DetectorReading> ReadingFromJson(const nlohmann::json& json) {
  DetectorReading reading;
  reading.kind = json.at("kind").get<std::string>();
  const std::string level = json.at("level").get<std::string>();
  if (level == DriftLevelName(DriftLevel::kOk)) {
    reading.level = DriftLevel::kOk;
  } else if (level == DriftLevelName(DriftLevel::kWarn)) {
    reading.level = DriftLevel::kWarn;
  } else if (level == DriftLevelName(DriftLevel::kAlarm)) {
    reading.level = DriftLevel::kAlarm;
  } else {
    return Status::Corruption("drift monitor state: reading level \"" + level +
                              "\" is not ok, warn or alarm");
  }
  reading.statistic = json.at("statistic").get<double>();
  reading.threshold = json.at("threshold").get<double>();
  reading.statistic_name = json.at("statistic_name").get<std::string>();
  reading.clusters = json.at("clusters").get<std::vector<std::uint32_t>>();
  reading.what_changed = json.at("what_changed").get<std::string>();
  reading.what_to_check = json.at("what_to_check").get<std::string>();
  return reading;
}

}  // namespace

Result<DriftMonitor> DriftMonitor::Create(const DriftOptions& drift, const AlertOptions& alerts,
                                          std::string station) {
  if (drift.evaluate_every_particles == 0) {
    return Status::InvalidArgument(
        "drift.evaluate_every_particles is 0; it must be at least 1 particle");
  }
  SESTON_ASSIGN_OR_RETURN(auto composition, CompositionDetector::Create(drift.composition));
  SESTON_ASSIGN_OR_RETURN(auto centre, CentreDriftDetector::Create(drift.centre));
  SESTON_ASSIGN_OR_RETURN(auto fit, FitDetector::Create(drift.fit));
  SESTON_ASSIGN_OR_RETURN(auto novelty, NoveltyRateDetector::Create(drift.novelty));
  SESTON_ASSIGN_OR_RETURN(auto flow, FlowDetector::Create(drift.flow));
  SESTON_ASSIGN_OR_RETURN(auto policy, AlertPolicy::Create(alerts, station));
  return DriftMonitor(drift, alerts, std::move(station), std::move(composition), std::move(centre),
                      std::move(fit), std::move(novelty), std::move(flow), std::move(policy));
}

Status DriftMonitor::SetBaseline(const MiniBatchKMeans& model,
                                 const std::map<std::uint32_t, std::uint64_t>& counts_by_cluster,
                                 double /*event_seconds*/) {
  std::map<std::uint32_t, double> counts;
  std::uint64_t total = 0;
  std::uint64_t unclassified = 0;
  for (const auto& [id, count] : counts_by_cluster) {
    total += count;
    if (id == 0) {
      unclassified += count;
    } else if (count > 0) {
      counts[id] = static_cast<double>(count);
    }
  }
  if (counts.empty()) {
    return Status::FailedPrecondition(
        "drift baseline: no particle was classified into a cluster; at least one is needed");
  }
  SESTON_RETURN_IF_ERROR(composition_.SetBaseline(std::move(counts)));
  SESTON_RETURN_IF_ERROR(centre_.SetBaseline(ClusterRefs(model, true)));
  SESTON_RETURN_IF_ERROR(
      novelty_.SetBaseline(static_cast<double>(unclassified) / static_cast<double>(total)));
  fit_.Reset();
  flow_.RestartBaseline();
  ClearWindows();
  return Status::Ok();
}

Status DriftMonitor::AcceptCurrentAsBaseline(const MiniBatchKMeans& model, double event_seconds) {
  if (recent_ids_.empty()) {
    return Status::FailedPrecondition(
        "no particle has been classified into a cluster since the last baseline; a new "
        "baseline needs a recent window to take its proportions from");
  }
  std::map<std::uint32_t, std::uint64_t> counts;
  for (const auto& [id, count] : RecentCounts()) {
    counts[id] = static_cast<std::uint64_t>(std::llround(count));
  }
  // The unclassified rate comes from its own window (the composition window holds
  // classified ids only) and replaces the rate SetBaseline derives from `counts`.
  const double rate = static_cast<double>(recent_unclassified_count_) /
                      static_cast<double>(std::max<std::size_t>(1, recent_unclassified_.size()));
  FlowDetector flow = flow_;
  SESTON_RETURN_IF_ERROR(SetBaseline(model, counts, event_seconds));
  SESTON_RETURN_IF_ERROR(novelty_.SetBaseline(rate));
  // A flow baseline needs a sample; without one seen yet, it is collected afresh.
  if (flow.AcceptRecentAsBaseline().ok()) flow_ = std::move(flow);
  return Status::Ok();
}

void DriftMonitor::ClearWindows() {
  recent_ids_.clear();
  recent_counts_.clear();
  recent_unclassified_.clear();
  recent_unclassified_count_ = 0;
  since_evaluation_ = 0;
  evaluation_seconds_.clear();
}

void DriftMonitor::PushRecent(std::uint32_t id) {
  const bool unclassified = id == 0;
  recent_unclassified_.push_back(unclassified);
  recent_unclassified_count_ += unclassified ? 1 : 0;
  if (recent_unclassified_.size() > drift_.novelty.window_particles) {
    recent_unclassified_count_ -= recent_unclassified_.front() ? 1 : 0;
    recent_unclassified_.pop_front();
  }
  if (unclassified) return;
  recent_ids_.push_back(id);
  CountRecent(id);
  if (recent_ids_.size() > drift_.composition.window_particles) {
    --recent_counts_[recent_ids_.front()];  // counted when it was pushed
    recent_ids_.pop_front();
  }
}

void DriftMonitor::CountRecent(std::uint32_t id) {
  if (id >= recent_counts_.size()) recent_counts_.resize(std::size_t{id} + 1, 0);
  ++recent_counts_[id];
}

std::map<std::uint32_t, double> DriftMonitor::RecentCounts() const {
  std::map<std::uint32_t, double> counts;
  for (std::size_t id = 0; id < recent_counts_.size(); ++id) {
    if (recent_counts_[id] > 0) {
      counts[static_cast<std::uint32_t>(id)] = static_cast<double>(recent_counts_[id]);
    }
  }
  return counts;
}

std::vector<AlertEvent> DriftMonitor::Observe(
    MiniBatchKMeans& model, std::span<const std::uint32_t> ids, std::span<const double> distances,
    std::span<const double> seconds, const LabelOf& label_of, const CentreText& centre_text) {
  std::vector<AlertEvent> events;
  const std::size_t n = std::min({ids.size(), distances.size(), seconds.size()});
  for (std::size_t i = 0; i < n; ++i) {
    PushRecent(ids[i]);
    if (!has_baseline()) continue;
    if (std::isfinite(distances[i])) fit_.Add(distances[i]);
    if (++since_evaluation_ >= drift_.evaluate_every_particles) {
      since_evaluation_ = 0;
      Evaluate(model, seconds[i], label_of, centre_text, &events);
    }
  }
  return events;
}

std::vector<AlertEvent> DriftMonitor::ObserveSample(double volume_ml, double seconds) {
  std::vector<AlertEvent> events;
  if (!has_baseline()) return events;
  flow_.Add(volume_ml);
  ObserveReading(flow_.Evaluate(), seconds, nullptr, &events);
  return events;
}

void DriftMonitor::Evaluate(MiniBatchKMeans& model, double seconds, const LabelOf& label_of,
                            const CentreText& centre_text, std::vector<AlertEvent>* events) {
  const std::size_t lookback =
      kBirthLookbackWindows * drift_.novelty.window_particles / drift_.evaluate_every_particles;
  evaluation_seconds_.push_back(seconds);
  while (evaluation_seconds_.size() > std::max<std::size_t>(1, lookback)) {
    evaluation_seconds_.pop_front();
  }
  Births(model, seconds, label_of, centre_text, events);
  Retirements(model, seconds, label_of, events);
  // Each detector can fail only on a broken invariant of this class (no baseline, a
  // negative count, a centre of the wrong dimension); such a reading is skipped.
  if (auto reading = composition_.Evaluate(RecentCounts()); reading.ok()) {
    ObserveReading(*reading, seconds, label_of, events);
  }
  if (centre_.has_baseline()) {
    if (auto evaluation = centre_.Evaluate(ClusterRefs(model, false)); evaluation.ok()) {
      ObserveReading(evaluation->instrument_drift, seconds, label_of, events);
      ObserveReading(evaluation->centre_drift, seconds, label_of, events);
    }
  }
  ObserveReading(fit_.Evaluate(), seconds, label_of, events);
  if (auto reading = novelty_.Evaluate(recent_unclassified_count_, recent_unclassified_.size());
      reading.ok()) {
    ObserveReading(*reading, seconds, label_of, events);
  }
}

void DriftMonitor::ObserveReading(const DetectorReading& reading, double seconds,
                                  const LabelOf& label_of, std::vector<AlertEvent>* events) {
  for (AlertEvent& event : policy_.Observe(reading, seconds, label_of)) {
    Emit(std::move(event), events);
  }
  latest_[reading.kind] = reading;
}

void DriftMonitor::Births(MiniBatchKMeans& model, double seconds, const LabelOf& label_of,
                          const CentreText& centre_text, std::vector<AlertEvent>* events) {
  // The search refits k-means on the buffer, by far the dearest step of an evaluation
  // (94 % of a replay's time when it ran at every evaluation); between two searches the
  // buffer must have gained kBirthSearchStepDivisor-th of a birth's size in new points.
  // A buffer too small for a birth costs nothing to look at and does not count as a search.
  const auto& buffer = model.novelty_buffer();
  const double not_before = evaluation_seconds_.front();
  const auto eligible = static_cast<std::size_t>(std::count_if(
      buffer.begin(), buffer.end(), [&](const auto& entry) { return entry.seconds >= not_before; }));
  if (eligible < drift_.novelty.birth_min_particles || buffer.empty()) return;
  const std::uint64_t newest = buffer.back().sequence;
  const std::uint64_t step =
      std::max<std::uint64_t>(1, drift_.novelty.birth_min_particles / kBirthSearchStepDivisor);
  if (birth_searched_through_ != 0 && newest < birth_searched_through_ + step) return;
  birth_searched_through_ = newest;
  std::optional<BirthCandidate> birth =
      FindBirth(model, drift_.novelty.birth_min_particles, not_before);
  if (!birth) return;
  const auto size = static_cast<double>(birth->members.size());
  const std::uint32_t id =
      model.AddCluster(birth->centre, size, birth->novelty_threshold, birth->spread, seconds);
  model.RemoveNoveltyPoints(birth->members);
  AlertEvent event = OneOffEvent("new_cluster", seconds);
  event.since_seconds = birth->first_seconds;
  event.clusters = {{id, label_of ? label_of(id) : ""}};
  event.statistic = size;
  event.statistic_name = "new_cluster_particles";
  event.threshold = static_cast<double>(drift_.novelty.birth_min_particles);
  std::string centre = centre_text ? centre_text(id) : "";
  if (centre.empty()) {
    centre = "in standardised units (";
    for (Eigen::Index d = 0; d < birth->centre.size(); ++d) {
      centre += (d > 0 ? ", " : "") + FormatFixed(birth->centre[d], 2);
    }
    centre += ") z";
  }
  event.message = "A new group appeared: " + std::to_string(birth->members.size()) +
                  " particles that fit no known group (unclassified since " +
                  FormatIso8601(birth->first_seconds) + ") form a tight group, now cluster " +
                  std::to_string(id) + ". Its centre is " + centre + "; its spread is " +
                  FormatFixed(birth->spread, 2) + " z, and it lies " +
                  FormatFixed(birth->nearest_distance, 2) +
                  " z from the nearest known group, cluster " + std::to_string(birth->nearest_id) +
                  ". From now on its particles are counted as cluster " + std::to_string(id) + ".";
  event.what_to_check =
      "Look at images of cluster " + std::to_string(id) +
      " and give it a label: a new species or life stage, debris, bubbles, or an instrument "
      "artefact. " +
      std::string(kScreeningAidCaution);
  Emit(std::move(event), events);
}

void DriftMonitor::Retirements(MiniBatchKMeans& model, double seconds, const LabelOf& label_of,
                               std::vector<AlertEvent>* events) {
  std::vector<MiniBatchKMeans::Cluster> faded;
  for (const auto& cluster : model.clusters()) {
    if (!cluster.retired && cluster.weight < kRetireWeightFloor) faded.push_back(cluster);
  }
  for (const auto& cluster : faded) {
    if (model.active_count() <= 1 || !model.RetireCluster(cluster.id, seconds).ok()) return;
    AlertEvent event = OneOffEvent("cluster_retired", seconds);
    event.since_seconds = cluster.born_seconds;
    event.clusters = {{cluster.id, label_of ? label_of(cluster.id) : ""}};
    event.statistic = cluster.weight;
    event.statistic_name = "cluster_weight_particles";
    event.threshold = kRetireWeightFloor;
    event.message = "Group " + std::to_string(cluster.id) + " (present since " +
                    FormatIso8601(cluster.born_seconds) +
                    ") has faded away: its decayed weight is " +
                    FormatSignificant(cluster.weight, 3) + " particles, below the floor of " +
                    FormatSignificant(kRetireWeightFloor, 3) +
                    " particle. It is retired; its id will not be used again.";
    event.what_to_check =
        "Whether this group was expected to disappear (season, tide, a finished bloom); "
        "if it was an artefact of the instrument, nothing to do.";
    Emit(std::move(event), events);
  }
}

AlertEvent DriftMonitor::OneOffEvent(std::string kind, double seconds) const {
  AlertEvent event;
  event.event = "raised";
  event.kind = std::move(kind);
  event.severity = "warning";
  event.time_seconds = seconds;
  event.since_seconds = seconds;
  event.station = station_;
  return event;
}

void DriftMonitor::Emit(AlertEvent event, std::vector<AlertEvent>* events) {
  event.sequence = ++sequence_;
  const AlertKey key{event.kind, event.clusters.empty() ? 0u : event.clusters.front().first};
  const bool one_off = event.severity == "warning";
  if (event.event == "raised" && !one_off) {
    active_[key] = event;
  } else {
    active_.erase(key);
    if (alerts_.recent_kept > 0) {
      recent_.push_back(event);
      while (recent_.size() > alerts_.recent_kept) recent_.pop_front();
    }
  }
  events->push_back(std::move(event));
}

std::vector<AlertEvent> DriftMonitor::active_alerts() const {
  std::vector<AlertEvent> alerts;
  for (const auto& entry : active_) alerts.push_back(entry.second);
  return alerts;
}

nlohmann::json DriftMonitor::ToJson() const {
  nlohmann::json latest = nlohmann::json::array();
  for (const auto& entry : latest_) latest.push_back(ReadingToJson(entry.second));
  nlohmann::json active = nlohmann::json::array();
  for (const auto& entry : active_) active.push_back(seston::ToJson(entry.second));
  nlohmann::json recent = nlohmann::json::array();
  for (const AlertEvent& event : recent_) recent.push_back(seston::ToJson(event));
  std::vector<int> unclassified(recent_unclassified_.begin(), recent_unclassified_.end());
  return {{"composition", composition_.ToJson()},
          {"centre", centre_.ToJson()},
          {"fit", fit_.ToJson()},
          {"novelty", novelty_.ToJson()},
          {"flow", flow_.ToJson()},
          {"policy", policy_.ToJson()},
          {"recent_ids", recent_ids_},
          {"recent_unclassified", unclassified},
          {"since_evaluation", since_evaluation_},
          {"evaluation_seconds", evaluation_seconds_},
          {"birth_searched_through", birth_searched_through_},
          {"latest", latest},
          {"sequence", sequence_},
          {"active", active},
          {"recent", recent}};
}

Result<DriftMonitor> DriftMonitor::FromJson(const nlohmann::json& state, const DriftOptions& drift,
                                            const AlertOptions& alerts, std::string station) {
  SESTON_ASSIGN_OR_RETURN(DriftMonitor monitor, Create(drift, alerts, station));
  try {
    if (!state.at("composition").at("baseline").empty()) {
      SESTON_ASSIGN_OR_RETURN(
          monitor.composition_,
          CompositionDetector::FromJson(state.at("composition"), drift.composition));
    }
    SESTON_ASSIGN_OR_RETURN(monitor.centre_,
                            CentreDriftDetector::FromJson(state.at("centre"), drift.centre));
    SESTON_ASSIGN_OR_RETURN(monitor.fit_, FitDetector::FromJson(state.at("fit"), drift.fit));
    SESTON_ASSIGN_OR_RETURN(monitor.novelty_,
                            NoveltyRateDetector::FromJson(state.at("novelty"), drift.novelty));
    SESTON_ASSIGN_OR_RETURN(monitor.flow_, FlowDetector::FromJson(state.at("flow"), drift.flow));
    SESTON_ASSIGN_OR_RETURN(monitor.policy_,
                            AlertPolicy::FromJson(state.at("policy"), alerts, station));
    for (std::uint32_t id : state.at("recent_ids").get<std::vector<std::uint32_t>>()) {
      if (id == 0 || id > kMaxRecentId) {
        return Status::InvalidArgument("drift state: recent_ids holds cluster id " +
                                       std::to_string(id) + ", outside 1.." +
                                       std::to_string(kMaxRecentId));
      }
      monitor.recent_ids_.push_back(id);
      monitor.CountRecent(id);
    }
    for (int flag : state.at("recent_unclassified").get<std::vector<int>>()) {
      monitor.recent_unclassified_.push_back(flag != 0);
      monitor.recent_unclassified_count_ += flag != 0 ? 1 : 0;
    }
    monitor.since_evaluation_ = state.at("since_evaluation").get<std::uint64_t>();
    for (double seconds : state.at("evaluation_seconds").get<std::vector<double>>()) {
      monitor.evaluation_seconds_.push_back(seconds);
    }
    // Absent from checkpoints written before searches were spaced out: search at once.
    monitor.birth_searched_through_ = state.value("birth_searched_through", std::uint64_t{0});
    for (const nlohmann::json& entry : state.at("latest")) {
      SESTON_ASSIGN_OR_RETURN(DetectorReading reading, ReadingFromJson(entry));
      monitor.latest_[reading.kind] = std::move(reading);
    }
    monitor.sequence_ = state.at("sequence").get<std::uint64_t>();
    for (const nlohmann::json& entry : state.at("active")) {
      Result<AlertEvent> event = AlertEventFromJson(entry);
      if (!event.ok()) return event.status().WithContext("drift monitor state");
      const AlertKey key{event->kind, event->clusters.empty() ? 0u : event->clusters.front().first};
      monitor.active_[key] = std::move(event).value();
    }
    for (const nlohmann::json& entry : state.at("recent")) {
      Result<AlertEvent> event = AlertEventFromJson(entry);
      if (!event.ok()) return event.status().WithContext("drift monitor state");
      monitor.recent_.push_back(std::move(event).value());
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("drift monitor state: ") + error.what());
  }
  return monitor;
}

}  // namespace seston
