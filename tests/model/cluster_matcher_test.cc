#include "model/cluster_matcher.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

TEST(MatchClusters, NearestCentresKeepIdsUnmatchedNewAreBirthsAndOldRetire) {
  RowMatrix old_centres(3, 2);
  old_centres << 0, 0, 5, 0, 0, 5;
  RowMatrix new_centres(3, 2);
  new_centres << 0.2, 4.9, 20, 20, 5.1, 0.1;  // old 7 and 3 moved slightly, 9 gone
  auto match = MatchClusters({3, 9, 7}, old_centres, new_centres, 2.0);
  ASSERT_TRUE(match.ok()) << match.status().ToString();
  // Old id 3 at (0,0) is about 5 from every new centre; with max_distance 2 no old
  // centre may take (20,20), so it is a birth and id 3 retires.
  EXPECT_EQ(match->kept_id, (std::vector<std::uint32_t>{7, 0, 9}));
  EXPECT_EQ(match->births, (std::vector<int>{1}));
  EXPECT_EQ(match->retired, (std::vector<std::uint32_t>{3}));
}

TEST(MatchClusters, WithoutALimitEveryPossiblePairIsKept) {
  RowMatrix old_centres(2, 1);
  old_centres << 0, 10;
  RowMatrix new_centres(3, 1);
  new_centres << 11, 100, -1;
  auto match = MatchClusters({1, 2}, old_centres, new_centres);
  ASSERT_TRUE(match.ok());
  EXPECT_EQ(match->kept_id, (std::vector<std::uint32_t>{2, 0, 1}));
  EXPECT_EQ(match->births, (std::vector<int>{1}));
  EXPECT_TRUE(match->retired.empty());
}

TEST(MatchClusters, LimitPrefersMoreAllowedPairsOverALowerTotal) {
  // Old a=0, b=3; new x=2, y=5 with max 2.5: the pairs (a,x)=2 and (b,y)=2 are allowed;
  // (b,x)=1 alone has a lower cost but would leave a unmatched. Both pairs are kept.
  RowMatrix old_centres(2, 1);
  old_centres << 0, 3;
  RowMatrix new_centres(2, 1);
  new_centres << 2, 5;
  auto match = MatchClusters({4, 5}, old_centres, new_centres, 2.5);
  ASSERT_TRUE(match.ok());
  EXPECT_EQ(match->kept_id, (std::vector<std::uint32_t>{4, 5}));
  EXPECT_TRUE(match->births.empty());
  EXPECT_TRUE(match->retired.empty());
}

TEST(MatchClusters, RejectsInconsistentInput) {
  RowMatrix two(2, 2);
  two.setZero();
  two(1, 0) = 1;
  EXPECT_FALSE(MatchClusters({1}, two, two).ok());     // one id, two centres
  EXPECT_FALSE(MatchClusters({1, 1}, two, two).ok());  // repeated id
  EXPECT_FALSE(MatchClusters({0, 1}, two, two).ok());  // 0 is "unclassified"
  EXPECT_FALSE(MatchClusters({1, 2}, two, RowMatrix::Zero(2, 3)).ok());
  EXPECT_FALSE(MatchClusters({1, 2}, two, two, -1).ok());
}

}  // namespace
}  // namespace seston
