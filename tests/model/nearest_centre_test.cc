#include "model/nearest_centre.h"

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <tuple>

#include "support/reference_kmeans.h"

namespace seston {
namespace {

RowMatrix RandomMatrix(int rows, int cols, std::mt19937_64& engine) {
  std::normal_distribution<double> normal(0, 3);
  RowMatrix matrix(rows, cols);
  for (int i = 0; i < rows; ++i) {
    for (int j = 0; j < cols; ++j) matrix(i, j) = normal(engine);
  }
  return matrix;
}

// Compares one method with the plain-loop reference in tests/support. An index may differ
// only where the two centres are equally near to within rounding of the expanded form
// (relative 1e-12 of the reference squared distance); such near-ties are counted and, on
// continuous random data, expected not to occur at all.
void ExpectMatchesReference(NearestCentreMethod method, int n, int d, int k, std::uint64_t seed) {
  std::mt19937_64 engine(seed);
  const RowMatrix points = RandomMatrix(n, d, engine);
  const RowMatrix centres = RandomMatrix(k, d, engine);
  std::vector<int> index, expected_index;
  std::vector<double> squared, expected_squared;
  AssignNearest(points, centres, &index, &squared, method);
  testing::ReferenceNearest(points, centres, &expected_index, &expected_squared);
  ASSERT_EQ(index.size(), static_cast<std::size_t>(n));
  int near_ties = 0;
  for (int i = 0; i < n; ++i) {
    if (index[i] != expected_index[i]) {
      const double other = (points.row(i) - centres.row(index[i])).squaredNorm();
      ASSERT_NEAR(other, expected_squared[i], 1e-12 * expected_squared[i])
          << "row " << i << " n=" << n << " d=" << d << " k=" << k;
      ++near_ties;
      continue;
    }
    EXPECT_NEAR(squared[i], expected_squared[i], 1e-9 * expected_squared[i])
        << "row " << i << " n=" << n << " d=" << d << " k=" << k;
  }
  EXPECT_EQ(near_ties, 0);
}

class AssignNearestAgainstReference : public ::testing::TestWithParam<std::tuple<int, int, int>> {};

TEST_P(AssignNearestAgainstReference, LoopMatchesReference) {
  const auto [n, d, k] = GetParam();
  ExpectMatchesReference(NearestCentreMethod::kLoop, n, d, k, 1000 + n + 10 * d + 100 * k);
}

TEST_P(AssignNearestAgainstReference, MatrixProductMatchesReference) {
  const auto [n, d, k] = GetParam();
  ExpectMatchesReference(NearestCentreMethod::kMatrixProduct, n, d, k, 2000 + n + 10 * d + 100 * k);
}

TEST_P(AssignNearestAgainstReference, AutoMatchesReference) {
  const auto [n, d, k] = GetParam();
  ExpectMatchesReference(NearestCentreMethod::kAuto, n, d, k, 3000 + n + 10 * d + 100 * k);
}

// Sizes cover one point, one centre, a partial last block (1024 rows per product) and
// both sides of the kAuto crossover.
INSTANTIATE_TEST_SUITE_P(Shapes, AssignNearestAgainstReference,
                         ::testing::Values(std::make_tuple(1, 1, 1), std::make_tuple(50, 2, 1),
                                           std::make_tuple(300, 4, 3), std::make_tuple(2500, 5, 8),
                                           std::make_tuple(1500, 16, 12),
                                           std::make_tuple(700, 30, 40)));

TEST(AssignNearest, ExactTiesGoToTheLowestIndexInBothMethods) {
  // The point (0, 0) is exactly 1 from centres 1, 2 and 3 and 2 from centre 0.
  RowMatrix points(1, 2);
  points << 0, 0;
  RowMatrix centres(4, 2);
  centres << 2, 0, 1, 0, 0, 1, -1, 0;
  for (auto method : {NearestCentreMethod::kLoop, NearestCentreMethod::kMatrixProduct}) {
    std::vector<int> index;
    std::vector<double> squared;
    AssignNearest(points, centres, &index, &squared, method);
    EXPECT_EQ(index[0], 1);
    EXPECT_EQ(squared[0], 1.0);
  }
}

TEST(AssignNearest, PointOnAFarCentreHasZeroDistanceNotCancellationNoise) {
  // ‖x‖² ≈ 2e12 here, so the expanded form alone would leave an error near 1e-4.
  RowMatrix points(1, 2);
  points << 1e6 + 0.1, 1e6 - 0.3;
  RowMatrix centres(2, 2);
  centres << 0, 0, 1e6 + 0.1, 1e6 - 0.3;
  std::vector<int> index;
  std::vector<double> squared;
  AssignNearest(points, centres, &index, &squared, NearestCentreMethod::kMatrixProduct);
  EXPECT_EQ(index[0], 1);
  EXPECT_EQ(squared[0], 0.0);
}

}  // namespace
}  // namespace seston
