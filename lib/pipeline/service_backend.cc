#include "pipeline/service_backend.h"

#include <chrono>
#include <cmath>
#include <future>
#include <map>
#include <utility>

#include "base/time_format.h"
#include "counts/count_types.h"

namespace seston {
namespace {

std::optional<double> FiniteOrNone(double value) {
  return std::isfinite(value) ? std::optional<double>(value) : std::nullopt;
}

}  // namespace

ServiceBackend::ServiceBackend(std::shared_ptr<const SnapshotBoard> board, ServiceLoop& loop,
                               const Clock& clock, std::function<Backlog()> backlog,
                               double write_timeout_seconds)
    : board_(std::move(board)),
      loop_(loop),
      clock_(clock),
      backlog_(std::move(backlog)),
      write_timeout_seconds_(write_timeout_seconds) {}

Result<std::shared_ptr<const ServiceSnapshot>> ServiceBackend::Latest() const {
  auto snapshot = board_->Latest();
  if (!snapshot) return Status::Unavailable("the daemon is starting; try again in a moment");
  return snapshot;
}

HealthView ServiceBackend::Health() {
  HealthView health;
  auto snapshot = board_->Latest();
  const Backlog backlog = backlog_ ? backlog_() : Backlog{};
  health.backlog_files = backlog.files;
  health.backlog_records = backlog.records;
  if (!snapshot) {
    health.state = "warming-up";
    return health;
  }
  const ServiceSnapshot& s = *snapshot;
  health.state = s.degraded ? "degraded" : s.warming_up ? "warming-up" : "running";
  health.uptime_seconds = std::max(0.0, clock_.WallSeconds() - s.started_wall_seconds);
  health.last_particle_seconds = s.last_particle_seconds;
  health.backlog_files += s.files_waiting_to_move;
  health.last_error = s.problem;
  health.particles_accepted = s.counters.accepted;
  health.particles_rejected = s.counters.rejected;
  health.particles_unclassified = s.counters.unclassified;
  health.files_done = s.files_done;
  health.files_quarantined = s.files_quarantined;
  health.k = s.k;
  health.station = s.station;
  health.version = s.version;
  health.last_checkpoint_seconds = s.last_checkpoint_wall_seconds;
  return health;
}

Result<CountsView> ServiceBackend::Counts(std::optional<double> from_seconds,
                                          std::optional<double> to_seconds,
                                          std::optional<double> window_seconds) {
  SESTON_ASSIGN_OR_RETURN(auto snapshot, Latest());
  const CountBookSnapshot& book = *snapshot->counts;
  double to = 0;
  if (to_seconds) {
    to = *to_seconds;
  } else {
    const double latest = book.latest_event_seconds();
    if (!std::isfinite(latest)) {
      if (snapshot->warming_up) {
        return Status::FailedPrecondition(
            "nothing counted yet: warming up, " + std::to_string(snapshot->warmup_held) + " of " +
            std::to_string(snapshot->warmup_needed) + " particles held for the first fit");
      }
      return Status::FailedPrecondition("nothing counted yet: no sample has been closed");
    }
    to = BinStartOf(BinIndexOf(latest, book.bin_seconds()) + 1, book.bin_seconds());
  }
  const double from =
      from_seconds ? *from_seconds : to - window_seconds.value_or(kDefaultWindowSeconds);
  if (!(from < to)) {
    return Status::InvalidArgument("the window is empty: from " + FormatIso8601(from) +
                                   " is not before to " + FormatIso8601(to));
  }
  const CountsWindow window = book.Query(from, to);
  CountsView view;
  view.from_seconds = from;
  view.to_seconds = to;
  std::map<std::uint32_t, std::uint64_t> counts;
  for (const ClusterView& cluster : snapshot->clusters) {
    if (!cluster.retired) counts[cluster.id] = 0;
  }
  for (const ClusterWindowCount& cluster : window.clusters)
    counts[cluster.cluster_id] = cluster.count;
  std::map<std::uint32_t, std::string> labels;
  for (const ClusterView& cluster : snapshot->clusters) labels[cluster.id] = cluster.label;
  for (const auto& [id, count] : counts) {
    view.clusters.push_back({id, labels[id], count, FiniteOrNone(PerMl(count, window.volume_ml))});
  }
  view.unclassified = window.unclassified;
  view.unclassified_per_ml = FiniteOrNone(PerMl(window.unclassified, window.volume_ml));
  view.rejected = window.rejected;
  view.volume_ml = window.volume_ml;
  view.total = window.total;
  return view;
}

std::vector<ClusterView> ServiceBackend::Clusters() {
  auto snapshot = board_->Latest();
  return snapshot ? snapshot->clusters : std::vector<ClusterView>{};
}

nlohmann::json ServiceBackend::Alerts() {
  auto snapshot = board_->Latest();
  if (!snapshot) return {{"active", nlohmann::json::array()}, {"recent", nlohmann::json::array()}};
  return snapshot->alerts;
}

Status ServiceBackend::RunOnPipeline(std::function<Status(StationService&)> write) {
  auto promise = std::make_shared<std::promise<Status>>();
  std::future<Status> done = promise->get_future();
  bool posted = loop_.Post([promise, write = std::move(write)](StationService& service) {
    promise->set_value(write(service));
  });
  if (!posted) {
    return Status::Unavailable(
        "the pipeline has too many requests waiting, or is stopping; "
        "try again");
  }
  const auto timeout = std::chrono::duration<double>(write_timeout_seconds_);
  if (done.wait_for(timeout) != std::future_status::ready) {
    return Status::Unavailable("the pipeline did not answer within " +
                               std::to_string(static_cast<int>(write_timeout_seconds_)) +
                               " s (it may be reading a large file); the request may still "
                               "be applied; try again");
  }
  return done.get();
}

Status ServiceBackend::SetLabel(std::uint32_t id, std::string label) {
  return RunOnPipeline([id, label = std::move(label)](StationService& service) mutable {
    return service.SetLabel(id, std::move(label));
  });
}

Status ServiceBackend::AcceptBaseline() {
  return RunOnPipeline([](StationService& service) { return service.AcceptBaseline(); });
}

std::string ServiceBackend::Metrics() {
  auto snapshot = board_->Latest();
  const Backlog backlog = backlog_ ? backlog_() : Backlog{};
  ServiceMetricsExtras extras;
  extras.wall_seconds = clock_.WallSeconds();
  extras.backlog_files = backlog.files;
  extras.backlog_records = backlog.records;
  extras.resident_bytes = ProcessResidentBytes();
  if (metrics_extras_) metrics_extras_(extras);
  static const std::vector<DetectorReading> kNoReadings;
  return ServiceMetricsText(snapshot.get(), snapshot ? snapshot->detector_readings : kNoReadings,
                            extras);
}

RecentParticlesView ServiceBackend::RecentParticles(std::size_t limit) {
  auto snapshot = board_->Latest();
  if (!snapshot) return {};
  RecentParticlesView view;
  view.columns = snapshot->recent_particles.columns;
  const auto& all = snapshot->recent_particles.particles;
  const std::size_t skip = all.size() > limit ? all.size() - limit : 0;
  view.particles.assign(all.begin() + static_cast<std::ptrdiff_t>(skip), all.end());
  return view;
}

}  // namespace seston
