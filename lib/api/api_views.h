// Views: what the HTTP API shows, as plain values the daemon fills.
//
// The daemon builds these from its immutable snapshots (see api/api_backend.h); the
// router turns them into JSON with the functions below. Every time is double seconds
// since 1970-01-01T00:00:00Z (UTC) in the views and ISO 8601 UTC text in the JSON
// ("2026-12-02T03:04:05Z", via FormatIso8601). Concentrations are particles per mL of
// analysed water; volumes are mL. Thread safety: values; copy freely.
//
// JSON shapes (field names are the API's contract; null where an optional is empty):
//   health   {state, uptime_seconds, last_particle_time, backlog: {files, records},
//             last_error, particles: {accepted, rejected, unclassified},
//             files: {done, quarantined}, k, station, version, last_checkpoint_time}
//   counts   {from, to, window_seconds, clusters: [{id, label, count,
//             concentration_per_ml}], unclassified, unclassified_per_ml, rejected,
//             volume_ml, total}
//   clusters {clusters: [{id, label, count, centre: {column: value}, spread, born_time,
//             retired}]}
//   series   {from, to, step_seconds, clusters: [{id, label}], points: [{from, volume_ml,
//             total, unclassified_per_ml, concentration_per_ml: {"ID": value}}]}
//             (a cluster absent from a point's map had no particle there; every value
//             null when the point analysed no water)
//   recent   {columns: [feature column...], particles: [{time, cluster, values: [...]}]}
//             newest last; values in the input's units, in the order of columns
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace seston {

struct HealthView {
  std::string state;                            // "warming-up" | "running" | "degraded"
  double uptime_seconds = 0;                    // wall seconds since the daemon started
  std::optional<double> last_particle_seconds;  // event time of the newest particle
  std::uint64_t backlog_files = 0;              // input files waiting to be read
  std::uint64_t backlog_records = 0;            // records queued between stages
  std::string last_error;                       // first failure of a background duty; ""
  std::uint64_t particles_accepted = 0;         // since start, all time
  std::uint64_t particles_rejected = 0;
  std::uint64_t particles_unclassified = 0;
  std::uint64_t files_done = 0;
  std::uint64_t files_quarantined = 0;
  int k = 0;  // clusters in the model (0 before the fit)
  std::string station;
  std::string version;
  std::optional<double> last_checkpoint_seconds;  // wall time of the last checkpoint
};

struct CountsView {
  double from_seconds = 0;  // event-time window [from, to)
  double to_seconds = 0;
  struct Row {
    std::uint32_t id = 0;
    std::string label;  // "" when no one has named the cluster
    std::uint64_t count = 0;
    std::optional<double> concentration_per_ml;  // empty when volume_ml is 0
  };
  std::vector<Row> clusters;
  std::uint64_t unclassified = 0;
  std::optional<double> unclassified_per_ml;
  std::uint64_t rejected = 0;
  double volume_ml = 0;     // water analysed within the window
  std::uint64_t total = 0;  // sum of cluster counts and unclassified (rejected excluded)
};

struct ClusterView {
  std::uint32_t id = 0;
  std::string label;
  std::uint64_t count = 0;  // particles assigned since the cluster was born
  std::vector<std::pair<std::string, double>> centre;  // column -> value in input units
  double spread = 0;        // RMS distance of members to the centre, model units
  double born_seconds = 0;  // event time
  bool retired = false;
};

// Concentration over consecutive equal time steps (the status page's line plots).
struct SeriesView {
  double from_seconds = 0;  // first step starts here; event time
  double to_seconds = 0;    // last step ends here
  double step_seconds = 0;
  std::vector<std::pair<std::uint32_t, std::string>> clusters;  // id, label; ascending id
  std::vector<CountsView> points;  // one per step, from oldest to newest
};

// The newest classified particles, for the status page's scatter plot.
struct RecentParticlesView {
  std::vector<std::string> columns;  // feature columns, model order
  struct Particle {
    double time_seconds = 0;
    std::uint32_t cluster = 0;   // 0 = unclassified
    std::vector<double> values;  // input units, one per column
  };
  std::vector<Particle> particles;  // oldest first
};

nlohmann::json ToJson(const HealthView& health);
nlohmann::json ToJson(const CountsView& counts);
// {"clusters": [...]}.
nlohmann::json ToJson(const std::vector<ClusterView>& clusters);
nlohmann::json ToJson(const SeriesView& series);
nlohmann::json ToJson(const RecentParticlesView& recent);

}  // namespace seston
