#include "alerts/alert_policy.h"

#include <algorithm>
#include <cmath>

#include "base/time_format.h"

namespace seston {
namespace {

std::vector<std::pair<std::uint32_t, std::string>> Labelled(const std::vector<std::uint32_t>& ids,
                                                            const AlertPolicy::LabelOf& label_of) {
  std::vector<std::pair<std::uint32_t, std::string>> clusters;
  for (std::uint32_t id : ids) clusters.emplace_back(id, label_of ? label_of(id) : "");
  return clusters;
}

std::vector<std::uint32_t> Ids(const std::vector<std::pair<std::uint32_t, std::string>>& clusters) {
  std::vector<std::uint32_t> ids;
  for (const auto& cluster : clusters) ids.push_back(cluster.first);
  return ids;
}

}  // namespace

Result<AlertPolicy> AlertPolicy::Create(AlertOptions options, std::string station) {
  if (options.raise_after < 1 || options.resolve_after < 1) {
    return Status::InvalidArgument(
        "alerts.raise_after and alerts.resolve_after are " + std::to_string(options.raise_after) +
        " and " + std::to_string(options.resolve_after) + "; both must be at least 1 evaluation");
  }
  if (!(options.cooldown_seconds >= 0 && std::isfinite(options.cooldown_seconds))) {
    return Status::InvalidArgument("alerts.cooldown_seconds is " +
                                   std::to_string(options.cooldown_seconds) +
                                   "; must be a finite number of seconds >= 0");
  }
  return AlertPolicy(std::move(options), std::move(station));
}

std::vector<AlertEvent> AlertPolicy::Observe(const DetectorReading& reading,
                                             double event_time_seconds, const LabelOf& label_of) {
  const Key primary{reading.kind, reading.clusters.empty() ? 0u : reading.clusters.front()};
  if (reading.level == DriftLevel::kAlarm) keys_.try_emplace(primary);

  std::vector<AlertEvent> events;
  for (auto it = keys_.lower_bound({reading.kind, 0});
       it != keys_.end() && it->first.first == reading.kind;) {
    const Key& key = it->first;
    const bool named = key == primary || std::find(reading.clusters.begin(), reading.clusters.end(),
                                                   key.second) != reading.clusters.end();
    const DriftLevel level = named ? reading.level : DriftLevel::kOk;
    KeyState& state = it->second;
    if (auto event = Apply(key, state, level, reading, event_time_seconds, label_of)) {
      events.push_back(std::move(*event));
    }
    const bool cooling = state.cooldown_until_seconds.has_value() &&
                         event_time_seconds < *state.cooldown_until_seconds;
    if (!state.active && state.consecutive_alarms == 0 && !cooling) {
      it = keys_.erase(it);
    } else {
      ++it;
    }
  }
  return events;
}

std::optional<AlertEvent> AlertPolicy::Apply(const Key& key, KeyState& state, DriftLevel level,
                                             const DetectorReading& reading, double time,
                                             const LabelOf& label_of) {
  switch (level) {
    case DriftLevel::kWarn:
      state.consecutive_oks = 0;
      return std::nullopt;
    case DriftLevel::kOk: {
      state.consecutive_alarms = 0;
      ++state.consecutive_oks;
      if (!state.active || state.consecutive_oks < options_.resolve_after) return std::nullopt;
      AlertEvent resolved = *state.active;
      resolved.sequence = ++sequence_;
      resolved.event = "resolved";
      resolved.time_seconds = time;
      resolved.clusters = Labelled(Ids(resolved.clusters), label_of);
      resolved.statistic = reading.statistic;
      resolved.threshold = reading.threshold;
      resolved.message = "Back within thresholds after " + std::to_string(state.consecutive_oks) +
                         " consecutive ok evaluations (alarm since " +
                         FormatIso8601(resolved.since_seconds) +
                         "). Latest reading: " + reading.what_changed;
      resolved.what_to_check = "Nothing further unless it comes back.";
      state.active.reset();
      state.consecutive_oks = 0;
      state.cooldown_until_seconds = time + options_.cooldown_seconds;
      if (options_.recent_kept > 0) {
        recent_.push_back(resolved);
        while (recent_.size() > options_.recent_kept) recent_.pop_front();
      }
      return resolved;
    }
    case DriftLevel::kAlarm: {
      state.consecutive_oks = 0;
      if (state.consecutive_alarms == 0) state.run_start_seconds = time;
      ++state.consecutive_alarms;
      const bool cooling =
          state.cooldown_until_seconds.has_value() && time < *state.cooldown_until_seconds;
      if (state.active || cooling || state.consecutive_alarms < options_.raise_after) {
        return std::nullopt;
      }
      AlertEvent raised;
      raised.sequence = ++sequence_;
      raised.event = "raised";
      raised.kind = key.first;
      raised.severity = "alarm";
      raised.time_seconds = time;
      raised.since_seconds = state.run_start_seconds;
      raised.clusters = Labelled(reading.clusters, label_of);
      raised.statistic = reading.statistic;
      raised.statistic_name = reading.statistic_name;
      raised.threshold = reading.threshold;
      raised.message = reading.what_changed + " In alarm since " +
                       FormatIso8601(state.run_start_seconds) + " (" +
                       std::to_string(state.consecutive_alarms) + " alarm evaluations).";
      raised.what_to_check = reading.what_to_check;
      raised.station = station_;
      state.active = raised;
      state.cooldown_until_seconds.reset();
      return raised;
    }
  }
  return std::nullopt;
}

std::vector<AlertEvent> AlertPolicy::active() const {
  std::vector<AlertEvent> alerts;
  for (const auto& entry : keys_) {
    if (entry.second.active) alerts.push_back(*entry.second.active);
  }
  return alerts;
}

nlohmann::json AlertPolicy::ToJson() const {
  nlohmann::json keys = nlohmann::json::array();
  for (const auto& [key, state] : keys_) {
    keys.push_back({
        {"kind", key.first},
        {"cluster", key.second},
        {"consecutive_alarms", state.consecutive_alarms},
        {"consecutive_oks", state.consecutive_oks},
        {"run_start_seconds", state.run_start_seconds},
        {"cooldown_until_seconds", state.cooldown_until_seconds
                                       ? nlohmann::json(*state.cooldown_until_seconds)
                                       : nlohmann::json()},
        {"active", state.active ? seston::ToJson(*state.active) : nlohmann::json()},
    });
  }
  nlohmann::json recent = nlohmann::json::array();
  for (const AlertEvent& event : recent_) recent.push_back(seston::ToJson(event));
  return {{"sequence", sequence_}, {"keys", keys}, {"recent", recent}};
}

Result<AlertPolicy> AlertPolicy::FromJson(const nlohmann::json& state, AlertOptions options,
                                          std::string station) {
  SESTON_ASSIGN_OR_RETURN(AlertPolicy policy, Create(std::move(options), std::move(station)));
  try {
    policy.sequence_ = state.at("sequence").get<std::uint64_t>();
    for (const nlohmann::json& entry : state.at("keys")) {
      KeyState key_state;
      key_state.consecutive_alarms = entry.at("consecutive_alarms").get<int>();
      key_state.consecutive_oks = entry.at("consecutive_oks").get<int>();
      key_state.run_start_seconds = entry.at("run_start_seconds").get<double>();
      if (const nlohmann::json& until = entry.at("cooldown_until_seconds"); !until.is_null()) {
        key_state.cooldown_until_seconds = until.get<double>();
      }
      if (const nlohmann::json& active = entry.at("active"); !active.is_null()) {
        Result<AlertEvent> event = AlertEventFromJson(active);
        if (!event.ok()) return event.status().WithContext("alert policy state");
        key_state.active = std::move(event).value();
      }
      policy
          .keys_[{entry.at("kind").get<std::string>(), entry.at("cluster").get<std::uint32_t>()}] =
          std::move(key_state);
    }
    for (const nlohmann::json& entry : state.at("recent")) {
      Result<AlertEvent> event = AlertEventFromJson(entry);
      if (!event.ok()) return event.status().WithContext("alert policy state");
      policy.recent_.push_back(std::move(event).value());
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("alert policy state: ") + error.what());
  }
  while (policy.recent_.size() > policy.options_.recent_kept) policy.recent_.pop_front();
  return policy;
}

}  // namespace seston
