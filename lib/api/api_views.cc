#include "api/api_views.h"

#include "base/time_format.h"

namespace seston {
namespace {

nlohmann::json OptionalTime(const std::optional<double>& seconds) {
  return seconds ? nlohmann::json(FormatIso8601(*seconds)) : nlohmann::json(nullptr);
}

nlohmann::json OptionalNumber(const std::optional<double>& value) {
  return value ? nlohmann::json(*value) : nlohmann::json(nullptr);
}

}  // namespace

nlohmann::json ToJson(const HealthView& health) {
  return {
      {"state", health.state},
      {"uptime_seconds", health.uptime_seconds},
      {"last_particle_time", OptionalTime(health.last_particle_seconds)},
      {"backlog", {{"files", health.backlog_files}, {"records", health.backlog_records}}},
      {"last_error", health.last_error},
      {"particles",
       {{"accepted", health.particles_accepted},
        {"rejected", health.particles_rejected},
        {"unclassified", health.particles_unclassified}}},
      {"files", {{"done", health.files_done}, {"quarantined", health.files_quarantined}}},
      {"k", health.k},
      {"station", health.station},
      {"version", health.version},
      {"last_checkpoint_time", OptionalTime(health.last_checkpoint_seconds)},
  };
}

nlohmann::json ToJson(const CountsView& counts) {
  nlohmann::json rows = nlohmann::json::array();
  for (const CountsView::Row& row : counts.clusters) {
    rows.push_back({{"id", row.id},
                    {"label", row.label},
                    {"count", row.count},
                    {"concentration_per_ml", OptionalNumber(row.concentration_per_ml)}});
  }
  return {
      {"from", FormatIso8601(counts.from_seconds)},
      {"to", FormatIso8601(counts.to_seconds)},
      {"window_seconds", counts.to_seconds - counts.from_seconds},
      {"clusters", std::move(rows)},
      {"unclassified", counts.unclassified},
      {"unclassified_per_ml", OptionalNumber(counts.unclassified_per_ml)},
      {"rejected", counts.rejected},
      {"volume_ml", counts.volume_ml},
      {"total", counts.total},
  };
}

nlohmann::json ToJson(const std::vector<ClusterView>& clusters) {
  nlohmann::json list = nlohmann::json::array();
  for (const ClusterView& cluster : clusters) {
    nlohmann::json centre = nlohmann::json::object();
    for (const auto& [column, value] : cluster.centre) centre[column] = value;
    list.push_back({{"id", cluster.id},
                    {"label", cluster.label},
                    {"count", cluster.count},
                    {"centre", std::move(centre)},
                    {"spread", cluster.spread},
                    {"born_time", FormatIso8601(cluster.born_seconds)},
                    {"retired", cluster.retired}});
  }
  return {{"clusters", std::move(list)}};
}

nlohmann::json ToJson(const SeriesView& series) {
  nlohmann::json clusters = nlohmann::json::array();
  for (const auto& [id, label] : series.clusters) clusters.push_back({{"id", id}, {"label", label}});
  nlohmann::json points = nlohmann::json::array();
  for (const CountsView& point : series.points) {
    nlohmann::json concentrations = nlohmann::json::object();
    for (const CountsView::Row& row : point.clusters) {
      concentrations[std::to_string(row.id)] = OptionalNumber(row.concentration_per_ml);
    }
    points.push_back({{"from", FormatIso8601(point.from_seconds)},
                      {"volume_ml", point.volume_ml},
                      {"total", point.total},
                      {"unclassified_per_ml", OptionalNumber(point.unclassified_per_ml)},
                      {"concentration_per_ml", std::move(concentrations)}});
  }
  return {{"from", FormatIso8601(series.from_seconds)},
          {"to", FormatIso8601(series.to_seconds)},
          {"step_seconds", series.step_seconds},
          {"clusters", std::move(clusters)},
          {"points", std::move(points)}};
}

nlohmann::json ToJson(const RecentParticlesView& recent) {
  nlohmann::json particles = nlohmann::json::array();
  for (const RecentParticlesView::Particle& particle : recent.particles) {
    particles.push_back({{"time", FormatIso8601(particle.time_seconds, /*millis=*/true)},
                         {"cluster", particle.cluster},
                         {"values", particle.values}});
  }
  return {{"columns", recent.columns}, {"particles", std::move(particles)}};
}

}  // namespace seston
