#include "model/kmeans_fitter.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <exception>
#include <limits>
#include <mutex>
#include <numeric>
#include <string>
#include <thread>

#include "model/nearest_centre.h"
#include "model/portable_random.h"

namespace seston {
namespace {

std::size_t CountDistinctRows(const RowMatrix& points) {
  std::vector<Eigen::Index> order(points.rows());
  std::iota(order.begin(), order.end(), Eigen::Index{0});
  const auto row_less = [&points](Eigen::Index a, Eigen::Index b) {
    return std::lexicographical_compare(points.row(a).begin(), points.row(a).end(),
                                        points.row(b).begin(), points.row(b).end());
  };
  std::sort(order.begin(), order.end(), row_less);
  std::size_t distinct = order.empty() ? 0 : 1;
  for (std::size_t i = 1; i < order.size(); ++i) {
    if (points.row(order[i - 1]) != points.row(order[i])) ++distinct;
  }
  return distinct;
}

// Index of a point drawn with probability proportional to its weight, given the running
// sums of the weights (all ≥ 0, total > 0).
Eigen::Index DrawProportional(const std::vector<double>& cumulative, PortableRandom& random) {
  const double target = random.NextUnit() * cumulative.back();
  auto it = std::upper_bound(cumulative.begin(), cumulative.end(), target);
  // target can round up to the total; the last point with positive weight is then drawn.
  if (it == cumulative.end()) {
    it = std::lower_bound(cumulative.begin(), cumulative.end(), cumulative.back());
  }
  return it - cumulative.begin();
}

RowMatrix SeedKMeansPlusPlus(const RowMatrix& points, int k, PortableRandom& random) {
  const Eigen::Index n = points.rows();
  const int trials = 2 + static_cast<int>(std::floor(std::log(static_cast<double>(k))));
  RowMatrix centres(k, points.cols());
  centres.row(0) = points.row(static_cast<Eigen::Index>(random.NextBelow(n)));
  std::vector<double> nearest(n);
  for (Eigen::Index i = 0; i < n; ++i) {
    nearest[i] = (points.row(i) - centres.row(0)).squaredNorm();
  }
  std::vector<double> cumulative(n);
  std::vector<double> candidate_nearest(n);
  std::vector<double> best_nearest(n);
  for (int c = 1; c < k; ++c) {
    std::partial_sum(nearest.begin(), nearest.end(), cumulative.begin());
    double best_potential = std::numeric_limits<double>::infinity();
    Eigen::Index best_candidate = 0;
    for (int t = 0; t < trials; ++t) {
      const Eigen::Index candidate = DrawProportional(cumulative, random);
      double potential = 0;
      for (Eigen::Index i = 0; i < n; ++i) {
        candidate_nearest[i] =
            std::min(nearest[i], (points.row(i) - points.row(candidate)).squaredNorm());
        potential += candidate_nearest[i];
      }
      if (potential < best_potential) {
        best_potential = potential;
        best_candidate = candidate;
        best_nearest.swap(candidate_nearest);
      }
    }
    centres.row(c) = points.row(best_candidate);
    nearest.swap(best_nearest);
  }
  return centres;
}

// Moves each empty cluster onto the farthest point of a cluster that keeps ≥ 1 point.
// Updates sums, counts and labels; a moved point's squared distance is set to -1 so that
// it is not taken twice.
void RelocateEmptyClusters(const RowMatrix& points, RowMatrix& sums,
                           std::vector<std::size_t>& counts, std::vector<int>& labels,
                           std::vector<double>& squared_distance) {
  for (std::size_t empty = 0; empty < counts.size(); ++empty) {
    if (counts[empty] != 0) continue;
    Eigen::Index farthest = -1;
    for (Eigen::Index i = 0; i < points.rows(); ++i) {
      if (counts[labels[i]] < 2 || squared_distance[i] < 0) continue;
      if (farthest < 0 || squared_distance[i] > squared_distance[farthest]) farthest = i;
    }
    if (farthest < 0) continue;  // only when n < k, which FitKMeans rules out
    sums.row(labels[farthest]) -= points.row(farthest);
    --counts[labels[farthest]];
    sums.row(empty) = points.row(farthest);
    counts[empty] = 1;
    labels[farthest] = static_cast<int>(empty);
    squared_distance[farthest] = -1;
  }
}

// The nearest centre to x (ties to the lowest index), its distance and the distance to
// the second nearest (+infinity when k = 1). Distances, not squared.
struct NearestTwo {
  int label = 0;
  double nearest = 0;
  double second = 0;
};
NearestTwo FindNearestTwo(const double* x, const RowMatrix& centres) {
  const Eigen::Index dims = centres.cols();
  double best = std::numeric_limits<double>::infinity();
  double runner_up = best;
  int label = 0;
  for (Eigen::Index j = 0; j < centres.rows(); ++j) {
    const double squared = SquaredDistance(x, centres.row(j).data(), dims);
    if (squared < best) {
      runner_up = best;
      best = squared;
      label = static_cast<int>(j);
    } else if (squared < runner_up) {
      runner_up = squared;
    }
  }
  return {label, std::sqrt(best), std::sqrt(runner_up)};
}

// A bound test passes only with this relative margin, so that rounding in the running
// bounds (a few ulps per iteration) can never skip a point whose nearest centre changed;
// a point on the margin is simply measured.
constexpr double kBoundMargin = 1 - 1e-9;

// FindNearestTwo for a point whose squared distance to centre `own` is `own_squared`,
// measuring only the centres that can be nearer (Elkan 2003): a centre at least twice
// the point's distance from `own` is farther from the point than `own` is (triangle
// inequality), and its distance from `own` minus the point's distance stands in for it
// in the second-nearest bound. `gap` holds the distances between centres. The nearest
// centre and its tie rule are FindNearestTwo's; the second distance may be lower.
NearestTwo FindNearestTwoNear(const double* x, const RowMatrix& centres, int own,
                              double own_squared, const Eigen::MatrixXd& gap) {
  const double own_distance = std::sqrt(own_squared);
  double best = own_squared;
  int label = own;
  // The second-nearest bound from the skipped centres (a distance) and from the measured
  // ones (squared, so that only one square root is taken: sqrt is correctly rounded and
  // monotone, so sqrt(min) is the min of the square roots, bit for bit).
  double second_skipped = std::numeric_limits<double>::infinity();
  double second_squared = std::numeric_limits<double>::infinity();
  for (int j = 0; j < static_cast<int>(centres.rows()); ++j) {
    if (j == own) continue;
    if (gap(own, j) * kBoundMargin > 2 * own_distance) {
      second_skipped = std::min(second_skipped, gap(own, j) - own_distance);
      continue;
    }
    const double squared = SquaredDistance(x, centres.row(j).data(), centres.cols());
    if (squared < best || (squared == best && j < label)) {
      second_squared = std::min(second_squared, best);
      best = squared;
      label = j;
    } else {
      second_squared = std::min(second_squared, squared);
    }
  }
  return {label, std::sqrt(best), std::min(second_skipped, std::sqrt(second_squared))};
}

// Lloyd's iterations with Hamerly's bounds (Hamerly 2010, "Making k-means even faster"):
// each point keeps an upper bound on the distance to its own centre and a lower bound on
// the distance to any other; after the centres move by δ, the upper bound grows by its
// centre's δ and the lower bound shrinks by the largest other δ. A point whose upper
// bound is below both its lower bound and half the distance from its centre to the
// nearest other centre cannot change cluster and is not measured. The labels, and so
// the sums, means and iteration count, are those of plain Lloyd with exact nearest
// assignment (ties to the lowest index); a cluster's sum is taken in point order, afresh
// whenever its points changed, so the centres are bit for bit those of the plain loop.
KMeansFit RunLloyd(const RowMatrix& points, RowMatrix centres, int max_iterations) {
  const Eigen::Index n = points.rows();
  const Eigen::Index dims = points.cols();
  const int k = static_cast<int>(centres.rows());
  KMeansFit fit;
  fit.labels.resize(n);
  std::vector<double> upper(n);
  std::vector<double> lower(n);
  const auto measure_all = [&](std::size_t* changed) {
    for (Eigen::Index i = 0; i < n; ++i) {
      const NearestTwo found = FindNearestTwo(points.row(i).data(), centres);
      if (changed != nullptr && found.label != fit.labels[i]) ++*changed;
      fit.labels[i] = found.label;
      upper[i] = found.nearest;
      lower[i] = found.second;
    }
  };
  measure_all(nullptr);

  RowMatrix sums(k, dims);
  RowMatrix previous(k, dims);
  std::vector<std::size_t> counts(k);
  std::vector<double> moved(k);
  std::vector<double> half_gap(k);
  Eigen::MatrixXd gap(k, k);  // distances between centres
  std::vector<double> squared_distance;
  // Clusters whose points changed since their sums were last taken. A cluster that kept
  // the same points has the same sum, bit for bit, as one taken afresh in point order, so
  // only the changed clusters are summed again: late iterations move few points.
  std::vector<char> resum(k, 1);
  while (fit.iterations < max_iterations) {
    for (int c = 0; c < k; ++c) {
      if (!resum[c]) continue;
      sums.row(c).setZero();
      counts[c] = 0;
    }
    for (Eigen::Index i = 0; i < n; ++i) {  // raw rows: Eigen's row blocks cost more here
      const int label = fit.labels[i];
      if (!resum[label]) continue;
      const double* x = points.row(i).data();
      double* sum = sums.row(label).data();
      for (Eigen::Index t = 0; t < dims; ++t) sum[t] += x[t];
      ++counts[label];
    }
    std::fill(resum.begin(), resum.end(), 0);
    const bool any_empty = std::find(counts.begin(), counts.end(), 0) != counts.end();
    if (any_empty) {  // rare: the relocation rule needs every point's exact distance
      squared_distance.resize(n);
      for (Eigen::Index i = 0; i < n; ++i) {
        squared_distance[i] =
            SquaredDistance(points.row(i).data(), centres.row(fit.labels[i]).data(), dims);
      }
      RelocateEmptyClusters(points, sums, counts, fit.labels, squared_distance);
    }
    previous = centres;
    for (int c = 0; c < k; ++c) centres.row(c) = sums.row(c) / static_cast<double>(counts[c]);
    ++fit.iterations;

    std::size_t changed = 0;
    if (any_empty) {  // relocated points' bounds refer to other centres: measure afresh
      measure_all(&changed);
      std::fill(resum.begin(), resum.end(), 1);  // relocation edited the sums
    } else {
      int most_moved = 0;
      for (int c = 0; c < k; ++c) {
        moved[c] = std::sqrt(SquaredDistance(centres.row(c).data(), previous.row(c).data(), dims));
        if (moved[c] > moved[most_moved]) most_moved = c;
      }
      double second_most = 0;
      for (int c = 0; c < k; ++c) {
        if (c != most_moved) second_most = std::max(second_most, moved[c]);
      }
      for (int c = 0; c < k; ++c) {
        gap(c, c) = 0;
        for (int other = c + 1; other < k; ++other) {
          gap(c, other) = gap(other, c) =
              std::sqrt(SquaredDistance(centres.row(c).data(), centres.row(other).data(), dims));
        }
      }
      for (int c = 0; c < k; ++c) {
        double nearest_other = std::numeric_limits<double>::infinity();
        for (int other = 0; other < k; ++other) {
          if (other != c) nearest_other = std::min(nearest_other, gap(c, other));
        }
        half_gap[c] = 0.5 * nearest_other;
      }
      for (Eigen::Index i = 0; i < n; ++i) {
        const int label = fit.labels[i];
        upper[i] += moved[label];
        lower[i] -= label == most_moved ? second_most : moved[most_moved];
        const double bound = std::max(half_gap[label], lower[i]) * kBoundMargin;
        if (upper[i] < bound) continue;
        const double* x = points.row(i).data();
        const double own_squared = SquaredDistance(x, centres.row(label).data(), dims);
        upper[i] = std::sqrt(own_squared);
        if (upper[i] < bound) continue;
        const NearestTwo found = FindNearestTwoNear(x, centres, label, own_squared, gap);
        if (found.label != label) {
          ++changed;
          resum[label] = resum[found.label] = 1;
        }
        fit.labels[i] = found.label;
        upper[i] = found.nearest;
        lower[i] = found.second;
      }
    }
    if (changed == 0) break;
  }
  fit.centres = std::move(centres);
  fit.sizes.assign(k, 0);
  fit.sse = 0;
  for (Eigen::Index i = 0; i < n; ++i) {
    ++fit.sizes[fit.labels[i]];
    fit.sse += SquaredDistance(points.row(i).data(), fit.centres.row(fit.labels[i]).data(), dims);
  }
  return fit;
}

}  // namespace

Result<KMeansFit> FitKMeans(const RowMatrix& points, int k, int restarts, int max_iterations,
                            std::uint64_t seed, int threads) {
  if (points.rows() == 0 || points.cols() == 0) {
    return Status::InvalidArgument("k-means: no points to fit (got " +
                                   std::to_string(points.rows()) + " × " +
                                   std::to_string(points.cols()) + "); need at least k rows");
  }
  if (!points.allFinite()) {
    return Status::InvalidArgument(
        "k-means: the points contain NaN or infinity; every value must be finite");
  }
  if (k < 1) {
    return Status::InvalidArgument("k-means: k must be at least 1, got " + std::to_string(k));
  }
  if (restarts < 1 || max_iterations < 1) {
    return Status::InvalidArgument("k-means: restarts and max_iterations must be at least 1, got " +
                                   std::to_string(restarts) + " and " +
                                   std::to_string(max_iterations));
  }
  const std::size_t distinct = CountDistinctRows(points);
  if (static_cast<std::size_t>(k) > distinct) {
    return Status::InvalidArgument("k-means: k = " + std::to_string(k) + " exceeds the " +
                                   std::to_string(distinct) +
                                   " distinct points; k must be at most that");
  }
  // Restarts are independent, so they run side by side on up to one thread per core
  // (the warm-up fit is most of a short replay's time). Every seed is drawn before any
  // restart runs and the winner is the lowest SSE, ties to the lowest restart number,
  // so the result does not depend on the number of threads or on their timing.
  PortableRandom restart_seeds(seed);
  std::vector<std::uint64_t> seeds(restarts);
  for (std::uint64_t& restart_seed : seeds) restart_seed = restart_seeds.NextRaw();
  std::atomic<int> next_restart{0};
  std::mutex mutex;  // guards best, best_restart and failure
  KMeansFit best;
  int best_restart = -1;
  std::exception_ptr failure;
  const auto run_restarts = [&] {
    try {
      for (int r = next_restart++; r < restarts; r = next_restart++) {
        PortableRandom random(seeds[r]);
        KMeansFit fit = RunLloyd(points, SeedKMeansPlusPlus(points, k, random), max_iterations);
        std::lock_guard lock(mutex);
        if (best_restart < 0 || fit.sse < best.sse || (fit.sse == best.sse && r < best_restart)) {
          best = std::move(fit);
          best_restart = r;
        }
      }
    } catch (...) {  // e.g. std::bad_alloc: rethrown on the calling thread below
      std::lock_guard lock(mutex);
      if (!failure) failure = std::current_exception();
      next_restart = restarts;
    }
  };
  if (threads <= 0) threads = static_cast<int>(std::max(1U, std::thread::hardware_concurrency()));
  {
    std::vector<std::jthread> helpers;
    for (int t = 1; t < std::min(threads, restarts); ++t) helpers.emplace_back(run_restarts);
    run_restarts();
  }  // joins the helpers
  if (failure) std::rethrow_exception(failure);
  best.restarts_run = restarts;
  return best;
}

Result<KMeansFit> RefineKMeans(const RowMatrix& points, const RowMatrix& initial_centres,
                               int max_iterations) {
  if (points.rows() == 0 || initial_centres.rows() == 0 ||
      points.cols() != initial_centres.cols()) {
    return Status::InvalidArgument(
        "k-means refinement: need points and centres with the same "
        "number of columns, got " +
        std::to_string(points.cols()) + " and " + std::to_string(initial_centres.cols()) +
        " (rows " + std::to_string(points.rows()) + ", " + std::to_string(initial_centres.rows()) +
        ")");
  }
  if (!points.allFinite() || !initial_centres.allFinite()) {
    return Status::InvalidArgument(
        "k-means refinement: the points or centres contain NaN or infinity; every value must "
        "be finite");
  }
  if (initial_centres.rows() > points.rows() || max_iterations < 1) {
    return Status::InvalidArgument(
        "k-means refinement: need k <= points and max_iterations >= 1, "
        "got k = " +
        std::to_string(initial_centres.rows()) + ", " + std::to_string(points.rows()) +
        " points, " + std::to_string(max_iterations) + " iterations");
  }
  KMeansFit fit = RunLloyd(points, initial_centres, max_iterations);
  fit.restarts_run = 1;
  return fit;
}

}  // namespace seston
