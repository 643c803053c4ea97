#include "drift/page_hinkley.h"

#include <gtest/gtest.h>

#include <limits>

namespace seston {
namespace {

PageHinkley MakeTest(double delta, double lambda, double alpha, std::size_t min_n) {
  auto test = PageHinkley::Create({delta, lambda, alpha, min_n});
  EXPECT_TRUE(test.ok());
  return std::move(test).value();
}

// Shared reference README (Page 1954; recomputed in pure Python): 50 zeros then 50 ones,
// δ = 0.005, λ = 5, α = 1, min_n = 30.
//   t = 1..50: x̄ = 0, Uₜ = −0.005·t, so U₅₀ = −0.25 = m and the statistic stays 0.
//   t = 51: x̄ = 1/51 = 0.0196078, U = −0.25 + (1 − 0.0196078 − 0.005) = 0.7253922,
//           statistic = 0.7253922 + 0.25 = 0.9753922.
//   t = 52: x̄ = 2/52 = 0.0384615, U = 0.7253922 + 0.9565385 = 1.6819306, stat 1.9319306.
//   t = 53: x̄ = 3/53 = 0.0566038, U = 1.6819306 + 0.9383962 = 2.6203268, stat 2.8703268.
//   ...
//   t = 55: statistic 4.695344 (no alarm, ≤ 5); t = 56: 5.583201, the first alarm.
TEST(PageHinkley, StepFromZeroToOneAlarmsFirstAtTheFiftySixthValue) {
  PageHinkley test = MakeTest(0.005, 5, 1, 30);
  int first_alarm = 0;
  for (int t = 1; t <= 100; ++t) {
    const bool alarm = test.Add(t <= 50 ? 0.0 : 1.0);
    if (t == 1) {
      EXPECT_NEAR(test.statistic(), 0.0, 1e-15);
    }
    if (t == 50) {
      EXPECT_NEAR(test.statistic(), 0.0, 1e-12);
    }
    if (t == 51) {
      EXPECT_NEAR(test.mean(), 1.0 / 51, 1e-15);
      EXPECT_NEAR(test.statistic(), 0.9753922, 1e-7);
    }
    if (t == 52) {
      EXPECT_NEAR(test.statistic(), 1.9319306, 1e-7);
    }
    if (t == 53) {
      EXPECT_NEAR(test.statistic(), 2.8703268, 1e-7);
    }
    if (t == 55) {
      EXPECT_NEAR(test.statistic(), 4.695344, 1e-6);
      EXPECT_FALSE(alarm);
    }
    if (t == 56) {
      EXPECT_NEAR(test.statistic(), 5.583201, 1e-6);
    }
    if (alarm && first_alarm == 0) first_alarm = t;
  }
  EXPECT_EQ(first_alarm, 56);
  EXPECT_EQ(test.n(), 100u);
}

TEST(PageHinkley, NoAlarmBeforeMinimumCount) {
  // A jump at the very start: 5 zeros then ones. Statistic passes λ = 2 quickly, but
  // min_n = 30 holds the alarm back until the 30th value.
  PageHinkley test = MakeTest(0.005, 2, 1, 30);
  int first_alarm = 0;
  for (int t = 1; t <= 40 && first_alarm == 0; ++t) {
    if (test.Add(t <= 5 ? 0.0 : 1.0)) first_alarm = t;
    if (t == 10) {
      EXPECT_GT(test.statistic(), 2.0);
    }
  }
  EXPECT_EQ(first_alarm, 30);
}

TEST(PageHinkley, ConstantStreamNeverAlarms) {
  PageHinkley test = MakeTest(0.005, 5, 1, 30);
  for (int t = 0; t < 10000; ++t) EXPECT_FALSE(test.Add(1.25));
  // x − x̄ − δ = −δ every step: U falls, m follows it, statistic 0.
  EXPECT_NEAR(test.statistic(), 0.0, 1e-9);
}

TEST(PageHinkley, ResetForgetsEverything) {
  PageHinkley test = MakeTest(0.005, 5, 1, 30);
  for (int t = 1; t <= 60; ++t) test.Add(t <= 50 ? 0.0 : 1.0);
  ASSERT_TRUE(test.alarm());
  test.Reset();
  EXPECT_EQ(test.n(), 0u);
  EXPECT_EQ(test.statistic(), 0.0);
  EXPECT_FALSE(test.alarm());
}

TEST(PageHinkley, IgnoresNonFiniteValues) {
  PageHinkley test = MakeTest(0.005, 5, 1, 30);
  test.Add(1.0);
  test.Add(std::numeric_limits<double>::quiet_NaN());
  test.Add(std::numeric_limits<double>::infinity());
  EXPECT_EQ(test.n(), 1u);
  EXPECT_EQ(test.mean(), 1.0);
}

TEST(PageHinkley, RefusesBadParameters) {
  EXPECT_FALSE(PageHinkley::Create({-1, 5, 1, 30}).ok());
  EXPECT_FALSE(PageHinkley::Create({0.005, 0, 1, 30}).ok());
  EXPECT_FALSE(PageHinkley::Create({0.005, 5, 0, 30}).ok());
  EXPECT_FALSE(PageHinkley::Create({0.005, 5, 1.5, 30}).ok());
}

TEST(PageHinkley, StateRoundTripsExactlyAndContinuesIdentically) {
  PageHinkley original = MakeTest(0.005, 5, 0.99, 30);
  for (int t = 1; t <= 53; ++t) original.Add(t <= 50 ? 0.1 * t : 1.0 / 3.0);
  const nlohmann::json state = original.ToJson();
  auto restored = PageHinkley::FromJson(nlohmann::json::parse(state.dump()), {0.005, 5, 0.99, 30});
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(restored->ToJson(), state);
  for (int t = 0; t < 20; ++t) {
    original.Add(2.0 + t);
    restored->Add(2.0 + t);
  }
  EXPECT_EQ(restored->statistic(), original.statistic());
  EXPECT_EQ(PageHinkley::FromJson({{"n", 3}}, {}).status().code(), StatusCode::kCorruption);
}

}  // namespace
}  // namespace seston
