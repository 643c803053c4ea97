// The daemon's metrics page from a hand-made snapshot. Expected values are worked by
// hand from the snapshot (concentration = count / volume, common practice); the format
// rules are those of the Prometheus text exposition format 0.0.4, checked by
// tests/api/metrics_text_test.cc and by promtool in tests/ops.
#include "pipeline/service_metrics.h"

#include <gtest/gtest.h>

#include <sstream>
#include <string>

namespace seston {
namespace {

constexpr double kTen = 1780308000;  // 2026-06-01T10:00:00Z

// The sample line `name{labels} value` of the page, or "" when absent.
std::string Line(const std::string& page, const std::string& prefix) {
  std::istringstream lines(page);
  for (std::string line; std::getline(lines, line);) {
    if (line.starts_with(prefix + " ")) return line;
  }
  return "";
}

ServiceSnapshot MakeSnapshot() {
  ServiceSnapshot s;
  s.station = "Skerry Sound mooring B";
  s.version = "0.1.0";
  s.started_wall_seconds = kTen - 100;
  s.warming_up = false;
  s.k = 2;
  s.counters.accepted = 50;
  s.counters.unclassified = 10;
  s.counters.rejected = 3;
  s.counters.rejected_by_reason[static_cast<std::size_t>(RejectReason::kNotANumber)] = 3;
  s.counters.samples = 1;
  s.counters.volume_ml = 5;
  s.files_done = 1;
  s.last_particle_seconds = kTen + 50;
  s.last_checkpoint_wall_seconds = kTen - 30;
  s.clusters = {{3, "diatom \"chains\"", 40, {}, 0.5, kTen - 3600, false},
                {4, "", 0, {}, 0.7, kTen - 3600, false}};
  s.alerts = {{"active", {{{"kind", "composition"}}, {{"kind", "novelty"}}}},
              {"recent", nlohmann::json::array()}};
  CountsOptions options;
  options.bin_seconds = 60;
  auto book = CountBook::Create(options);
  EXPECT_TRUE(book.ok());
  SampleTally sample;
  sample.sample_id = "S1";
  sample.first_seconds = kTen + 10;
  sample.last_seconds = kTen + 50;
  sample.volume_ml = 5;
  sample.by_cluster = {{3, 40}, {0, 10}};
  sample.by_bin[kTen] = {{{3, 40}, {0, 10}}, 0};
  EXPECT_TRUE(book->AddSample(sample).ok());
  s.counts = book->Snapshot();
  return s;
}

TEST(ServiceMetrics, WritesCountsConcentrationsAndRejectionsFromTheSnapshot) {
  ServiceSnapshot snapshot = MakeSnapshot();
  ServiceMetricsExtras extras;
  extras.wall_seconds = kTen;
  extras.inotify_overflows = 2;
  extras.resident_bytes = 12345678;
  std::string page = ServiceMetricsText(&snapshot, {}, extras);

  EXPECT_EQ(Line(page, "seston_build_info{version=\"0.1.0\"}"),
            "seston_build_info{version=\"0.1.0\"} 1");
  EXPECT_EQ(Line(page, "seston_particles_accepted_total"), "seston_particles_accepted_total 50");
  EXPECT_EQ(Line(page, "seston_particles_rejected_total{reason=\"not_a_number\"}"),
            "seston_particles_rejected_total{reason=\"not_a_number\"} 3");
  EXPECT_EQ(Line(page, "seston_particles_rejected_total{reason=\"field_count\"}"),
            "seston_particles_rejected_total{reason=\"field_count\"} 0");
  // 40 particles of cluster 3 in 5 mL: 8 per mL; cluster 4 none; 10 unclassified: 2 per mL.
  EXPECT_EQ(Line(page,
                 "seston_cluster_concentration_per_millilitre{cluster=\"3\",label=\"diatom "
                 "\\\"chains\\\"\"}"),
            "seston_cluster_concentration_per_millilitre{cluster=\"3\",label=\"diatom "
            "\\\"chains\\\"\"} 8");
  EXPECT_EQ(Line(page, "seston_cluster_concentration_per_millilitre{cluster=\"4\",label=\"\"}"),
            "seston_cluster_concentration_per_millilitre{cluster=\"4\",label=\"\"} 0");
  EXPECT_EQ(Line(page, "seston_unclassified_concentration_per_millilitre"),
            "seston_unclassified_concentration_per_millilitre 2");
  EXPECT_EQ(Line(page, "seston_unclassified_fraction"), "seston_unclassified_fraction 0.2");
  EXPECT_EQ(Line(page, "seston_cluster_particles_total{cluster=\"3\"}"),
            "seston_cluster_particles_total{cluster=\"3\"} 40");
  EXPECT_EQ(Line(page, "seston_alerts_active{kind=\"all\"}"),
            "seston_alerts_active{kind=\"all\"} 2");
  EXPECT_EQ(Line(page, "seston_alerts_active{kind=\"novelty\"}"),
            "seston_alerts_active{kind=\"novelty\"} 1");
  EXPECT_EQ(Line(page, "seston_checkpoint_age_seconds"), "seston_checkpoint_age_seconds 30");
  EXPECT_EQ(Line(page, "seston_last_particle_time_seconds"),
            "seston_last_particle_time_seconds 1780308050");
  EXPECT_EQ(Line(page, "seston_inotify_overflows_total"), "seston_inotify_overflows_total 2");
  EXPECT_EQ(Line(page, "process_resident_memory_bytes"), "process_resident_memory_bytes 12345678");
  EXPECT_EQ(page.find("seston metrics error"), std::string::npos) << page;
  EXPECT_EQ(page.find("seston_alertmanager"), std::string::npos) << "forwarding is off";
  EXPECT_NE(page.find("# TYPE seston_particles_rejected_total counter\n"), std::string::npos);
}

TEST(ServiceMetrics, WritesDetectorReadingsAndForwarding) {
  ServiceSnapshot snapshot = MakeSnapshot();
  DetectorReading reading;
  reading.kind = "composition";
  reading.level = DriftLevel::kAlarm;
  reading.statistic = 0.041;
  reading.threshold = 0.03;
  reading.statistic_name = "jensen_shannon_divergence_bits";
  ServiceMetricsExtras extras;
  AlertmanagerForwarder::Stats stats;
  stats.posts_ok = 4;
  stats.posts_failed = 1;
  stats.pending = 2;
  extras.forwarding = stats;
  extras.reloads_refused = 1;
  std::string page = ServiceMetricsText(&snapshot, {reading}, extras);
  EXPECT_EQ(Line(page,
                 "seston_detector_statistic{kind=\"composition\",statistic=\"jensen_shannon_"
                 "divergence_bits\"}"),
            "seston_detector_statistic{kind=\"composition\",statistic=\"jensen_shannon_"
            "divergence_bits\"} 0.041");
  EXPECT_EQ(Line(page, "seston_detector_level{kind=\"composition\"}"),
            "seston_detector_level{kind=\"composition\"} 2");
  EXPECT_EQ(Line(page, "seston_alertmanager_posts_total{result=\"failed\"}"),
            "seston_alertmanager_posts_total{result=\"failed\"} 1");
  EXPECT_EQ(Line(page, "seston_alertmanager_pending_alerts"),
            "seston_alertmanager_pending_alerts 2");
  EXPECT_EQ(Line(page, "seston_config_reloads_total{result=\"refused\"}"),
            "seston_config_reloads_total{result=\"refused\"} 1");
}

TEST(ServiceMetrics, WritesWhatItCanBeforeTheFirstSnapshot) {
  ServiceMetricsExtras extras;
  extras.backlog_files = 7;
  std::string page = ServiceMetricsText(nullptr, {}, extras);
  EXPECT_EQ(Line(page, "seston_backlog_files"), "seston_backlog_files 7");
  EXPECT_EQ(page.find("seston_particles_accepted_total"), std::string::npos);
}

TEST(ServiceMetrics, ReadsResidentPagesFromStatm) {
  // proc(5): statm fields are size resident shared text lib data dt, in pages.
  EXPECT_EQ(ResidentBytesFromStatm("10520 2961 2312 226 0 1234 0\n", 4096), 2961u * 4096u);
  EXPECT_FALSE(ResidentBytesFromStatm("", 4096).has_value());
  EXPECT_FALSE(ResidentBytesFromStatm("12 x", 4096).has_value());
  std::optional<std::uint64_t> own = ProcessResidentBytes();
  ASSERT_TRUE(own.has_value());
  EXPECT_GT(*own, 1u << 20) << "a running test binary holds more than 1 MiB";
}

}  // namespace
}  // namespace seston
