#include "drift/composition_detector.h"

#include <gtest/gtest.h>

#include <cmath>

namespace seston {
namespace {

// Jensen–Shannon divergence in bits written out from its definition, for the checks
// below: JSD = ½ Σ p ln2(p/m) + ½ Σ q ln2(q/m), m = (p + q)/2, shares normalised.
double JsdFromDefinition(std::vector<double> p, std::vector<double> q) {
  double p_total = 0, q_total = 0;
  for (double v : p) p_total += v;
  for (double v : q) q_total += v;
  double sum = 0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    const double a = p[i] / p_total, b = q[i] / q_total, m = (a + b) / 2;
    if (a > 0) sum += 0.5 * a * std::log2(a / m);
    if (b > 0) sum += 0.5 * b * std::log2(b / m);
  }
  return sum;
}

CompositionDetector MakeDetector(std::map<std::uint32_t, double> baseline,
                                 CompositionOptions options = {}) {
  auto detector = CompositionDetector::Create(options);
  EXPECT_TRUE(detector.ok());
  EXPECT_TRUE(detector->SetBaseline(std::move(baseline)).ok());
  return std::move(detector).value();
}

// Shared reference README: [400,300,200,100] vs [300,300,250,150] gives G = 29.969507,
// p = 1.4006e-6 — far below alpha = 0.001 — yet the shares barely moved:
// JSD = 0.0108 bits (from the definition above), under alarm_jsd = 0.03. The detector
// must not alarm; with warn_jsd = 0.01 it warns.
TEST(CompositionDetector, TinyPValueWithSmallEffectDoesNotAlarm) {
  const double jsd = JsdFromDefinition({400, 300, 200, 100}, {300, 300, 250, 150});
  ASSERT_NEAR(jsd, 0.0108092, 1e-6);
  CompositionDetector detector = MakeDetector({{1, 400}, {2, 300}, {3, 200}, {4, 100}});
  auto reading = detector.Evaluate({{1, 300}, {2, 300}, {3, 250}, {4, 150}});
  ASSERT_TRUE(reading.ok()) << reading.status().ToString();
  EXPECT_EQ(reading->kind, "composition");
  EXPECT_NE(reading->level, DriftLevel::kAlarm);
  EXPECT_EQ(reading->level, DriftLevel::kWarn);
  EXPECT_NEAR(reading->statistic, jsd, 1e-12);
  EXPECT_EQ(reading->threshold, 0.03);
  EXPECT_NE(reading->what_changed.find("G = 29.97"), std::string::npos) << reading->what_changed;
  EXPECT_NE(reading->what_changed.find("p = 1.4e-06"), std::string::npos) << reading->what_changed;
}

// A strong change on the same baseline: [400,300,200,100] -> [100,150,250,500],
// JSD = 0.1949 bits from the definition, and p is tiny: alarm. Cluster 4 moved most
// (10 % -> 50 %, 5 times), then cluster 1 (40 % -> 10 %, to 0.25 times).
TEST(CompositionDetector, StrongChangeAlarmsAndNamesTheClustersThatMovedMost) {
  const double jsd = JsdFromDefinition({400, 300, 200, 100}, {100, 150, 250, 500});
  ASSERT_NEAR(jsd, 0.1949026, 1e-6);
  CompositionDetector detector = MakeDetector({{1, 400}, {2, 300}, {3, 200}, {4, 100}});
  auto reading = detector.Evaluate({{1, 100}, {2, 150}, {3, 250}, {4, 500}});
  ASSERT_TRUE(reading.ok());
  EXPECT_EQ(reading->level, DriftLevel::kAlarm);
  EXPECT_NEAR(reading->statistic, jsd, 1e-12);
  ASSERT_GE(reading->clusters.size(), 2u);
  EXPECT_EQ(reading->clusters[0], 4u);
  EXPECT_EQ(reading->clusters[1], 1u);
  const std::string& text = reading->what_changed;
  EXPECT_NE(text.find("cluster 4 rose 5.00 times (10.0 % at baseline, 50.0 % now)"),
            std::string::npos)
      << text;
  EXPECT_NE(text.find("cluster 1 fell to 0.25 times (40.0 % at baseline, 10.0 % now)"),
            std::string::npos)
      << text;
  EXPECT_NE(reading->what_to_check.find(kScreeningAidCaution), std::string::npos);
}

TEST(CompositionDetector, SameSharesOnAHugeSampleReadOk) {
  CompositionDetector detector = MakeDetector({{1, 400}, {2, 300}, {3, 200}, {4, 100}});
  auto reading = detector.Evaluate({{1, 40000}, {2, 30000}, {3, 20000}, {4, 10000}});
  ASSERT_TRUE(reading.ok());
  EXPECT_EQ(reading->level, DriftLevel::kOk);
  EXPECT_NEAR(reading->statistic, 0.0, 1e-12);
}

TEST(CompositionDetector, ClusterMissingFromTheBaselineCountsAsNewcomer) {
  // Baseline {1: 500, 2: 500}; recent {1: 250, 2: 250, 9: 500}: cluster 9 went from
  // 0 % to 50 %. JSD from the definition on (0.5, 0.5, 0) vs (0.25, 0.25, 0.5).
  CompositionDetector detector = MakeDetector({{1, 500}, {2, 500}});
  auto reading = detector.Evaluate({{1, 250}, {2, 250}, {9, 500}});
  ASSERT_TRUE(reading.ok());
  EXPECT_NEAR(reading->statistic, JsdFromDefinition({500, 500, 0}, {250, 250, 500}), 1e-12);
  EXPECT_EQ(reading->level, DriftLevel::kAlarm);
  ASSERT_FALSE(reading->clusters.empty());
  EXPECT_EQ(reading->clusters[0], 9u);
  EXPECT_NE(reading->what_changed.find("cluster 9 appeared (0.0 % at baseline, 50.0 % now)"),
            std::string::npos)
      << reading->what_changed;
}

TEST(CompositionDetector, NeedsABaselineAndValidCounts) {
  auto detector = CompositionDetector::Create({});
  ASSERT_TRUE(detector.ok());
  EXPECT_EQ(detector->Evaluate({{1, 5}}).status().code(), StatusCode::kFailedPrecondition);
  EXPECT_EQ(detector->SetBaseline({{1, 0}}).code(), StatusCode::kInvalidArgument);
  ASSERT_TRUE(detector->SetBaseline({{1, 5}}).ok());
  EXPECT_EQ(detector->Evaluate({{1, -1}}).status().code(), StatusCode::kInvalidArgument);
  auto empty = detector->Evaluate({});
  ASSERT_TRUE(empty.ok());
  EXPECT_EQ(empty->level, DriftLevel::kOk);
}

TEST(CompositionDetector, RefusesThresholdsOutOfOrder) {
  CompositionOptions options;
  options.warn_jsd = 0.5;
  options.alarm_jsd = 0.1;
  EXPECT_EQ(CompositionDetector::Create(options).status().code(), StatusCode::kInvalidArgument);
  options = {};
  options.alpha = 0;
  EXPECT_EQ(CompositionDetector::Create(options).status().code(), StatusCode::kInvalidArgument);
}

TEST(CompositionDetector, StateRoundTripsExactlyThroughText) {
  CompositionDetector detector = MakeDetector({{3, 0.1 + 0.2}, {7, 1.0 / 3.0}, {11, 1e-300}});
  const nlohmann::json state = detector.ToJson();
  auto restored = CompositionDetector::FromJson(nlohmann::json::parse(state.dump()), {});
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(restored->baseline(), detector.baseline());
  EXPECT_EQ(restored->ToJson(), state);
  EXPECT_EQ(CompositionDetector::FromJson({{"baseline", {{1}}}}, {}).status().code(),
            StatusCode::kCorruption);
  EXPECT_EQ(CompositionDetector::FromJson({{"nothing", 1}}, {}).status().code(),
            StatusCode::kCorruption);
}

}  // namespace
}  // namespace seston
