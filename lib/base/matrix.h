// The dense matrix type shared by features/, model/ and drift/.
//
// RowMatrix holds one particle (or one centre) per row, one feature per column, so a
// ParticleBatch's row-major values map onto it without copying (Eigen::Map).
#pragma once

#include <Eigen/Dense>

namespace seston {

using RowMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
using RowMatrixMap = Eigen::Map<RowMatrix>;
using ConstRowMatrixMap = Eigen::Map<const RowMatrix>;

}  // namespace seston
