#include "drift/flow_detector.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

FlowOptions SmallOptions() {
  FlowOptions options;
  options.baseline_samples = 4;
  options.window_samples = 3;
  return options;  // warn at 0.85, alarm at 0.7
}

TEST(Median, OddAndEvenCounts) {
  // Hand-computed: sorted (1, 2, 9) -> 2; sorted (1, 2, 4, 9) -> (2 + 4) / 2 = 3.
  EXPECT_EQ(*Median({9, 1, 2}), 2.0);
  EXPECT_EQ(*Median({9, 4, 1, 2}), 3.0);
  EXPECT_FALSE(Median({}).has_value());
}

TEST(FlowDetector, RefusesRatiosOutOfOrder) {
  FlowOptions options;
  options.alarm_ratio = 0.9;
  options.warn_ratio = 0.8;
  EXPECT_FALSE(FlowDetector::Create(options).ok());
  options = FlowOptions{};
  options.window_samples = 0;
  EXPECT_FALSE(FlowDetector::Create(options).ok());
}

TEST(FlowDetector, BaselineIsTheMedianOfTheFirstSamples) {
  auto detector = FlowDetector::Create(SmallOptions());
  ASSERT_TRUE(detector.ok());
  for (double volume : {5.0, 5.2, 4.9}) detector->Add(volume);
  EXPECT_FALSE(detector->has_baseline());
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kOk);
  detector->Add(5.1);
  ASSERT_TRUE(detector->has_baseline());
  // Sorted 4.9, 5.0, 5.1, 5.2: median (5.0 + 5.1) / 2 = 5.05 mL.
  EXPECT_DOUBLE_EQ(*detector->baseline_ml(), 5.05);
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kOk);
}

TEST(FlowDetector, AlarmsWhenTheMedianVolumeFallsBelowSeventyPercent) {
  auto detector = FlowDetector::Create(SmallOptions());
  ASSERT_TRUE(detector.ok());
  for (int i = 0; i < 4; ++i) detector->Add(5.0);
  // One short sample does not move the median of three: (5.0, 5.0, 2.0) -> 5.0.
  detector->Add(2.0);
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kOk);
  // (5.0, 2.0, 4.0) -> 4.0 mL, 80 % of 5.0: between 0.7 and 0.85, a warning.
  detector->Add(4.0);
  DetectorReading warn = detector->Evaluate();
  EXPECT_EQ(warn.level, DriftLevel::kWarn);
  EXPECT_DOUBLE_EQ(warn.statistic, 0.8);
  // (2.0, 4.0, 3.0) -> 3.0 mL, 60 %: alarm.
  detector->Add(3.0);
  DetectorReading alarm = detector->Evaluate();
  EXPECT_EQ(alarm.level, DriftLevel::kAlarm);
  EXPECT_EQ(alarm.kind, "flow");
  EXPECT_DOUBLE_EQ(alarm.statistic, 0.6);
  EXPECT_DOUBLE_EQ(alarm.threshold, 0.7);
  EXPECT_NE(alarm.what_changed.find("60.0 %"), std::string::npos) << alarm.what_changed;
  EXPECT_FALSE(alarm.what_to_check.empty());
}

TEST(FlowDetector, AlarmsOnARiseBeyondTheInverseRatio) {
  auto detector = FlowDetector::Create(SmallOptions());
  ASSERT_TRUE(detector.ok());
  for (int i = 0; i < 4; ++i) detector->Add(5.0);
  for (int i = 0; i < 3; ++i) detector->Add(7.5);  // 150 % >= 1 / 0.7 = 142.9 %
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kAlarm);
}

TEST(FlowDetector, AcceptingTheRecentVolumeClearsTheAlarm) {
  auto detector = FlowDetector::Create(SmallOptions());
  ASSERT_TRUE(detector.ok());
  for (int i = 0; i < 4; ++i) detector->Add(5.0);
  for (int i = 0; i < 3; ++i) detector->Add(2.0);
  ASSERT_EQ(detector->Evaluate().level, DriftLevel::kAlarm);
  ASSERT_TRUE(detector->AcceptRecentAsBaseline().ok());
  EXPECT_DOUBLE_EQ(*detector->baseline_ml(), 2.0);
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kOk);
  detector->RestartBaseline();
  EXPECT_FALSE(detector->has_baseline());
  EXPECT_FALSE(detector->AcceptRecentAsBaseline().ok());
}

TEST(FlowDetector, IgnoresVolumesThatAreNotPositive) {
  auto detector = FlowDetector::Create(SmallOptions());
  ASSERT_TRUE(detector.ok());
  for (double volume : {5.0, 0.0, -1.0, 5.0, 5.0}) detector->Add(volume);
  EXPECT_FALSE(detector->has_baseline());  // three valid volumes of the four needed
}

TEST(FlowDetector, JsonRoundTripContinuesIdentically) {
  auto detector = FlowDetector::Create(SmallOptions());
  ASSERT_TRUE(detector.ok());
  for (double volume : {5.0, 5.1, 4.9, 5.3, 4.2, 3.9}) detector->Add(volume);
  auto restored = FlowDetector::FromJson(detector->ToJson(), SmallOptions());
  ASSERT_TRUE(restored.ok());
  EXPECT_EQ(restored->ToJson(), detector->ToJson());
  detector->Add(3.0);
  restored->Add(3.0);
  EXPECT_EQ(restored->Evaluate().statistic, detector->Evaluate().statistic);
  EXPECT_EQ(restored->Evaluate().level, detector->Evaluate().level);
}

}  // namespace
}  // namespace seston
