// The ring of recent particles, on its own and as the pipeline fills it, and the live part
// of a reload (Pipeline::ApplyLiveConfig).
#include "pipeline/recent_particles.h"

#include <gtest/gtest.h>

#include <string>

#include "base/file_system.h"
#include "config/config_loader.h"
#include "pipeline/pipeline.h"
#include "support/test_paths.h"

namespace seston {
namespace {

TEST(RecentParticles, KeepsTheNewestOldestFirst) {
  RecentParticles ring({"area_um2", "aspect_ratio"}, 3);
  EXPECT_TRUE(ring.Latest(10).particles.empty());
  for (int i = 1; i <= 5; ++i) {
    const double values[] = {100.0 * i, 0.1 * i};
    ring.Add(1000.0 + i, static_cast<std::uint32_t>(i), values);
  }
  EXPECT_EQ(ring.size(), 3u);
  RecentParticlesView all = ring.Latest(10);
  EXPECT_EQ(all.columns, (std::vector<std::string>{"area_um2", "aspect_ratio"}));
  ASSERT_EQ(all.particles.size(), 3u);
  EXPECT_EQ(all.particles[0].time_seconds, 1003.0);
  EXPECT_EQ(all.particles[2].cluster, 5u);
  EXPECT_EQ(all.particles[2].values, (std::vector<double>{500.0, 0.5}));
  RecentParticlesView two = ring.Latest(2);
  ASSERT_EQ(two.particles.size(), 2u);
  EXPECT_EQ(two.particles[0].time_seconds, 1004.0);
  EXPECT_EQ(two.particles[1].time_seconds, 1005.0);
}

class PipelineLiveTest : public ::testing::Test {
 protected:
  std::string Yaml(const std::string& extra, const std::string& alerts) {
    return "features:\n  - { column: area_um2, transform: log10 }\n  - { column: aspect_ratio }\n"
           "model: { k: 2, warmup_particles: 20, restarts: 2 }\n"
           "counts: { output_dir: " +
           (scratch.path() / "counts").string() +
           " }\n"
           "alerts: { " +
           alerts + "dir: " + (scratch.path() / "alerts").string() + " }\n" + extra;
  }
  Config Parse(const std::string& extra, const std::string& alerts = "") {
    Result<Config> config = ParseConfig(Yaml(extra, alerts), (scratch.path() / "s.yaml").string());
    EXPECT_TRUE(config.ok()) << config.status().message();
    return config.ok() ? *config : Config{};
  }
  // 20 particles in two groups, one minute apart from 2026-06-01T00:00:00Z + 20 min x
  // `first`.
  static std::string Csv(int first) {
    std::string csv = "time,sample,volume_ml,area_um2,aspect_ratio\n";
    for (int i = first; i < first + 20; ++i) {
      const bool big = i % 2 == 1;
      csv += std::to_string(1780272000 + 60 * i) + ",s1,5," + (big ? "4000" : "40") + "." +
             std::to_string(i) + "," + (big ? "0.3" : "0.9") + "\n";
    }
    return csv;
  }
  testing::ScratchDirectory scratch;
};

TEST_F(PipelineLiveTest, RingHoldsParticlesClassifiedAfterWarmUpInInputUnits) {
  PosixFileSystem fs;
  auto pipeline = Pipeline::Create(Parse(""), fs);
  ASSERT_TRUE(pipeline.ok()) << pipeline.status().message();
  ASSERT_TRUE((*pipeline)->ProcessFile("a.csv", Csv(0), nullptr).ok());
  ASSERT_TRUE((*pipeline)->ProcessFile("b.csv", Csv(20), nullptr).ok());
  RecentParticlesView recent = (*pipeline)->recent_particles().Latest(100);
  EXPECT_EQ(recent.columns, (std::vector<std::string>{"area_um2", "aspect_ratio"}));
  // The first file's 20 were warm-up particles (not shown); the second's were classified.
  ASSERT_EQ(recent.particles.size(), 20u);
  EXPECT_EQ(recent.particles.back().time_seconds, 1780272000.0 + 60 * 39);
  EXPECT_EQ(recent.particles.back().values, (std::vector<double>{4000.39, 0.3}));  // not log10
  EXPECT_NE(recent.particles.back().cluster, recent.particles[recent.particles.size() - 2].cluster);
}

TEST_F(PipelineLiveTest, AppliesThresholdsAndLimitsAndKeepsTheRest) {
  PosixFileSystem fs;
  auto pipeline = Pipeline::Create(Parse(""), fs);
  ASSERT_TRUE(pipeline.ok());
  ASSERT_TRUE((*pipeline)->ProcessFile("a.csv", Csv(0), nullptr).ok());
  ASSERT_TRUE((*pipeline)->ProcessFile("b.csv", Csv(20), nullptr).ok());
  Config changed = Parse(
      "drift: { fit: { lambda: 80 }, enabled: false }\ninput: { max_bad_row_fraction: 0.1 }\n"
      "logging: { level: debug }\n",
      "raise_after: 7, ");
  ASSERT_TRUE((*pipeline)->ApplyLiveConfig(changed).ok());
  const Config& now = (*pipeline)->config();
  EXPECT_EQ(now.drift.fit.lambda, 80.0);
  EXPECT_TRUE(now.drift.enabled) << "drift.enabled waits for a restart";
  EXPECT_EQ(now.alerts.raise_after, 7);
  EXPECT_EQ(now.input.max_bad_row_fraction, 0.1);
  EXPECT_EQ(now.logging.level, "debug");
  // The new row limit is in force: a file with 1 bad row in 5 is now over the limit.
  std::string bad = "time,sample,volume_ml,area_um2,aspect_ratio\n";
  for (int i = 0; i < 4; ++i) bad += std::to_string(1780275000 + i) + ",s2,5,40,0.9\n";
  bad += "1780275010,s2,5,not-a-number,0.9\n";
  EXPECT_FALSE((*pipeline)->ProcessFile("c.csv", bad, nullptr).ok());
  EXPECT_EQ((*pipeline)->counters().accepted, 40u) << "the model and counts carried on";
}

}  // namespace
}  // namespace seston
