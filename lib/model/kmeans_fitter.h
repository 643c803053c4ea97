// Batch k-means: k-means++ seeding, Lloyd's iterations, best of several restarts.
//
// Used on the warm-up sample (to start the online model and to choose k) and for any
// later refit. Units: points in standardised feature units (z); SSE in z².
//
// Method
//  - Seeding: greedy k-means++ (Arthur & Vassilvitskii 2007). The first centre is a point
//    drawn uniformly; each further centre is chosen by drawing 2 + floor(ln k) candidates
//    with probability proportional to D² (squared distance to the nearest centre chosen
//    so far) and keeping the candidate that gives the lowest total D² (ties: the first
//    drawn). Chosen centres are distinct points.
//  - Lloyd: assign every point to its nearest centre (squared distances summed in
//    feature order; ties to the lowest index), move each centre to the mean of its
//    points, repeat until no assignment changes or max_iterations mean updates have been
//    made. Hamerly's bounds skip the points that provably keep their centre, and
//    Elkan's centre-distance test the centres that cannot be nearer; the result
//    is that of the plain iteration (tests/model/kmeans_fitter_test.cc checks it).
//  - Empty cluster: when a cluster has no points at a mean update, it is moved onto the
//    point farthest from its current centre (ties: lowest row), taken from a cluster
//    that keeps at least one point; several empty clusters are handled in index order,
//    each taking the next farthest point. This is deterministic and never random.
//  - Restarts: `restarts` independent seedings, each from its own generator whose seed is
//    the next raw output of mt19937_64(seed); the lowest SSE wins (ties: the earliest).
//    Restarts run side by side on up to one thread per core; the result is the same on
//    any number of threads.
//
// Hand-written rather than taken from a library: the model's identity and replay
// guarantees need this exact seeding, tie-breaking, empty-cluster rule and portable random
// stream, and none of the project's Debian libraries (Eigen, Boost) provides k-means.
//
// Thread safety: a pure function; call from any thread.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

#include "base/matrix.h"
#include "base/status.h"

namespace seston {

struct KMeansFit {
  RowMatrix centres;               // k × d, z units
  std::vector<int> labels;         // per point, 0..k-1
  std::vector<std::size_t> sizes;  // points per cluster
  double sse = 0;                  // sum of squared distances to own centre, z²
  int iterations = 0;              // Lloyd mean updates of the winning restart
  int restarts_run = 0;
};

// Fits k clusters to `points` (n × d), running the restarts on `threads` threads
// (0: one per core). Errors (InvalidArgument): empty input, a non-finite value, k < 1,
// k greater than the number of distinct points, restarts < 1, max_iterations < 1.
Result<KMeansFit> FitKMeans(const RowMatrix& points, int k, int restarts, int max_iterations,
                            std::uint64_t seed, int threads = 0);

// Lloyd's iterations from given centres (k × d) without seeding, e.g. to refine the
// current centres on new data; restarts_run is 1. Errors (InvalidArgument): empty or
// non-finite points or centres, different numbers of columns, k above the number of
// points, max_iterations < 1.
Result<KMeansFit> RefineKMeans(const RowMatrix& points, const RowMatrix& initial_centres,
                               int max_iterations);

}  // namespace seston
