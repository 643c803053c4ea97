#include "drift/novelty_rate_detector.h"

#include <gtest/gtest.h>

#include <cmath>

namespace seston {
namespace {

// P(X >= k), X ~ Binomial(n, p), summed term by term from the definition
// C(n, i) pᶦ (1 − p)ⁿ⁻ᶦ (log-gamma for the binomial coefficient).
double UpperTailFromDefinition(int k, int n, double p) {
  double sum = 0;
  for (int i = k; i <= n; ++i) {
    sum += std::exp(std::lgamma(n + 1.0) - std::lgamma(i + 1.0) - std::lgamma(n - i + 1.0) +
                    i * std::log(p) + (n - i) * std::log1p(-p));
  }
  return sum;
}

NoveltyRateDetector MakeDetector(double baseline_rate) {
  auto detector = NoveltyRateDetector::Create({});
  EXPECT_TRUE(detector.ok());
  EXPECT_TRUE(detector->SetBaseline(baseline_rate).ok());
  return std::move(detector).value();
}

TEST(BinomialUpperTail, MatchesTheSumOfTerms) {
  // Worked by hand: Bin(100, 0.005), P(X >= 3) = 1 − (0.6058 + 0.3044 + 0.0757) = 0.0141.
  auto small = BinomialUpperTail(3, 100, 0.005);
  ASSERT_TRUE(small.ok());
  EXPECT_NEAR(*small, UpperTailFromDefinition(3, 100, 0.005), 1e-12);
  EXPECT_NEAR(*small, 0.0141, 1e-4);
  auto large = BinomialUpperTail(40, 5000, 0.005);
  ASSERT_TRUE(large.ok());
  EXPECT_NEAR(*large, UpperTailFromDefinition(40, 5000, 0.005), 1e-12);
  EXPECT_EQ(*BinomialUpperTail(0, 10, 0.3), 1.0);
}

// Baseline 0.5 % unclassified. 125 of 5000 is 2.5 %, 5 times the baseline (>= alarm
// ratio 4); 25 expected, so P(X >= 125) is astronomically small (< alpha = 0.001).
TEST(NoveltyRateDetector, FiveTimesTheBaselineOnManyParticlesAlarms) {
  NoveltyRateDetector detector = MakeDetector(0.005);
  ASSERT_LT(UpperTailFromDefinition(125, 5000, 0.005), 1e-30);
  auto reading = detector.Evaluate(125, 5000);
  ASSERT_TRUE(reading.ok()) << reading.status().ToString();
  EXPECT_EQ(reading->kind, "novelty");
  EXPECT_EQ(reading->level, DriftLevel::kAlarm);
  EXPECT_NEAR(reading->statistic, 5.0, 1e-12);  // 0.025 / 0.005
  EXPECT_EQ(reading->threshold, 4.0);
  EXPECT_NE(reading->what_changed.find("125 of 5000 (2.50 %)"), std::string::npos)
      << reading->what_changed;
  EXPECT_NE(reading->what_to_check.find(kScreeningAidCaution), std::string::npos);
}

TEST(NoveltyRateDetector, BaselineRateReadsOk) {
  NoveltyRateDetector detector = MakeDetector(0.005);
  auto reading = detector.Evaluate(25, 5000);  // exactly 0.5 %
  ASSERT_TRUE(reading.ok());
  EXPECT_EQ(reading->level, DriftLevel::kOk);
  EXPECT_NEAR(reading->statistic, 1.0, 1e-12);
}

TEST(NoveltyRateDetector, HighRatioOnFewParticlesIsNotSignificant) {
  // 3 of 100 is 6 times the baseline, but P(X >= 3) = 0.0141 > alpha = 0.001 (above).
  NoveltyRateDetector detector = MakeDetector(0.005);
  auto reading = detector.Evaluate(3, 100);
  ASSERT_TRUE(reading.ok());
  EXPECT_NEAR(reading->statistic, 6.0, 1e-12);
  EXPECT_EQ(reading->level, DriftLevel::kOk);
}

TEST(NoveltyRateDetector, ModerateRiseWarns) {
  // 75 of 5000 = 1.5 %, 3 times the baseline: between warn (2) and alarm (4) ratios;
  // 25 expected, P(X >= 75) from the definition is far below 0.001.
  ASSERT_LT(UpperTailFromDefinition(75, 5000, 0.005), 1e-10);
  NoveltyRateDetector detector = MakeDetector(0.005);
  auto reading = detector.Evaluate(75, 5000);
  ASSERT_TRUE(reading.ok());
  EXPECT_EQ(reading->level, DriftLevel::kWarn);
}

TEST(NoveltyRateDetector, SpotlessBaselineIsRaisedToTheMinimumRate) {
  // Baseline 0 is tested as min_baseline_rate = 0.001: 2 of 1000 is a ratio of 2, not
  // infinity, and P(X >= 2 | 1000, 0.001) = 0.264 is not significant.
  NoveltyRateDetector detector = MakeDetector(0.0);
  EXPECT_EQ(detector.tested_rate(), 0.001);
  auto reading = detector.Evaluate(2, 1000);
  ASSERT_TRUE(reading.ok());
  EXPECT_NEAR(reading->statistic, 2.0, 1e-12);
  EXPECT_EQ(reading->level, DriftLevel::kOk);
}

TEST(NoveltyRateDetector, RefusesImpossibleCountsAndMissingBaseline) {
  auto detector = NoveltyRateDetector::Create({});
  ASSERT_TRUE(detector.ok());
  EXPECT_EQ(detector->Evaluate(1, 10).status().code(), StatusCode::kFailedPrecondition);
  EXPECT_EQ(detector->SetBaseline(1.5).code(), StatusCode::kInvalidArgument);
  ASSERT_TRUE(detector->SetBaseline(0.01).ok());
  EXPECT_EQ(detector->Evaluate(11, 10).status().code(), StatusCode::kInvalidArgument);
  auto nothing = detector->Evaluate(0, 0);
  ASSERT_TRUE(nothing.ok());
  EXPECT_EQ(nothing->level, DriftLevel::kOk);
}

TEST(NoveltyRateDetector, StateRoundTripsExactly) {
  NoveltyRateDetector detector = MakeDetector(1.0 / 300.0);
  const nlohmann::json state = detector.ToJson();
  auto restored = NoveltyRateDetector::FromJson(nlohmann::json::parse(state.dump()), {});
  ASSERT_TRUE(restored.ok());
  EXPECT_EQ(restored->baseline_rate(), 1.0 / 300.0);
  EXPECT_EQ(restored->ToJson(), state);
  auto empty = NoveltyRateDetector::Create({});
  ASSERT_TRUE(empty.ok());
  auto restored_empty = NoveltyRateDetector::FromJson(empty->ToJson(), {});
  ASSERT_TRUE(restored_empty.ok());
  EXPECT_FALSE(restored_empty->has_baseline());
}

}  // namespace
}  // namespace seston
