// Nearest-centre assignment of a batch of points: the model's inner loop.
//
// Units: points and centres are in standardised feature units (z); the squared distances
// returned are in z². Ties (exactly equal squared distances) go to the lowest centre
// index.
//
// Two methods give the same answer up to rounding:
//  - kLoop: for every (point, centre) pair, sum (x_t - c_t)^2 over the features.
//  - kMatrixProduct: argmin_j ‖c_j‖² − 2 x·c_j (‖x‖² is the same for every j and is
//    left out) with the products x·c_j taken as one Eigen matrix product per block of
//    rows; then the winner's squared distance is recomputed as ‖x − c‖², so the
//    distance has no cancellation error (and is never negative) even when x lies on
//    its centre. Rounding in the expanded form can pick a different winner only when
//    two centres are within a few ulps of equally near; that winner is then as near as
//    the other to within that rounding.
// kAuto picks by the work per point, k·d (see kMatrixProductMinWork in the .cc file).
//
// Thread safety: a pure function; call from any thread.
#pragma once

#include <vector>

#include "base/matrix.h"

namespace seston {

enum class NearestCentreMethod { kAuto, kLoop, kMatrixProduct };

// ‖x − c‖² over `dims` features, summed in feature order: the loop method's distance,
// and the one k-means fitting compares, so both round alike.
inline double SquaredDistance(const double* x, const double* c, Eigen::Index dims) {
  double sum = 0;
  for (Eigen::Index t = 0; t < dims; ++t) {
    const double difference = x[t] - c[t];
    sum += difference * difference;
  }
  return sum;
}

// For each row i of `points` (n × d) writes the index of the nearest row of `centres`
// (k × d, k ≥ 1) to (*index)[i] and its squared distance to (*squared_distance)[i];
// both vectors are resized to n. Preconditions: same d, k ≥ 1.
void AssignNearest(const RowMatrix& points, const RowMatrix& centres, std::vector<int>* index,
                   std::vector<double>* squared_distance,
                   NearestCentreMethod method = NearestCentreMethod::kAuto);

}  // namespace seston
