#include "model/k_selector.h"

#include <gtest/gtest.h>

#include <cmath>

#include "support/reference_kmeans.h"

namespace seston {
namespace {

ModelOptions IrisOptions(KSelectionRule rule) {
  ModelOptions options;
  options.k_min = 1;
  options.k_max = 7;
  options.k_rule = rule;
  options.restarts = 100;  // enough to reach the best k <= 6 (see kmeans_fitter_test.cc)
  options.seed = 5;
  options.silhouette_sample = 150;  // all of iris
  return options;
}

TEST(SelectK, IrisRawElbowChoosesThreeAndReportsEveryK) {
  RowMatrix iris;
  std::vector<int> species;
  testing::LoadIris(&iris, &species);
  auto selection = SelectK(iris, IrisOptions(KSelectionRule::kElbow));
  ASSERT_TRUE(selection.ok()) << selection.status().ToString();
  // The elbow of iris SSE for k = 1..7 is at 3 (shared reference README).
  EXPECT_EQ(selection->chosen_k, 3);
  EXPECT_EQ(selection->rule, "elbow");
  ASSERT_EQ(selection->scores.size(), 7u);
  // SSE: scikit-learn 1.2.1, tests/data/README.md.
  const double sse[] = {681.3706, 152.347952, 78.851441, 57.228473, 46.446182, 39.039987};
  for (int k = 1; k <= 6; ++k) {
    EXPECT_EQ(selection->scores[k - 1].k, k);
    EXPECT_NEAR(selection->scores[k - 1].sse, sse[k - 1], 1e-4) << "k = " << k;
  }
  EXPECT_TRUE(std::isnan(selection->scores[0].silhouette));
}

TEST(SelectK, IrisRawSilhouetteChoosesTwoWithScikitLearnScores) {
  RowMatrix iris;
  std::vector<int> species;
  testing::LoadIris(&iris, &species);
  auto selection = SelectK(iris, IrisOptions(KSelectionRule::kSilhouette));
  ASSERT_TRUE(selection.ok()) << selection.status().ToString();
  // Silhouette alone prefers 2 on iris (shared reference README).
  EXPECT_EQ(selection->chosen_k, 2);
  EXPECT_EQ(selection->rule, "silhouette");
  // scikit-learn 1.2.1 silhouette_score on all 150 points of the best fits.
  const double silhouette[] = {0.681046, 0.552819, 0.498051, 0.488749, 0.364834};
  for (int k = 2; k <= 6; ++k) {
    EXPECT_NEAR(selection->scores[k - 1].silhouette, silhouette[k - 2], 1e-5) << "k = " << k;
  }
}

TEST(SelectK, FiveSeparatedGaussiansAreFoundByBothRules) {
  RowMatrix means(5, 4);
  means << 0, 0, 0, 0, 6, 0, 0, 0, 0, 6, 0, 0, 0, 0, 6, 0, 0, 0, 0, 6;
  RowMatrix points;
  std::vector<int> labels;
  testing::DrawGaussianMixture(means, 0.5, 1500, 21, &points, &labels);
  ModelOptions options;
  options.k_min = 2;
  options.k_max = 10;
  options.restarts = 4;
  options.silhouette_sample = 400;  // a subsample: exercises the seeded draw
  for (auto rule : {KSelectionRule::kElbow, KSelectionRule::kSilhouette}) {
    options.k_rule = rule;
    auto selection = SelectK(points, options);
    ASSERT_TRUE(selection.ok());
    EXPECT_EQ(selection->chosen_k, 5) << KSelectionRuleName(rule);
    ASSERT_EQ(selection->scores.size(), 9u);
  }
}

TEST(SelectK, RejectsAnEmptyOrInvertedRange) {
  RowMatrix points = RowMatrix::Random(20, 2);
  ModelOptions options;
  options.k_min = 4;
  options.k_max = 3;
  EXPECT_EQ(SelectK(points, options).status().code(), StatusCode::kInvalidArgument);
  options.k_min = 0;
  EXPECT_EQ(SelectK(points, options).status().code(), StatusCode::kInvalidArgument);
  options.k_min = 2;
  options.k_max = 30;  // more than 20 distinct points
  auto too_many = SelectK(points, options);
  ASSERT_FALSE(too_many.ok());
  EXPECT_NE(too_many.status().message().find("k = 21"), std::string::npos);
}

}  // namespace
}  // namespace seston
