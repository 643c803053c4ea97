#include "drift/fit_detector.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

FitOptions ReferenceOptions() {
  FitOptions options;
  options.delta = 0.005;
  options.lambda = 5;
  options.alpha = 1;
  options.min_particles = 30;
  return options;
}

// The Page–Hinkley reference stream (shared reference README): 50 distances of 0 then
// ones, δ = 0.005, λ = 5, so warn above λ/2 = 2.5. Statistic 0.975 at n = 51 and 1.932 at
// 52 (ok), 2.870 at 53 and 4.695 at 55 (warn), 5.583 at 56 (alarm).
TEST(FitDetector, WarnsAboveHalfLambdaAndAlarmsAboveLambda) {
  auto detector = FitDetector::Create(ReferenceOptions());
  ASSERT_TRUE(detector.ok());
  for (int t = 1; t <= 51; ++t) detector->Add(t <= 50 ? 0.0 : 1.0);
  DetectorReading reading = detector->Evaluate();
  EXPECT_EQ(reading.kind, "fit");
  EXPECT_EQ(reading.level, DriftLevel::kOk);  // 0.975 <= 2.5
  detector->Add(1.0);                         // t = 52: 1.932, still <= 2.5
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kOk);
  detector->Add(1.0);  // t = 53: 2.870 > 2.5
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kWarn);
  detector->Add(1.0);
  detector->Add(1.0);  // t = 55: 4.695
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kWarn);
  detector->Add(1.0);  // t = 56: 5.583 > 5
  reading = detector->Evaluate();
  EXPECT_EQ(reading.level, DriftLevel::kAlarm);
  EXPECT_NEAR(reading.statistic, 5.583201, 1e-6);
  EXPECT_EQ(reading.threshold, 5);
  EXPECT_NE(reading.what_changed.find("fit their groups worse than at baseline"),
            std::string::npos);
  EXPECT_NE(reading.what_to_check.find("new kind of particle"), std::string::npos);
  EXPECT_NE(reading.what_to_check.find("instrument"), std::string::npos);
  detector->Reset();
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kOk);
}

TEST(FitDetector, TooFewParticlesReadOk) {
  FitOptions options = ReferenceOptions();
  options.lambda = 0.5;
  auto detector = FitDetector::Create(options);
  ASSERT_TRUE(detector.ok());
  for (int t = 1; t <= 29; ++t) detector->Add(t <= 5 ? 0.0 : 3.0);
  EXPECT_GT(detector->Evaluate().statistic, 0.5);
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kOk);
  detector->Add(3.0);
  EXPECT_EQ(detector->Evaluate().level, DriftLevel::kAlarm);
}

TEST(FitDetector, StateRoundTripsExactly) {
  auto detector = FitDetector::Create(ReferenceOptions());
  ASSERT_TRUE(detector.ok());
  for (int t = 1; t <= 77; ++t) detector->Add(0.1 * t);
  const nlohmann::json state = detector->ToJson();
  auto restored = FitDetector::FromJson(nlohmann::json::parse(state.dump()), ReferenceOptions());
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(restored->ToJson(), state);
  EXPECT_EQ(restored->Evaluate().statistic, detector->Evaluate().statistic);
  EXPECT_EQ(FitDetector::FromJson(nlohmann::json::object(), ReferenceOptions()).status().code(),
            StatusCode::kCorruption);
}

}  // namespace
}  // namespace seston
