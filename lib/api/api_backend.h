// ApiBackend: the interface between the HTTP API and whatever answers its questions.
//
// The API (router, server) knows nothing of the pipeline: it calls these methods and
// turns what they return into HTTP. The daemon implements them over its immutable
// snapshots (reads) and by posting to the pipeline's strand (writes); tests use a fake.
//
// Thread safety: every method may be called from any HTTP thread, concurrently with the
// pipeline and with each other, so implementations must be thread-safe. They must not
// block on the pipeline's hot path: read a shared_ptr<const ...> snapshot, or post a
// write and wait only for its own completion.
//
// Status codes and what the client sees (see api/router.h):
//   kInvalidArgument, kOutOfRange -> 400;  kNotFound -> 404;
//   kFailedPrecondition, kUnavailable, kResourceExhausted -> 503 with Retry-After;
//   anything else -> 500. The Status message is shown to the client as is.
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "api/api_views.h"
#include "base/status.h"

namespace seston {

// Most steps one series request may ask for.
inline constexpr int kMaxSeriesSteps = 1000;
// Most particles one recent-particles request may ask for.
inline constexpr std::size_t kMaxRecentParticles = 10000;

class ApiBackend {
 public:
  virtual ~ApiBackend() = default;

  // Always answers, also while warming up (state says which).
  virtual HealthView Health() = 0;

  // Counts over an event-time window. The router has checked its arguments: at most one
  // of `from_seconds` and `window_seconds` is set; window_seconds > 0; from < to when
  // both are set. Resolution, all in event seconds:
  //   to   = to_seconds, else the latest event time seen;
  //   from = from_seconds, else to - window_seconds, else to - a default window of the
  //          backend's choosing (document it; one hour is suggested).
  // While warming up, answer with an empty cluster list and every particle unclassified,
  // or return FailedPrecondition (-> 503) when there is nothing to count yet.
  virtual Result<CountsView> Counts(std::optional<double> from_seconds,
                                    std::optional<double> to_seconds,
                                    std::optional<double> window_seconds) = 0;

  // Every cluster ever born, retired ones included, by ascending id; empty before the fit.
  virtual std::vector<ClusterView> Clusters() = 0;

  // Names cluster `id` (label already validated: 1..64 printable UTF-8 characters).
  // NotFound for an unknown id.
  virtual Status SetLabel(std::uint32_t id, std::string label) = 0;

  // {"active": [...], "recent": [...]}, alert objects as the alerts module writes them.
  virtual nlohmann::json Alerts() = 0;

  // Takes the current cluster proportions and centres as the new drift baseline.
  // FailedPrecondition while warming up.
  virtual Status AcceptBaseline() = 0;

  // Prometheus text exposition format, version 0.0.4; may be empty.
  virtual std::string Metrics() = 0;

  // Counts in `steps` consecutive steps of `step_seconds` ending at `to_seconds` (else
  // where Counts would end its default window). The router has checked the arguments:
  // step_seconds > 0, 1 <= steps <= kMaxSeriesSteps. The default asks Counts once per
  // step; an error of Counts (e.g. FailedPrecondition while nothing is counted) is
  // returned as is. Clusters are those of any step, with their labels.
  virtual Result<SeriesView> Series(std::optional<double> to_seconds, double step_seconds,
                                    int steps);

  // The newest classified particles, at most `limit` (>= 1), oldest first. The default
  // has none.
  virtual RecentParticlesView RecentParticles(std::size_t limit);
};

}  // namespace seston
