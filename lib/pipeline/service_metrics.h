// ServiceMetrics: the live daemon's GET /metrics page, from one ServiceSnapshot.
//
// Pure: the snapshot and the few numbers that live outside it (ServiceMetricsExtras) in,
// Prometheus text (format 0.0.4, built with api/metrics_text.h) out. The daemon's
// ApiBackend::Metrics() calls it with the newest snapshot.
//
// Metric families (names follow Prometheus's conventions: base units, _total counters):
//   seston_build_info{version} 1                        gauge
//   seston_start_time_seconds                           gauge, wall s since the epoch
//   seston_warming_up, seston_degraded                  gauge, 0 | 1
//   seston_warmup_particles_held                        gauge
//   seston_clusters                                     gauge, active clusters
//   seston_particles_accepted_total                     counter
//   seston_particles_rejected_total{reason}             counter, every reason listed
//   seston_particles_unclassified_total                 counter
//   seston_samples_total                                counter, samples closed
//   seston_analysed_volume_millilitres_total            counter, mL
//   seston_cluster_particles_total{cluster}             counter, since the cluster's birth
//   seston_cluster_info{cluster,label,retired} 1        gauge
//   seston_cluster_concentration_per_millilitre{cluster,label}   gauge, last hour
//   seston_unclassified_concentration_per_millilitre     gauge, last hour
//   seston_unclassified_fraction                        gauge, last hour, 0..1
//   seston_analysed_volume_last_hour_millilitres        gauge, mL
//   seston_detector_statistic{kind,statistic}           gauge, latest reading
//   seston_detector_threshold{kind,statistic}           gauge, its alarm threshold
//   seston_detector_level{kind}                         gauge, 0 ok, 1 warn, 2 alarm
//   seston_alerts_active{kind}                          gauge (total under kind="all")
//   seston_files_done_total, seston_files_quarantined_total   counter
//   seston_last_particle_time_seconds                   gauge, event time (absent before)
//   seston_last_checkpoint_time_seconds, seston_checkpoint_age_seconds   gauge, wall
//   seston_checkpoints_written_total, seston_checkpoint_failures_total   counter
//   seston_backlog_files, seston_backlog_records        gauge
//   seston_inotify_overflows_total                      counter
//   seston_alertmanager_posts_total{result}             counter, ok | failed | refused
//   seston_alertmanager_pending_alerts                  gauge
//   seston_alertmanager_alerts_dropped_total            counter
//   seston_config_reloads_total{result}                 counter, applied | invalid | refused
//   process_resident_memory_bytes                       gauge (the usual process metric)
// "Last hour" is the hour of event time ending at the end of the count bin holding the
// newest particle, as GET /v1/counts counts by default.
//
// Thread safety: pure functions.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "alerts/alertmanager_client.h"
#include "drift/detector_reading.h"
#include "pipeline/service_snapshot.h"

namespace seston {

struct ServiceMetricsExtras {
  double wall_seconds = 0;  // now, for ages
  std::uint64_t backlog_files = 0;
  std::uint64_t backlog_records = 0;
  std::uint64_t inotify_overflows = 0;
  std::optional<std::uint64_t> resident_bytes;             // absent when unknown
  std::optional<AlertmanagerForwarder::Stats> forwarding;  // absent when off
  std::uint64_t reloads_applied = 0;
  std::uint64_t reloads_invalid = 0;
  std::uint64_t reloads_refused = 0;
};

// `snapshot` may be null (before the first one is published): then only the metrics
// that do not need it are written.
std::string ServiceMetricsText(const ServiceSnapshot* snapshot,
                               const std::vector<DetectorReading>& readings,
                               const ServiceMetricsExtras& extras);

// Resident set size from the text of /proc/self/statm (its second field, in pages) and
// the page size in bytes; nullopt when the text is not in that form.
std::optional<std::uint64_t> ResidentBytesFromStatm(std::string_view statm,
                                                    std::uint64_t page_bytes);
// Reads /proc/self/statm; nullopt where there is none.
std::optional<std::uint64_t> ProcessResidentBytes();

}  // namespace seston
