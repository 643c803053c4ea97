#include "model/nearest_centre.h"

#include <cassert>
#include <limits>

namespace seston {
namespace {

// Crossover by work per point k·d, measured with g++ 12 -O2 (RelWithDebInfo) on the
// project's x86-64 build machine, n = 100000 Gaussian points, d in {2, 4, 6, 8, 16},
// k in {1, ..., 32}, best of 5 (timings on the shared cores vary by about ±20 %): below
// k·d = 48 the loop was up to 1.8× faster (k ≤ 3 always favoured it); from k·d = 48 the
// matrix product was 1.1–1.5× faster, growing to 2× at k·d = 512. With d = 2 the loop
// stayed level with or ahead of the product up to k·d = 64.
constexpr Eigen::Index kMatrixProductMinWork = 48;

// Rows per matrix product: bounds the temporary products to kBlockRows × k doubles.
constexpr Eigen::Index kBlockRows = 1024;

void AssignByLoop(const RowMatrix& points, const RowMatrix& centres, std::vector<int>* index,
                  std::vector<double>* squared_distance) {
  const Eigen::Index dims = points.cols();
  for (Eigen::Index i = 0; i < points.rows(); ++i) {
    const double* x = points.row(i).data();
    double best = std::numeric_limits<double>::infinity();
    int best_index = 0;
    for (Eigen::Index j = 0; j < centres.rows(); ++j) {
      const double sum = SquaredDistance(x, centres.row(j).data(), dims);
      if (sum < best) {
        best = sum;
        best_index = static_cast<int>(j);
      }
    }
    (*index)[i] = best_index;
    (*squared_distance)[i] = best;
  }
}

void AssignByMatrixProduct(const RowMatrix& points, const RowMatrix& centres,
                           std::vector<int>* index, std::vector<double>* squared_distance) {
  const Eigen::VectorXd centre_norms = centres.rowwise().squaredNorm();
  RowMatrix products;  // row-major: one point's k scores are contiguous for the argmin
  for (Eigen::Index start = 0; start < points.rows(); start += kBlockRows) {
    const Eigen::Index rows = std::min(kBlockRows, points.rows() - start);
    products.noalias() = points.middleRows(start, rows) * centres.transpose();
    for (Eigen::Index r = 0; r < rows; ++r) {
      double best = std::numeric_limits<double>::infinity();
      int best_index = 0;
      for (Eigen::Index j = 0; j < centres.rows(); ++j) {
        const double score = centre_norms[j] - 2 * products(r, j);
        if (score < best) {
          best = score;
          best_index = static_cast<int>(j);
        }
      }
      const Eigen::Index i = start + r;
      (*index)[i] = best_index;
      (*squared_distance)[i] = (points.row(i) - centres.row(best_index)).squaredNorm();
    }
  }
}

}  // namespace

void AssignNearest(const RowMatrix& points, const RowMatrix& centres, std::vector<int>* index,
                   std::vector<double>* squared_distance, NearestCentreMethod method) {
  assert(centres.rows() >= 1 && points.cols() == centres.cols());
  index->resize(points.rows());
  squared_distance->resize(points.rows());
  if (method == NearestCentreMethod::kAuto) {
    method = centres.rows() * centres.cols() >= kMatrixProductMinWork
                 ? NearestCentreMethod::kMatrixProduct
                 : NearestCentreMethod::kLoop;
  }
  if (method == NearestCentreMethod::kLoop) {
    AssignByLoop(points, centres, index, squared_distance);
  } else {
    AssignByMatrixProduct(points, centres, index, squared_distance);
  }
}

}  // namespace seston
