#include "model/k_selector.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "model/kmeans_fitter.h"
#include "model/portable_random.h"

namespace seston {
namespace {

std::vector<Eigen::Index> DrawSample(Eigen::Index n, std::size_t size, std::uint64_t seed) {
  std::vector<Eigen::Index> all(n);
  std::iota(all.begin(), all.end(), Eigen::Index{0});
  if (static_cast<std::size_t>(n) <= size) return all;
  // Partial Fisher–Yates: the first `size` slots become a uniform sample.
  PortableRandom random(seed);
  for (std::size_t i = 0; i < size; ++i) {
    const std::size_t j = i + random.NextBelow(static_cast<std::size_t>(n) - i);
    std::swap(all[i], all[j]);
  }
  all.resize(size);
  std::sort(all.begin(), all.end());
  return all;
}

// Mean silhouette of `labels` (over the whole data) restricted to the sample rows, with
// `distance` the sample's pairwise Euclidean distance matrix.
double MeanSilhouette(const Eigen::MatrixXd& distance, const std::vector<Eigen::Index>& sample,
                      const std::vector<int>& labels, int k) {
  const Eigen::Index m = static_cast<Eigen::Index>(sample.size());
  std::vector<int> label(m);
  std::vector<double> members(k, 0);
  for (Eigen::Index i = 0; i < m; ++i) {
    label[i] = labels[sample[i]];
    ++members[label[i]];
  }
  if (std::count_if(members.begin(), members.end(), [](double c) { return c > 0; }) < 2) {
    return std::numeric_limits<double>::quiet_NaN();
  }
  std::vector<double> sum_to(k);
  double total = 0;
  for (Eigen::Index i = 0; i < m; ++i) {
    std::fill(sum_to.begin(), sum_to.end(), 0.0);
    for (Eigen::Index j = 0; j < m; ++j) sum_to[label[j]] += distance(i, j);
    const int own = label[i];
    if (members[own] < 2) continue;  // s(i) = 0
    const double a = sum_to[own] / (members[own] - 1);
    double b = std::numeric_limits<double>::infinity();
    for (int c = 0; c < k; ++c) {
      if (c != own && members[c] > 0) b = std::min(b, sum_to[c] / members[c]);
    }
    total += (b - a) / std::max(a, b);
  }
  return total / static_cast<double>(m);
}

int ChooseByElbow(const std::vector<KScore>& scores) {
  for (const KScore& score : scores) {
    if (score.sse == 0) return score.k;
  }
  const int first = scores.front().k;
  if (scores.size() < 3) return first;
  const double log_first = std::log(scores.front().sse);
  const double log_last = std::log(scores.back().sse);
  if (!(log_first > log_last)) return first;
  const double k_span = scores.back().k - first;
  int chosen = first;
  double best_gap = 0;
  for (const KScore& score : scores) {
    const double x = (score.k - first) / k_span;
    const double y = (std::log(score.sse) - log_last) / (log_first - log_last);
    const double gap = (1 - x) - y;
    if (gap > best_gap) {
      best_gap = gap;
      chosen = score.k;
    }
  }
  return chosen;
}

int ChooseBySilhouette(const std::vector<KScore>& scores) {
  int chosen = scores.front().k;
  double best = -std::numeric_limits<double>::infinity();
  for (const KScore& score : scores) {
    if (score.silhouette > best) {  // false for NaN
      best = score.silhouette;
      chosen = score.k;
    }
  }
  return chosen;
}

}  // namespace

const char* KSelectionRuleName(KSelectionRule rule) {
  switch (rule) {
    case KSelectionRule::kElbow:
      return "elbow";
    case KSelectionRule::kSilhouette:
      return "silhouette";
  }
  return "unknown";
}

Result<KSelection> SelectK(const RowMatrix& points, const ModelOptions& options) {
  if (options.k_min < 1 || options.k_max < options.k_min) {
    return Status::InvalidArgument(
        "k selection: need 1 <= k_min <= k_max, got k_min = " + std::to_string(options.k_min) +
        ", k_max = " + std::to_string(options.k_max));
  }
  if (options.silhouette_sample < 2) {
    return Status::InvalidArgument("k selection: silhouette_sample must be at least 2, got " +
                                   std::to_string(options.silhouette_sample));
  }
  const std::vector<Eigen::Index> sample =
      DrawSample(points.rows(), options.silhouette_sample, options.seed);
  const Eigen::Index m = static_cast<Eigen::Index>(sample.size());
  Eigen::MatrixXd distance(m, m);
  for (Eigen::Index i = 0; i < m; ++i) {
    distance(i, i) = 0;
    for (Eigen::Index j = i + 1; j < m; ++j) {
      distance(i, j) = distance(j, i) = (points.row(sample[i]) - points.row(sample[j])).norm();
    }
  }
  KSelection selection;
  selection.rule = KSelectionRuleName(options.k_rule);
  for (int k = options.k_min; k <= options.k_max; ++k) {
    auto fit = FitKMeans(points, k, options.restarts, options.max_iterations, options.seed);
    if (!fit.ok()) return fit.status().WithContext("k selection at k = " + std::to_string(k));
    const double silhouette = k == 1 ? std::numeric_limits<double>::quiet_NaN()
                                     : MeanSilhouette(distance, sample, fit->labels, k);
    selection.scores.push_back({k, fit->sse, silhouette});
  }
  selection.chosen_k = options.k_rule == KSelectionRule::kElbow
                           ? ChooseByElbow(selection.scores)
                           : ChooseBySilhouette(selection.scores);
  return selection;
}

}  // namespace seston
