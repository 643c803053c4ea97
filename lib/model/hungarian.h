// Minimum-cost assignment: the Hungarian algorithm (Kuhn 1955; Munkres 1957), in the form
// that keeps row and column potentials and adds one row at a time along a shortest
// augmenting path, O(r² c) for r ≤ c. Hand-written because neither Eigen nor Boost 1.74
// (whose graph matchings maximise cardinality or weight on general graphs) offers a
// rectangular minimum-cost assignment.
//
// Used to keep cluster identity across refits (cluster_matcher.h). Costs are in whatever
// unit the caller uses (z for centre distances) and must be finite.
//
// Thread safety: a pure function; call from any thread.
#pragma once

#include <vector>

#include "base/matrix.h"

namespace seston {

// For a rows × cols cost matrix returns, per row, the column assigned to it so that the
// total cost over matched pairs is the least possible, with min(rows, cols) pairs and no
// column used twice. When rows > cols the rows left unmatched get -1. Among optimal
// assignments the one returned is deterministic for given input. An empty matrix gives
// an empty (rows == 0) or all -1 (cols == 0) result.
std::vector<int> SolveMinCostAssignment(const RowMatrix& cost);

}  // namespace seston
