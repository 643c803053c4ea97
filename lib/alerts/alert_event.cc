#include "alerts/alert_event.h"

#include <string>

#include "base/time_format.h"
#include "drift/detector_reading.h"

namespace seston {

nlohmann::json ToJson(const AlertEvent& event) {
  nlohmann::json clusters = nlohmann::json::array();
  for (const auto& [id, label] : event.clusters) {
    clusters.push_back({{"id", id}, {"label", label}});
  }
  return {
      {"sequence", event.sequence},
      {"event", event.event},
      {"kind", event.kind},
      {"severity", event.severity},
      {"time", FormatIso8601(event.time_seconds)},
      {"since", FormatIso8601(event.since_seconds)},
      {"clusters", clusters},
      {"statistic", event.statistic},
      {"statistic_name", event.statistic_name},
      {"threshold", event.threshold},
      {"message", event.message},
      {"what_to_check", event.what_to_check},
      {"caution", kScreeningAidCaution},
      {"station", event.station},
      {"time_seconds", event.time_seconds},
      {"since_seconds", event.since_seconds},
  };
}

Result<AlertEvent> AlertEventFromJson(const nlohmann::json& json) {
  AlertEvent event;
  const char* field = "";
  try {
    auto read = [&](const char* name, auto& out) {
      field = name;
      json.at(name).get_to(out);
    };
    read("sequence", event.sequence);
    read("event", event.event);
    read("kind", event.kind);
    read("severity", event.severity);
    read("time_seconds", event.time_seconds);
    read("since_seconds", event.since_seconds);
    read("statistic", event.statistic);
    read("statistic_name", event.statistic_name);
    read("threshold", event.threshold);
    read("message", event.message);
    read("what_to_check", event.what_to_check);
    read("station", event.station);
    field = "clusters";
    for (const nlohmann::json& cluster : json.at("clusters")) {
      event.clusters.emplace_back(cluster.at("id").get<std::uint32_t>(),
                                  cluster.at("label").get<std::string>());
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("alert event field \"") + field + "\": " + error.what());
  }
  return event;
}

}  // namespace seston
