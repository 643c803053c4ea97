#include "pipeline/service_metrics.h"

#include <unistd.h>

#include <charconv>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>

#include "api/metrics_text.h"
#include "counts/count_types.h"

namespace seston {
namespace {

constexpr double kLastHourSeconds = 3600;

// Families are fixed names, so a Status from the builder means a bug here; the page keeps
// what was written and the mistake is written as a comment line where it happened.
class Page {
 public:
  void Single(std::string_view name, MetricType type, std::string_view help, double value) {
    Check(text_.Single(name, type, help, value));
  }
  void Family(std::string_view name, MetricType type, std::string_view help) {
    Check(text_.Family(name, type, help));
  }
  void Sample(const MetricLabels& labels, double value) { Check(text_.Sample(labels, value)); }
  std::string Take() { return text_.Text() + problems_; }

 private:
  void Check(const Status& status) {
    if (!status.ok()) problems_ += "# seston metrics error: " + status.message() + "\n";
  }
  MetricsText text_;
  std::string problems_;
};

double LevelNumber(DriftLevel level) {
  switch (level) {
    case DriftLevel::kOk:
      return 0;
    case DriftLevel::kWarn:
      return 1;
    case DriftLevel::kAlarm:
      return 2;
  }
  return 0;
}

void AddLastHour(Page& page, const ServiceSnapshot& s) {
  if (!s.counts || std::isnan(s.counts->latest_event_seconds())) return;
  const double bin = s.counts->bin_seconds();
  const double to = BinStartOf(BinIndexOf(s.counts->latest_event_seconds(), bin) + 1, bin);
  const CountsWindow window = s.counts->Query(to - kLastHourSeconds, to);
  std::map<std::uint32_t, const ClusterView*> by_id;
  for (const ClusterView& cluster : s.clusters) by_id[cluster.id] = &cluster;
  page.Family("seston_cluster_concentration_per_millilitre", MetricType::kGauge,
              "Particles per mL of each group over the last hour of event time.");
  std::map<std::uint32_t, std::uint64_t> counted;
  for (const ClusterWindowCount& row : window.clusters) counted[row.cluster_id] = row.count;
  for (const ClusterView& cluster : s.clusters) {
    if (cluster.retired && !counted.contains(cluster.id)) continue;
    const std::uint64_t count = counted.contains(cluster.id) ? counted[cluster.id] : 0;
    page.Sample({{"cluster", std::to_string(cluster.id)}, {"label", cluster.label}},
                PerMl(count, window.volume_ml));
  }
  page.Single("seston_unclassified_concentration_per_millilitre", MetricType::kGauge,
              "Unclassified particles per mL over the last hour of event time.",
              PerMl(window.unclassified, window.volume_ml));
  page.Single("seston_unclassified_fraction", MetricType::kGauge,
              "Share of the last hour's particles that fit no group, 0..1.",
              window.total > 0
                  ? static_cast<double>(window.unclassified) / static_cast<double>(window.total)
                  : 0.0);
  page.Single("seston_analysed_volume_last_hour_millilitres", MetricType::kGauge,
              "Water analysed in the last hour of event time, mL.", window.volume_ml);
}

void AddSnapshot(Page& page, const ServiceSnapshot& s, const std::vector<DetectorReading>& readings,
                 const ServiceMetricsExtras& extras) {
  page.Family("seston_build_info", MetricType::kGauge, "Version of sestond; always 1.");
  page.Sample({{"version", s.version}}, 1);
  page.Single("seston_start_time_seconds", MetricType::kGauge,
              "When this sestond process started, s since the epoch.", s.started_wall_seconds);
  page.Single("seston_warming_up", MetricType::kGauge, "1 until the first fit of the model.",
              s.warming_up ? 1 : 0);
  page.Single("seston_degraded", MetricType::kGauge,
              "1 while writing state fails or after a checkpoint fallback.", s.degraded ? 1 : 0);
  page.Single("seston_warmup_particles_held", MetricType::kGauge,
              "Particles held for the warm-up fit.", static_cast<double>(s.warmup_held));
  page.Single("seston_clusters", MetricType::kGauge, "Active groups in the model.", s.k);
  page.Single("seston_particles_accepted_total", MetricType::kCounter,
              "Particles accepted (classified or unclassified).",
              static_cast<double>(s.counters.accepted));
  page.Family("seston_particles_rejected_total", MetricType::kCounter,
              "Rows and records rejected, by reason.");
  for (int reason = 0; reason < kRejectReasonCount; ++reason) {
    page.Sample(
        {{"reason", RejectReasonName(static_cast<RejectReason>(reason))}},
        static_cast<double>(s.counters.rejected_by_reason[static_cast<std::size_t>(reason)]));
  }
  page.Single("seston_particles_unclassified_total", MetricType::kCounter,
              "Particles farther from every centre than its novelty threshold.",
              static_cast<double>(s.counters.unclassified));
  page.Single("seston_samples_total", MetricType::kCounter, "Samples closed and counted.",
              static_cast<double>(s.counters.samples));
  page.Single("seston_analysed_volume_millilitres_total", MetricType::kCounter,
              "Water analysed in the samples counted, mL.", s.counters.volume_ml);

  page.Family("seston_cluster_particles_total", MetricType::kCounter,
              "Particles assigned to each group since it was born.");
  for (const ClusterView& cluster : s.clusters) {
    page.Sample({{"cluster", std::to_string(cluster.id)}}, static_cast<double>(cluster.count));
  }
  page.Family("seston_cluster_info", MetricType::kGauge,
              "Each group's label and whether it retired; always 1.");
  for (const ClusterView& cluster : s.clusters) {
    page.Sample({{"cluster", std::to_string(cluster.id)},
                 {"label", cluster.label},
                 {"retired", cluster.retired ? "true" : "false"}},
                1);
  }
  AddLastHour(page, s);

  if (!readings.empty()) {
    page.Family("seston_detector_statistic", MetricType::kGauge,
                "Latest statistic of each drift detector, in the unit its name says.");
    for (const DetectorReading& r : readings) {
      page.Sample({{"kind", r.kind}, {"statistic", r.statistic_name}}, r.statistic);
    }
    page.Family("seston_detector_threshold", MetricType::kGauge,
                "Alarm threshold of each drift detector's statistic.");
    for (const DetectorReading& r : readings) {
      page.Sample({{"kind", r.kind}, {"statistic", r.statistic_name}}, r.threshold);
    }
    page.Family("seston_detector_level", MetricType::kGauge,
                "Latest level of each drift detector: 0 ok, 1 warn, 2 alarm.");
    for (const DetectorReading& r : readings) page.Sample({{"kind", r.kind}}, LevelNumber(r.level));
  }

  std::map<std::string, int> active_by_kind;
  int active = 0;
  if (s.alerts.contains("active") && s.alerts["active"].is_array()) {
    for (const auto& alert : s.alerts["active"]) {
      ++active;
      if (alert.contains("kind") && alert["kind"].is_string()) {
        ++active_by_kind[alert["kind"].get<std::string>()];
      }
    }
  }
  page.Family("seston_alerts_active", MetricType::kGauge,
              "Alerts raised and not yet resolved, by detector kind; kind=\"all\" is the sum.");
  page.Sample({{"kind", "all"}}, active);
  for (const auto& [kind, count] : active_by_kind) {
    if (kind != "all") page.Sample({{"kind", kind}}, count);
  }

  page.Single("seston_files_done_total", MetricType::kCounter,
              "Drop files counted and moved to done.", static_cast<double>(s.files_done));
  page.Single("seston_files_quarantined_total", MetricType::kCounter,
              "Drop files moved to quarantine.", static_cast<double>(s.files_quarantined));
  if (s.last_particle_seconds) {
    page.Single("seston_last_particle_time_seconds", MetricType::kGauge,
                "Event time of the newest particle, s since the epoch.", *s.last_particle_seconds);
  }
  if (s.last_checkpoint_wall_seconds) {
    page.Single("seston_last_checkpoint_time_seconds", MetricType::kGauge,
                "When the last checkpoint was written, s since the epoch.",
                *s.last_checkpoint_wall_seconds);
    page.Single("seston_checkpoint_age_seconds", MetricType::kGauge,
                "Time since the last checkpoint was written, s.",
                std::max(0.0, extras.wall_seconds - *s.last_checkpoint_wall_seconds));
  }
  page.Single("seston_checkpoints_written_total", MetricType::kCounter,
              "Checkpoints written by this process.", static_cast<double>(s.checkpoints_written));
  page.Single("seston_checkpoint_failures_total", MetricType::kCounter,
              "Checkpoint writes that failed in this process.",
              static_cast<double>(s.checkpoint_failures));
}

}  // namespace

std::string ServiceMetricsText(const ServiceSnapshot* snapshot,
                               const std::vector<DetectorReading>& readings,
                               const ServiceMetricsExtras& extras) {
  Page page;
  if (snapshot != nullptr) AddSnapshot(page, *snapshot, readings, extras);
  page.Single("seston_backlog_files", MetricType::kGauge, "Drop files waiting to be read.",
              static_cast<double>(extras.backlog_files));
  page.Single("seston_backlog_records", MetricType::kGauge,
              "Socket records waiting for the pipeline.",
              static_cast<double>(extras.backlog_records));
  page.Single("seston_inotify_overflows_total", MetricType::kCounter,
              "Times the inotify event queue overflowed (each triggers a rescan).",
              static_cast<double>(extras.inotify_overflows));
  if (extras.forwarding) {
    const AlertmanagerForwarder::Stats& f = *extras.forwarding;
    page.Family("seston_alertmanager_posts_total", MetricType::kCounter,
                "Posts to the Alertmanager, by result (failed ones are retried).");
    page.Sample({{"result", "ok"}}, static_cast<double>(f.posts_ok));
    page.Sample({{"result", "failed"}}, static_cast<double>(f.posts_failed));
    page.Sample({{"result", "refused"}}, static_cast<double>(f.posts_refused));
    page.Single("seston_alertmanager_pending_alerts", MetricType::kGauge,
                "Alerts held for the Alertmanager (active or awaiting delivery).",
                static_cast<double>(f.pending));
    page.Single("seston_alertmanager_alerts_dropped_total", MetricType::kCounter,
                "Alerts dropped because too many were waiting for delivery.",
                static_cast<double>(f.alerts_dropped));
  }
  page.Family("seston_config_reloads_total", MetricType::kCounter,
              "Configuration reloads (SIGHUP), by result.");
  page.Sample({{"result", "applied"}}, static_cast<double>(extras.reloads_applied));
  page.Sample({{"result", "invalid"}}, static_cast<double>(extras.reloads_invalid));
  page.Sample({{"result", "refused"}}, static_cast<double>(extras.reloads_refused));
  if (extras.resident_bytes) {
    page.Single("process_resident_memory_bytes", MetricType::kGauge,
                "Resident memory size of sestond, bytes.",
                static_cast<double>(*extras.resident_bytes));
  }
  return page.Take();
}

std::optional<std::uint64_t> ResidentBytesFromStatm(std::string_view statm,
                                                    std::uint64_t page_bytes) {
  std::istringstream fields{std::string(statm)};
  std::uint64_t size_pages = 0, resident_pages = 0;
  if (!(fields >> size_pages >> resident_pages)) return std::nullopt;
  return resident_pages * page_bytes;
}

std::optional<std::uint64_t> ProcessResidentBytes() {
  // /proc is read directly, not through FileSystem: it is this process's own kernel
  // view, not data, and a test has nothing to fake there.
  std::ifstream file("/proc/self/statm");
  std::string line;
  if (!file || !std::getline(file, line)) return std::nullopt;
  const long page = ::sysconf(_SC_PAGESIZE);
  if (page <= 0) return std::nullopt;
  return ResidentBytesFromStatm(line, static_cast<std::uint64_t>(page));
}

}  // namespace seston
