#include "pipeline/birth_finder.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "model/kmeans_fitter.h"

namespace seston {
namespace {

constexpr int kRestarts = 3;
constexpr int kMaxIterations = 100;
constexpr std::uint64_t kSeed = 20260601;

double MedianOf(std::vector<double> values) {
  std::sort(values.begin(), values.end());
  const std::size_t n = values.size();
  return n % 2 == 1 ? values[n / 2] : (values[n / 2 - 1] + values[n / 2]) / 2;
}

}  // namespace

std::optional<BirthCandidate> FindBirth(const MiniBatchKMeans& model, std::size_t min_particles,
                                        double not_before_seconds) {
  std::vector<const MiniBatchKMeans::NoveltyPoint*> buffer;
  for (const auto& entry : model.novelty_buffer()) {
    if (entry.seconds >= not_before_seconds) buffer.push_back(&entry);
  }
  if (min_particles == 0 || buffer.size() < min_particles) return std::nullopt;

  std::vector<const MiniBatchKMeans::Cluster*> active;
  std::vector<double> spreads;
  std::vector<double> threshold_ratios;
  for (const auto& cluster : model.clusters()) {
    if (cluster.retired) continue;
    active.push_back(&cluster);
    if (cluster.spread > 0 && std::isfinite(cluster.spread)) {
      spreads.push_back(cluster.spread);
      if (std::isfinite(cluster.novelty_threshold)) {
        threshold_ratios.push_back(cluster.novelty_threshold / cluster.spread);
      }
    }
  }
  if (active.empty() || spreads.empty() || threshold_ratios.empty()) return std::nullopt;
  const double tight_limit = kBirthSpreadFactor * MedianOf(spreads);
  const double threshold_ratio = MedianOf(threshold_ratios);

  const auto n = static_cast<Eigen::Index>(buffer.size());
  RowMatrix points(n, model.dims());
  for (Eigen::Index i = 0; i < n; ++i) {
    points.row(i) = buffer[static_cast<std::size_t>(i)]->point.transpose();
  }

  std::optional<BirthCandidate> best;
  for (int k = 1; k <= kBirthMaxSplit; ++k) {
    Result<KMeansFit> fit = FitKMeans(points, k, kRestarts, kMaxIterations, kSeed);
    if (!fit.ok()) break;  // fewer distinct points than k
    for (int part = 0; part < k; ++part) {
      const std::size_t size = fit->sizes[static_cast<std::size_t>(part)];
      if (size < min_particles || (best && size <= best->members.size())) continue;
      const Eigen::VectorXd centre = fit->centres.row(part).transpose();
      double sum_of_squares = 0;
      for (Eigen::Index i = 0; i < n; ++i) {
        if (fit->labels[static_cast<std::size_t>(i)] == part) {
          sum_of_squares += (points.row(i).transpose() - centre).squaredNorm();
        }
      }
      const double spread = std::sqrt(sum_of_squares / static_cast<double>(size));
      if (!(spread > 0 && spread <= tight_limit)) continue;
      const MiniBatchKMeans::Cluster* nearest = nullptr;
      double nearest_distance = std::numeric_limits<double>::infinity();
      for (const auto* cluster : active) {
        const double distance = (cluster->centre - centre).norm();
        if (distance < nearest_distance) {
          nearest_distance = distance;
          nearest = cluster;
        }
      }
      if (!(nearest_distance > nearest->novelty_threshold)) continue;
      BirthCandidate candidate;
      candidate.centre = centre;
      candidate.spread = spread;
      candidate.novelty_threshold = spread * threshold_ratio;
      candidate.nearest_id = nearest->id;
      candidate.nearest_distance = nearest_distance;
      candidate.first_seconds = std::numeric_limits<double>::infinity();
      for (Eigen::Index i = 0; i < n; ++i) {
        const auto& entry = *buffer[static_cast<std::size_t>(i)];
        if (fit->labels[static_cast<std::size_t>(i)] == part &&
            (entry.point - centre).norm() <= candidate.novelty_threshold) {
          candidate.members.push_back(entry.sequence);
          candidate.first_seconds = std::min(candidate.first_seconds, entry.seconds);
        }
      }
      if (candidate.members.size() < min_particles) continue;
      best = std::move(candidate);
    }
  }
  return best;
}

}  // namespace seston
