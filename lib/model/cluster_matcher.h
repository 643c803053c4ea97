// Keeping cluster identity across a refit: which new centre inherits which old id.
//
// Old and new centres are matched one to one by the Hungarian algorithm
// (SolveMinCostAssignment) on Euclidean centre distance in z units, so the total distance
// of matched pairs is least. A pair farther apart than max_distance is refused: the
// solver is given a penalty for such pairs larger than any sum of allowed distances, so
// the matching first keeps as many allowed pairs as possible, then the least total
// distance. A new centre left unmatched is a birth; an old id left unmatched retires.
//
// Thread safety: a pure function; call from any thread.
#pragma once

#include <cstdint>
#include <limits>
#include <vector>

#include "base/matrix.h"
#include "base/status.h"

namespace seston {

struct ClusterMatch {
  // Per new centre (row of new_centres): the old id it keeps, or 0 for a birth.
  std::vector<std::uint32_t> kept_id;
  std::vector<int> births;             // rows of new_centres with no old id, ascending
  std::vector<std::uint32_t> retired;  // old ids with no new centre, in old order
};

// old_ids[i] names row i of old_centres. Errors (InvalidArgument): old_ids and
// old_centres of different lengths, a zero or repeated old id, different numbers of
// columns, non-finite centres, a negative or NaN max_distance (z units; +infinity, the
// default, refuses nothing).
Result<ClusterMatch> MatchClusters(const std::vector<std::uint32_t>& old_ids,
                                   const RowMatrix& old_centres, const RowMatrix& new_centres,
                                   double max_distance = std::numeric_limits<double>::infinity());

}  // namespace seston
