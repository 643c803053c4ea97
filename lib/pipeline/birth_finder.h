// FindBirth: is there a new group among the particles that fit no cluster?
//
// The model keeps the particles farther than every cluster's novelty threshold in its
// novelty buffer (model/mini_batch_kmeans.h). Most of them are strays from the tails of
// the known groups, scattered around those groups; a new kind of particle instead piles
// up in one place. The rule:
//   1. nothing is looked at until the buffer holds `min_particles` points;
//   2. the buffer is split by k-means (FitKMeans, k = 1 .. kBirthMaxSplit, fixed seed,
//      so the answer is deterministic) — k above 1 lets a new group be separated from
//      the strays around it;
//   3. a part is a candidate when it has at least `min_particles` points and is
//        tight: its RMS distance to its own centre is at most kBirthSpreadFactor times
//               the median spread of the active clusters, and
//        far:   its centre is farther from the nearest active centre than that
//               cluster's novelty threshold (strays around a known group average out
//               close to that group's centre, so they fail this test);
//   4. the largest candidate wins (ties: the smaller k, then the lower part).
// The new cluster's spread is the part's RMS distance; its novelty threshold is that
// spread times the median threshold-to-spread ratio of the active clusters, so it is
// scaled like theirs. Its members are the part's points within that threshold.
//
// Units: z (standardised feature units). Thread safety: a pure function.
#pragma once

#include <Eigen/Dense>
#include <cstddef>
#include <cstdint>
#include <optional>
#include <vector>

#include "model/mini_batch_kmeans.h"

namespace seston {

inline constexpr int kBirthMaxSplit = 3;
inline constexpr double kBirthSpreadFactor = 1.5;
// Look-back of a birth, in novelty windows (drift.novelty.window_particles): with the
// defaults 4 × 5000 particles, in which the tail strays of the known groups (about 0.5 %,
// 100 particles, scattered around all of them) cannot form a group of 200, while a new
// kind of particle makes one as soon as it is about 1 % of the stream.
inline constexpr int kBirthLookbackWindows = 4;
// DriftMonitor searches again only when the novelty buffer has gained
// birth_min_particles / kBirthSearchStepDivisor new points since its last search, so a
// new group is announced at most that many unclassified particles later than a search
// at every evaluation would announce it (50 with the default 200).
inline constexpr std::size_t kBirthSearchStepDivisor = 4;

struct BirthCandidate {
  Eigen::VectorXd centre;              // z
  double spread = 0;                   // RMS distance of the part's points, z
  double novelty_threshold = 0;        // z
  std::vector<std::uint64_t> members;  // novelty-buffer sequence numbers
  double first_seconds = 0;            // event time of the earliest member
  std::uint32_t nearest_id = 0;        // nearest active cluster
  double nearest_distance = 0;         // from the centre to it, z
};

std::optional<BirthCandidate> FindBirth(const MiniBatchKMeans& model, std::size_t min_particles,
                                        double not_before_seconds);

}  // namespace seston
