#include "drift/centre_drift_detector.h"

#include <gtest/gtest.h>

#include <cmath>

namespace seston {
namespace {

// Five clusters in three z-scored features, each with a spread of 0.5 z units.
std::vector<ClusterRef> Baseline() {
  return {{1, {0, 0, 0}, 0.5},
          {2, {2, 0, 0}, 0.5},
          {3, {0, 2, 0}, 0.5},
          {4, {0, 0, 2}, 0.5},
          {5, {2, 2, 2}, 0.5}};
}

std::vector<ClusterRef> Shifted(std::vector<ClusterRef> clusters, std::vector<double> shift) {
  for (ClusterRef& cluster : clusters) {
    for (std::size_t i = 0; i < shift.size(); ++i) cluster.centre[i] += shift[i];
  }
  return clusters;
}

CentreDriftDetector MakeDetector() {
  auto detector = CentreDriftDetector::Create({});
  EXPECT_TRUE(detector.ok());
  EXPECT_TRUE(detector->SetBaseline(Baseline()).ok());
  return std::move(detector).value();
}

TEST(CentreDriftDetector, DisplacementIsMeasuredInTheClustersOwnSpread) {
  CentreDriftDetector detector = MakeDetector();
  std::vector<ClusterRef> current = Baseline();
  current[1].centre = {2.3, 0.4, 0};  // moved (0.3, 0.4, 0): 0.5 z units = 1 spread
  auto displacements = detector.Displacements(current);
  ASSERT_TRUE(displacements.ok());
  ASSERT_EQ(displacements->size(), 5u);
  const CentreDisplacement& moved = (*displacements)[1];
  EXPECT_EQ(moved.id, 2u);
  EXPECT_NEAR(moved.displacement[0], 0.3, 1e-12);
  EXPECT_NEAR(moved.displacement[1], 0.4, 1e-12);
  EXPECT_NEAR(moved.distance, 0.5, 1e-12);  // sqrt(0.09 + 0.16)
  EXPECT_NEAR(moved.spreads, 1.0, 1e-12);   // 0.5 z units / 0.5 z units
  EXPECT_EQ((*displacements)[0].spreads, 0.0);
}

// Every centre moved by (0.55, 0.1, 0) plus a little of its own: length ≈ 0.56 z units
// ≈ 1.1 spreads, all pointing the same way (pairwise cosines near 1): the instrument.
TEST(CentreDriftDetector, AllCentresShiftedTheSameWayIsInstrumentDrift) {
  CentreDriftDetector detector = MakeDetector();
  std::vector<ClusterRef> current = Shifted(Baseline(), {0.55, 0.1, 0});
  current[2].centre[2] += 0.05;
  current[4].centre[1] -= 0.05;
  auto evaluation = detector.Evaluate(current);
  ASSERT_TRUE(evaluation.ok()) << evaluation.status().ToString();
  const DetectorReading& instrument = evaluation->instrument_drift;
  EXPECT_EQ(instrument.kind, "instrument_drift");
  EXPECT_EQ(instrument.level, DriftLevel::kAlarm);
  EXPECT_EQ(instrument.clusters.size(), 5u);
  // ceil(0.6 · 5) = 3 clusters needed: the statistic is the third largest displacement.
  // Clusters 1, 2, 4 moved (0.55, 0.1, 0): sqrt(0.3125)/0.5 = 1.118034 spreads; cluster 3
  // moved a little more (sqrt(0.315)/0.5), cluster 5 a little less (sqrt(0.305)/0.5), so
  // the third largest is 1.118034.
  EXPECT_NEAR(instrument.statistic, std::sqrt(0.3125) / 0.5, 1e-9);
  EXPECT_NE(instrument.what_to_check.find("focus"), std::string::npos);
  EXPECT_NE(instrument.what_to_check.find("calibration"), std::string::npos);
  EXPECT_NE(instrument.what_to_check.find("flow cell"), std::string::npos);
  EXPECT_EQ(evaluation->centre_drift.kind, "centre_drift");
  EXPECT_EQ(evaluation->centre_drift.level, DriftLevel::kOk);
}

TEST(CentreDriftDetector, OneCentreMovedIsCentreDriftOfThatCluster) {
  CentreDriftDetector detector = MakeDetector();
  std::vector<ClusterRef> current = Baseline();
  current[3].centre = {0, 0.8, 2};  // cluster 4 moved 0.8 z units = 1.6 spreads
  auto evaluation = detector.Evaluate(current);
  ASSERT_TRUE(evaluation.ok());
  const DetectorReading& population = evaluation->centre_drift;
  EXPECT_EQ(population.level, DriftLevel::kAlarm);
  EXPECT_NEAR(population.statistic, 1.6, 1e-12);
  ASSERT_EQ(population.clusters.size(), 1u);
  EXPECT_EQ(population.clusters[0], 4u);
  EXPECT_NE(population.what_changed.find("cluster 4 centre moved 1.60 spreads (0.800 z units)"),
            std::string::npos)
      << population.what_changed;
  EXPECT_EQ(evaluation->instrument_drift.level, DriftLevel::kOk);
}

TEST(CentreDriftDetector, CentresMovingApartAreNotInstrumentDrift) {
  // Every cluster moved 0.6 z units (1.2 spreads) away from the middle (1, 1, 1): many
  // moved, but in different directions, so it is not a common shift.
  CentreDriftDetector detector = MakeDetector();
  std::vector<ClusterRef> current = Baseline();
  for (ClusterRef& cluster : current) {
    std::vector<double> away = {cluster.centre[0] - 1, cluster.centre[1] - 1,
                                cluster.centre[2] - 1};
    const double length = std::sqrt(away[0] * away[0] + away[1] * away[1] + away[2] * away[2]);
    for (std::size_t i = 0; i < 3; ++i) cluster.centre[i] += 0.6 * away[i] / length;
  }
  auto evaluation = detector.Evaluate(current);
  ASSERT_TRUE(evaluation.ok());
  EXPECT_EQ(evaluation->instrument_drift.level, DriftLevel::kOk);
  EXPECT_EQ(evaluation->centre_drift.level, DriftLevel::kAlarm);
  EXPECT_EQ(evaluation->centre_drift.clusters.size(), 5u);
}

TEST(CentreDriftDetector, TinyMovesReadOk) {
  CentreDriftDetector detector = MakeDetector();
  auto evaluation = detector.Evaluate(Shifted(Baseline(), {0.05, -0.05, 0.02}));
  ASSERT_TRUE(evaluation.ok());
  EXPECT_EQ(evaluation->instrument_drift.level, DriftLevel::kOk);
  EXPECT_EQ(evaluation->centre_drift.level, DriftLevel::kOk);
  EXPECT_TRUE(evaluation->centre_drift.clusters.empty());
  // sqrt(0.0025 + 0.0025 + 0.0004) / 0.5
  EXPECT_NEAR(evaluation->centre_drift.statistic, std::sqrt(0.0054) / 0.5, 1e-12);
}

TEST(CentreDriftDetector, NewAndRetiredClustersAreLeftOut) {
  CentreDriftDetector detector = MakeDetector();
  std::vector<ClusterRef> current = {{2, {2, 0, 0}, 0.5}, {40, {9, 9, 9}, 0.5}};
  auto displacements = detector.Displacements(current);
  ASSERT_TRUE(displacements.ok());
  ASSERT_EQ(displacements->size(), 1u);
  EXPECT_EQ((*displacements)[0].id, 2u);
}

TEST(CentreDriftDetector, RefusesWrongDimensionsAndSpreads) {
  auto detector = CentreDriftDetector::Create({});
  ASSERT_TRUE(detector.ok());
  EXPECT_EQ(detector->Evaluate(Baseline()).status().code(), StatusCode::kFailedPrecondition);
  EXPECT_EQ(detector->SetBaseline({{1, {0, 0}, 0}}).code(), StatusCode::kInvalidArgument);
  EXPECT_EQ(detector->SetBaseline({{1, {0, 0}, 1}, {2, {0}, 1}}).code(),
            StatusCode::kInvalidArgument);
  EXPECT_EQ(detector->SetBaseline({{1, {0}, 1}, {1, {0}, 1}}).code(), StatusCode::kInvalidArgument);
  ASSERT_TRUE(detector->SetBaseline(Baseline()).ok());
  EXPECT_EQ(detector->Evaluate({{1, {0, 0}, 0.5}}).status().code(), StatusCode::kInvalidArgument);
}

TEST(CentreDriftDetector, StateRoundTripsExactlyThroughText) {
  auto detector = CentreDriftDetector::Create({});
  ASSERT_TRUE(detector.ok());
  ASSERT_TRUE(detector
                  ->SetBaseline(
                      {{7, {0.1 + 0.2, -1.0 / 3.0}, std::sqrt(2.0)}, {3, {1e-17, 123456.789}, 0.7}})
                  .ok());
  const nlohmann::json state = detector->ToJson();
  auto restored = CentreDriftDetector::FromJson(nlohmann::json::parse(state.dump()), {});
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(restored->ToJson(), state);
  ASSERT_EQ(restored->baseline().size(), 2u);
  EXPECT_EQ(restored->baseline()[1].centre[0], 0.1 + 0.2);
  EXPECT_EQ(restored->baseline()[1].spread, std::sqrt(2.0));
}

}  // namespace
}  // namespace seston
