#include "model/hungarian.h"

#include <limits>

namespace seston {
namespace {

// Solves for rows ≤ cols. Indices are 1-based inside, with row 0 / column 0 as the
// virtual start of each augmenting path, so that a "no row" marker needs no sign.
std::vector<int> SolveWideAssignment(const RowMatrix& cost) {
  const Eigen::Index rows = cost.rows();
  const Eigen::Index cols = cost.cols();
  constexpr double kInfinity = std::numeric_limits<double>::infinity();
  // Invariant: row_potential[i] + column_potential[j] <= cost(i, j) for every pair, with
  // equality on matched pairs (reduced costs are non-negative, zero on the matching).
  std::vector<double> row_potential(rows + 1, 0), column_potential(cols + 1, 0);
  std::vector<Eigen::Index> row_of_column(cols + 1, 0);  // 0: column free
  std::vector<Eigen::Index> previous_column(cols + 1, 0);
  std::vector<double> slack(cols + 1);
  std::vector<char> visited(cols + 1);
  for (Eigen::Index row = 1; row <= rows; ++row) {
    row_of_column[0] = row;
    Eigen::Index column = 0;
    std::fill(slack.begin(), slack.end(), kInfinity);
    std::fill(visited.begin(), visited.end(), 0);
    // Grow a shortest-path tree of tight edges from `row` until a free column is reached.
    do {
      visited[column] = 1;
      const Eigen::Index tree_row = row_of_column[column];
      double step = kInfinity;
      Eigen::Index next_column = 0;
      for (Eigen::Index j = 1; j <= cols; ++j) {
        if (visited[j]) continue;
        const double reduced =
            cost(tree_row - 1, j - 1) - row_potential[tree_row] - column_potential[j];
        if (reduced < slack[j]) {
          slack[j] = reduced;
          previous_column[j] = column;
        }
        if (slack[j] < step) {
          step = slack[j];
          next_column = j;
        }
      }
      for (Eigen::Index j = 0; j <= cols; ++j) {
        if (visited[j]) {
          row_potential[row_of_column[j]] += step;
          column_potential[j] -= step;
        } else {
          slack[j] -= step;
        }
      }
      column = next_column;
    } while (row_of_column[column] != 0);
    // Flip the matching along the path back to the start.
    while (column != 0) {
      const Eigen::Index before = previous_column[column];
      row_of_column[column] = row_of_column[before];
      column = before;
    }
  }
  std::vector<int> column_of_row(rows, -1);
  for (Eigen::Index j = 1; j <= cols; ++j) {
    if (row_of_column[j] != 0) column_of_row[row_of_column[j] - 1] = static_cast<int>(j - 1);
  }
  return column_of_row;
}

}  // namespace

std::vector<int> SolveMinCostAssignment(const RowMatrix& cost) {
  if (cost.rows() == 0 || cost.cols() == 0) return std::vector<int>(cost.rows(), -1);
  if (cost.rows() <= cost.cols()) return SolveWideAssignment(cost);
  const RowMatrix transposed = cost.transpose();
  const std::vector<int> row_of_column = SolveWideAssignment(transposed);
  std::vector<int> column_of_row(cost.rows(), -1);
  for (std::size_t column = 0; column < row_of_column.size(); ++column) {
    column_of_row[row_of_column[column]] = static_cast<int>(column);
  }
  return column_of_row;
}

}  // namespace seston
