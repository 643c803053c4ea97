// ServiceBackend: the HTTP API's view of the live daemon (api/api_backend.h).
//
// Reads answer from the newest ServiceSnapshot on the SnapshotBoard and never touch the
// pipeline. Writes (label, baseline) are posted to the pipeline thread through the
// ServiceLoop and waited for, at most write_timeout_seconds (then Unavailable -> 503);
// StationService applies them and checkpoints, so they persist across restarts.
//
// Counts window (event time, s): to = `to` when given, else the end of the count bin
// holding the newest counted particle; from = `from`, else to - `window`, else
// to - kDefaultWindowSeconds (one hour). Only particles of closed samples are counted
// (a socket sample counts once its close record arrived, a file once it was read).
// Every living cluster is listed, with 0 when it has no particle in the window; a retired
// one only when it has. Before anything was counted, Counts is FailedPrecondition (503)
// saying how far warm-up is.
//
// Health state: "degraded" when the snapshot says so (writing fails, or the start fell
// back to the previous checkpoint), else "warming-up" before the first fit, else
// "running". last_error is the first problem of this process.
//
// Thread safety: every method may be called from any thread at once (see ApiBackend).
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "api/api_backend.h"
#include "base/clock.h"
#include "pipeline/service_loop.h"
#include "pipeline/service_metrics.h"
#include "pipeline/service_snapshot.h"

namespace seston {

class ServiceBackend final : public ApiBackend {
 public:
  static constexpr double kDefaultWindowSeconds = 3600;

  struct Backlog {
    std::uint64_t files = 0;    // drop files waiting to be read
    std::uint64_t records = 0;  // socket lines waiting for the pipeline
  };

  // `board`, `loop` and `clock` must outlive the backend; `backlog` is called on API
  // threads and must be thread-safe.
  ServiceBackend(std::shared_ptr<const SnapshotBoard> board, ServiceLoop& loop, const Clock& clock,
                 std::function<Backlog()> backlog, double write_timeout_seconds = 10);

  HealthView Health() override;
  Result<CountsView> Counts(std::optional<double> from_seconds, std::optional<double> to_seconds,
                            std::optional<double> window_seconds) override;
  std::vector<ClusterView> Clusters() override;
  Status SetLabel(std::uint32_t id, std::string label) override;
  nlohmann::json Alerts() override;
  Status AcceptBaseline() override;
  std::string Metrics() override;  // pipeline/service_metrics.h
  RecentParticlesView RecentParticles(std::size_t limit) override;

  // Adds what the snapshot does not hold to the metrics (inotify overflows, forwarding,
  // reloads); called on API threads, must be thread-safe. Set before serving.
  void SetMetricsExtras(std::function<void(ServiceMetricsExtras&)> fill) {
    metrics_extras_ = std::move(fill);
  }

 private:
  Result<std::shared_ptr<const ServiceSnapshot>> Latest() const;
  // Runs `write` on the pipeline thread and waits for its status.
  Status RunOnPipeline(std::function<Status(StationService&)> write);

  std::shared_ptr<const SnapshotBoard> board_;
  ServiceLoop& loop_;
  const Clock& clock_;
  std::function<Backlog()> backlog_;
  double write_timeout_seconds_;
  std::function<void(ServiceMetricsExtras&)> metrics_extras_;
};

}  // namespace seston
