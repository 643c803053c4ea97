#include "model/hungarian.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <limits>
#include <numeric>
#include <random>

namespace seston {
namespace {

// Least total cost over all injective maps of the smaller side into the larger, by
// enumerating every permutation of the larger side (the simple reference).
double BruteForceMinimum(const RowMatrix& cost) {
  const bool wide = cost.rows() <= cost.cols();
  const int small = static_cast<int>(std::min(cost.rows(), cost.cols()));
  const int large = static_cast<int>(std::max(cost.rows(), cost.cols()));
  std::vector<int> permutation(large);
  std::iota(permutation.begin(), permutation.end(), 0);
  double best = std::numeric_limits<double>::infinity();
  do {
    double total = 0;
    for (int i = 0; i < small; ++i) {
      total += wide ? cost(i, permutation[i]) : cost(permutation[i], i);
    }
    best = std::min(best, total);
  } while (std::next_permutation(permutation.begin(), permutation.end()));
  return best;
}

double AssignmentCost(const RowMatrix& cost, const std::vector<int>& column_of_row) {
  double total = 0;
  for (int i = 0; i < cost.rows(); ++i) {
    if (column_of_row[i] >= 0) total += cost(i, column_of_row[i]);
  }
  return total;
}

TEST(SolveMinCostAssignment, MatchesBruteForceOnSeededRandomMatrices) {
  std::mt19937_64 engine(20240611);
  std::uniform_real_distribution<double> uniform(0, 10);
  std::uniform_int_distribution<int> small_int(0, 3);  // many equal costs: ties
  for (int rows = 1; rows <= 6; ++rows) {
    for (int cols = 1; cols <= 6; ++cols) {
      for (int trial = 0; trial < 12; ++trial) {
        RowMatrix cost(rows, cols);
        for (int i = 0; i < rows; ++i) {
          for (int j = 0; j < cols; ++j) {
            cost(i, j) = trial % 2 == 0 ? uniform(engine) : small_int(engine);
          }
        }
        const std::vector<int> column_of_row = SolveMinCostAssignment(cost);
        ASSERT_EQ(column_of_row.size(), static_cast<std::size_t>(rows));
        std::vector<int> used;
        for (int column : column_of_row) {
          if (column >= 0) used.push_back(column);
        }
        EXPECT_EQ(used.size(), static_cast<std::size_t>(std::min(rows, cols)));
        std::sort(used.begin(), used.end());
        EXPECT_EQ(std::adjacent_find(used.begin(), used.end()), used.end()) << "column reused";
        EXPECT_NEAR(AssignmentCost(cost, column_of_row), BruteForceMinimum(cost), 1e-9)
            << rows << " × " << cols << " trial " << trial;
      }
    }
  }
}

TEST(SolveMinCostAssignment, TallMatrixLeavesTheCostliestRowUnmatched) {
  RowMatrix cost(3, 2);
  cost << 1, 9, 9, 1, 5, 5;  // row 2 cannot do better than 5; rows 0 and 1 take 1 each
  EXPECT_EQ(SolveMinCostAssignment(cost), (std::vector<int>{0, 1, -1}));
}

TEST(SolveMinCostAssignment, GreedyIsNotOptimalButTheSolverIs) {
  // Greedy takes (0,0)=1 and is then forced to (1,1)=100; the optimum is 2 + 3.
  RowMatrix cost(2, 2);
  cost << 1, 2, 3, 100;
  EXPECT_EQ(SolveMinCostAssignment(cost), (std::vector<int>{1, 0}));
}

TEST(SolveMinCostAssignment, EmptySidesGiveNoMatches) {
  EXPECT_TRUE(SolveMinCostAssignment(RowMatrix(0, 3)).empty());
  EXPECT_EQ(SolveMinCostAssignment(RowMatrix(2, 0)), (std::vector<int>{-1, -1}));
}

}  // namespace
}  // namespace seston
