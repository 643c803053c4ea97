// Options of the clustering model. Distances are in standardised feature units (z) when
// standardisation is on, else in transformed input units.
#pragma once

#include <cstddef>
#include <cstdint>

namespace seston {

enum class KSelectionRule {
  kElbow,       // knee of the SSE curve (largest distance below the chord); default
  kSilhouette,  // highest mean silhouette on a subsample
};

struct ModelOptions {
  int k = 6;                        // groups; 0 means "auto" (choose within k_min..k_max)
  int k_min = 2;                    // auto range, inclusive
  int k_max = 12;
  KSelectionRule k_rule = KSelectionRule::kElbow;
  std::size_t warmup_particles = 5000;   // particles collected before the first fit
  int restarts = 10;                // k-means++ / Lloyd restarts, best SSE kept
  int max_iterations = 300;         // Lloyd iterations per restart
  std::size_t batch_size = 256;     // particles per mini-batch
  double half_life_particles = 200000;   // forgetting half-life in particles; 0 = never
  double half_life_seconds = 0;     // forgetting half-life in event seconds; 0 = off
  double novelty_quantile = 0.995;  // per-cluster distance quantile; 1.0 = no novelty
  std::size_t novelty_buffer = 4096;     // unclassified particles kept for birth detection
  std::uint64_t seed = 1;           // all randomness comes from this seed
  std::size_t silhouette_sample = 2000;  // points used for silhouette scores
};

}  // namespace seston
