// MiniBatchKMeans: the online clustering model: every particle gets a cluster id as it
// arrives, and the centres follow the population slowly.
//
// Life cycle
//  - Create() fits k clusters to the warm-up sample (FitKMeans; k from SelectK when
//    options.k == 0) and gives them ids 1..k. Id 0 means "unclassified"; ids are never
//    reused (next_id() only grows), so labels a technician attaches to an id stay true.
//  - ProcessBatch() classifies a batch and moves the centres (Sculley 2010, "Web-scale
//    k-means clustering"), in this order:
//      1. forgetting: every active weight n_c *= 2^(−m / half_life_particles) for a
//         batch of m rows (skipped when half_life_particles is 0), and, when
//         half_life_seconds > 0, n_c *= 2^(−Δt / half_life_seconds) with Δt the event
//         time from the latest batch end seen so far to this batch's last time, clamped
//         at 0. Both factors multiply, so the decay over a stream does not depend on how
//         it is cut into batches;
//      2. every row is assigned to its nearest active centre as the centres stood at the
//         batch start (AssignNearest);
//      3. a row farther from that centre than the cluster's novelty threshold gets id 0,
//         does not move any centre and is appended to the novelty buffer (bounded:
//         the oldest entry is dropped when full); every other row, in row order, does
//         n_c += 1; c += (x − c)/n_c.
//    Centres are never re-seeded at random, and the same inputs give the same outputs.
//  - AddCluster / RetireCluster change the set of clusters on behalf of the drift stage
//    (a birth from the novelty buffer, a refit matched by cluster_matcher.h). Retired
//    clusters stay listed, frozen, and take no more points.
//
// Units: points, centres, distances, thresholds and spreads in standardised feature
// units (z); weights in (decayed) particles; times in event seconds since the epoch.
//
// Thread safety: not thread-safe; one strand owns the model and mutates it. Readers get a
// copy or a snapshot made on that strand (the class is a copyable value).
#pragma once

#include <Eigen/Dense>
#include <cstdint>
#include <deque>
#include <nlohmann/json.hpp>
#include <optional>
#include <span>
#include <vector>

#include "base/matrix.h"
#include "base/status.h"
#include "model/k_selector.h"
#include "model/model_options.h"

namespace seston {

class MiniBatchKMeans {
 public:
  struct Cluster {
    std::uint32_t id = 0;
    Eigen::VectorXd centre;        // z units
    double weight = 0;             // n_c, decayed particle count
    double novelty_threshold = 0;  // distance (not squared), z; +infinity: no novelty
    double spread = 0;             // RMS distance of warm-up members to the centre, z
    std::uint64_t assigned = 0;    // particles classified into it since birth
    double born_seconds = 0;       // event s
    bool retired = false;
    double retired_seconds = 0;  // event s; meaningful only when retired
  };

  struct NoveltyPoint {
    std::uint64_t sequence = 0;  // 1, 2, ... in arrival order; names the point for removal
    double seconds = 0;          // event s
    Eigen::VectorXd point;       // z units
  };

  // Fits the warm-up sample (rows are particles, z units). The first ProcessBatch decays
  // from warmup_end_seconds. Errors (InvalidArgument): options out of range (k < 0,
  // restarts or max_iterations < 1, negative or non-finite half-lives, novelty_quantile
  // outside (0, 1], novelty_buffer 0) and every error of FitKMeans / SelectK.
  static Result<MiniBatchKMeans> Create(const ModelOptions& options, const RowMatrix& warmup_points,
                                        double warmup_end_seconds);

  // Classifies and learns one batch (rows × dims(), z units) spanning event times
  // batch_first_seconds..batch_last_seconds. Writes one id (0: unclassified) and one
  // distance (z, to the nearest active centre at the batch start; +infinity when no
  // cluster is active) per row. row_seconds, if not empty, gives each row's event time
  // for the novelty buffer (else every row gets batch_first_seconds). Precondition:
  // points.cols() == dims(), all values finite (the features stage rejects others), row_seconds
  // empty or of points.rows() entries.
  void ProcessBatch(const RowMatrix& points, double batch_first_seconds, double batch_last_seconds,
                    std::vector<std::uint32_t>* ids, std::vector<double>* distances,
                    std::span<const double> row_seconds = {});

  // Nearest active centre and novelty test as in ProcessBatch, without decay, update or
  // novelty buffer: for particles that already shaped the fit (the warm-up sample).
  void Classify(const RowMatrix& points, std::vector<std::uint32_t>* ids,
                std::vector<double>* distances) const;

  // Active and retired clusters, in order of id.
  const std::vector<Cluster>& clusters() const { return clusters_; }
  const Cluster* FindCluster(std::uint32_t id) const;
  int active_count() const;
  int dims() const { return dims_; }
  std::uint32_t next_id() const { return next_id_; }
  // The k selection made at Create (nullopt when options.k was given).
  const std::optional<KSelection>& k_selection() const { return k_selection_; }

  // Adds an active cluster and returns its new id. Precondition: centre.size() == dims().
  std::uint32_t AddCluster(const Eigen::VectorXd& centre, double weight, double novelty_threshold,
                           double spread, double born_seconds);
  // Retires an active cluster. Errors: NotFound (no such id), FailedPrecondition
  // (already retired).
  Status RetireCluster(std::uint32_t id, double seconds);

  // Unclassified points, oldest first, at most options.novelty_buffer of them.
  const std::deque<NoveltyPoint>& novelty_buffer() const { return novelty_; }
  // Drops the buffered points with these sequence numbers (unknown ones are ignored),
  // e.g. after they founded a new cluster.
  void RemoveNoveltyPoints(std::span<const std::uint64_t> sequences);

  // Complete state, doubles written so that they read back bit for bit.
  nlohmann::json ToJson() const;
  // Errors (Corruption): missing or mistyped keys, or values breaking the invariants
  // (dimensions, ids distinct and below next_id, finite centres), with the key named.
  static Result<MiniBatchKMeans> FromJson(const nlohmann::json& json);

 private:
  MiniBatchKMeans() = default;
  void AssignToActive(const RowMatrix& points, const std::vector<const Cluster*>& active,
                      std::vector<int>* nearest, std::vector<double>* squared_distance) const;

  int dims_ = 0;
  double half_life_particles_ = 0;
  double half_life_seconds_ = 0;
  std::size_t novelty_capacity_ = 0;
  double last_seconds_ = 0;  // latest batch end seen, event s
  std::uint32_t next_id_ = 1;
  std::uint64_t next_novelty_sequence_ = 1;
  std::vector<Cluster> clusters_;
  std::deque<NoveltyPoint> novelty_;
  std::optional<KSelection> k_selection_;
};

}  // namespace seston
