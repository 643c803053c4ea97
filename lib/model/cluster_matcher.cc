#include "model/cluster_matcher.h"

#include <algorithm>
#include <string>

#include "model/hungarian.h"

namespace seston {

Result<ClusterMatch> MatchClusters(const std::vector<std::uint32_t>& old_ids,
                                   const RowMatrix& old_centres, const RowMatrix& new_centres,
                                   double max_distance) {
  if (static_cast<Eigen::Index>(old_ids.size()) != old_centres.rows()) {
    return Status::InvalidArgument("cluster matching: " + std::to_string(old_ids.size()) +
                                   " old ids for " + std::to_string(old_centres.rows()) +
                                   " old centres; need one id per centre");
  }
  std::vector<std::uint32_t> sorted_ids = old_ids;
  std::sort(sorted_ids.begin(), sorted_ids.end());
  if ((!sorted_ids.empty() && sorted_ids.front() == 0) ||
      std::adjacent_find(sorted_ids.begin(), sorted_ids.end()) != sorted_ids.end()) {
    return Status::InvalidArgument(
        "cluster matching: old ids must be distinct and non-zero (0 means unclassified)");
  }
  if (old_centres.rows() > 0 && new_centres.rows() > 0 &&
      old_centres.cols() != new_centres.cols()) {
    return Status::InvalidArgument("cluster matching: old centres have " +
                                   std::to_string(old_centres.cols()) + " features, new " +
                                   std::to_string(new_centres.cols()) + "; they must agree");
  }
  if (!old_centres.allFinite() || !new_centres.allFinite()) {
    return Status::InvalidArgument("cluster matching: centres must be finite");
  }
  if (!(max_distance >= 0)) {
    return Status::InvalidArgument("cluster matching: max_distance must be >= 0 (z units), got " +
                                   std::to_string(max_distance));
  }
  const Eigen::Index old_count = old_centres.rows();
  const Eigen::Index new_count = new_centres.rows();
  RowMatrix distance(old_count, new_count);
  double allowed_total = 0;
  for (Eigen::Index i = 0; i < old_count; ++i) {
    for (Eigen::Index j = 0; j < new_count; ++j) {
      distance(i, j) = (old_centres.row(i) - new_centres.row(j)).norm();
      if (distance(i, j) <= max_distance) allowed_total += distance(i, j);
    }
  }
  const double refused_cost = 2 * allowed_total + 1;
  RowMatrix cost = distance;
  for (Eigen::Index i = 0; i < old_count; ++i) {
    for (Eigen::Index j = 0; j < new_count; ++j) {
      if (distance(i, j) > max_distance) cost(i, j) = refused_cost;
    }
  }
  const std::vector<int> new_of_old = SolveMinCostAssignment(cost);
  ClusterMatch match;
  match.kept_id.assign(new_count, 0);
  for (Eigen::Index i = 0; i < old_count; ++i) {
    const int j = new_of_old[i];
    if (j >= 0 && distance(i, j) <= max_distance) {
      match.kept_id[j] = old_ids[i];
    } else {
      match.retired.push_back(old_ids[i]);
    }
  }
  for (Eigen::Index j = 0; j < new_count; ++j) {
    if (match.kept_id[j] == 0) match.births.push_back(static_cast<int>(j));
  }
  return match;
}

}  // namespace seston
