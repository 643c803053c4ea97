// ServiceSnapshot: an immutable picture of the live daemon at one instant, for the threads
// that answer questions (HTTP API, metrics) while the pipeline thread moves on.
//
// The pipeline thread (StationService) builds a new snapshot after each file, each batch
// of socket records (at most a few per second), each checkpoint and each label or
// baseline change, and publishes it on a SnapshotBoard. Readers take the newest with
// SnapshotBoard::Latest() and may keep it as long as they like: nothing in it changes,
// and nothing in it points into the pipeline (the count book snapshot shares only
// immutable chunks, see counts/count_book.h).
//
// Units: event times in s since 1970-01-01T00:00:00Z (UTC) taken from the records; wall
// times (last checkpoint) from the Clock; volumes in mL.
//
// Thread safety: ServiceSnapshot is a value that is never changed once published.
// SnapshotBoard may be used from any thread: a mutex guards only the pointer swap, so a
// reader never waits for the pipeline, only (for nanoseconds) for another pointer copy.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <mutex>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "api/api_views.h"
#include "counts/count_book_snapshot.h"
#include "drift/detector_reading.h"
#include "pipeline/pipeline.h"

namespace seston {

struct ServiceSnapshot {
  std::string station;
  std::string version;
  double started_wall_seconds = 0;  // when this daemon process started, wall s

  bool warming_up = true;
  std::uint64_t warmup_held = 0;    // particles held for the warm-up fit
  std::uint64_t warmup_needed = 0;  // model.warmup_particles
  // Writing state (checkpoint, count or alert files) fails now, or the last start had to
  // fall back to checkpoint.previous; `problem` says what, first problem kept.
  bool degraded = false;
  std::string problem;

  std::optional<double> last_particle_seconds;  // event time of the newest particle
  PipelineCounters counters;
  std::uint64_t files_done = 0;             // moved to done/ since the state began
  std::uint64_t files_quarantined = 0;      // moved to quarantine/ since the state began
  std::uint64_t files_waiting_to_move = 0;  // committed, still in the drop directory
  int k = 0;                                // active clusters; 0 before the fit

  std::optional<double> last_checkpoint_wall_seconds;
  std::uint64_t checkpoints_written = 0;  // since this process started
  std::uint64_t checkpoint_failures = 0;
  std::uint64_t socket_open_samples = 0;     // socket samples not yet closed
  std::uint64_t socket_records_skipped = 0;  // re-sent records already held, since start
  std::uint64_t socket_commits_pending = 0;  // closes waiting for their checkpoint

  double bin_seconds = 60;                          // width of a count bin, s
  std::shared_ptr<const CountBookSnapshot> counts;  // never null once published
  std::vector<ClusterView> clusters;  // every cluster ever born, ascending id; labels ""
                                      // where nobody named one
  nlohmann::json alerts = {{"active", nlohmann::json::array()},
                           {"recent", nlohmann::json::array()}};
  std::vector<DetectorReading> detector_readings;  // latest of each kind, for /metrics
  RecentParticlesView recent_particles;            // newest classified, for the status page
};

class SnapshotBoard {
 public:
  void Publish(std::shared_ptr<const ServiceSnapshot> snapshot);
  // The newest snapshot; null before the first Publish.
  std::shared_ptr<const ServiceSnapshot> Latest() const;

 private:
  mutable std::mutex mutex_;
  std::shared_ptr<const ServiceSnapshot> latest_;
};

}  // namespace seston
