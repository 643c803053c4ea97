// The parts of `sestond run` that a SIGHUP may change while it runs, and the reload itself.
//
// AlertOutputs carries each durable alert file to the two messengers: the hook
// (AlertHookRunner) and, when alerts.alertmanager.url is set, the Alertmanager
// (alerts/alertmanager_client.h). Both run on threads of their own; Deliver only reads
// the (small) alert file and queues. A reload replaces the hook runner and reconfigures,
// starts or stops the forwarding; a replaced runner is kept idle until shutdown so that
// the pipeline never waits for a hook in progress.
//
// Reloader::Reload, on SIGHUP: reads and checks the config file; an invalid file is
// logged with every problem and the running configuration is kept. Otherwise the change
// is sorted by DiffConfigs (config/config_diff.h): any refused key (features, model,
// counts.bin_seconds) refuses the whole reload with a message naming the keys; keys that
// need a restart are logged as kept at their old value; the live keys are posted to the
// pipeline thread (StationService::ApplyLiveConfig, AlertOutputs::Reconfigure) and the
// log level is set. Each outcome is one log line and one count in the metrics.
//
// Threads: Reload on the io thread (it only reads the file and posts); Deliver and
// Reconfigure on the pipeline thread; forwarding_stats and the counters from any thread.
#pragma once

#include <atomic>
#include <cstdint>
#include <filesystem>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <vector>

#include "alerts/alertmanager_client.h"
#include "base/clock.h"
#include "base/status.h"
#include "config/config.h"
#include "daemon/alert_hook_runner.h"
#include "pipeline/service_loop.h"
#include "pipeline/service_metrics.h"

namespace seston::daemon {

class AlertOutputs {
 public:
  // `generator_url` is the status page's address, shown by the Alertmanager.
  static Result<std::unique_ptr<AlertOutputs>> Create(const AlertOptions& alerts,
                                                      const Clock& clock,
                                                      std::string generator_url);

  void Deliver(std::vector<std::filesystem::path> files);
  Status Reconfigure(const AlertOptions& alerts);
  std::optional<AlertmanagerForwarder::Stats> forwarding_stats() const;

 private:
  AlertOutputs(const Clock& clock, std::string generator_url)
      : clock_(clock), generator_url_(std::move(generator_url)) {}
  // A forwarder for `options`, or null when its url is "".
  Result<std::shared_ptr<AlertmanagerClient>> MakeForwarder(const AlertmanagerOptions& options);

  const Clock& clock_;
  std::string generator_url_;
  std::unique_ptr<AlertHookRunner> hooks_;
  std::vector<std::unique_ptr<AlertHookRunner>> retired_hooks_;
  AlertOptions options_;
  mutable std::mutex forwarder_mutex_;  // guards the pointer, for forwarding_stats
  std::shared_ptr<AlertmanagerClient> forwarder_;
};

// The HTTP poster of the Alertmanager forwarding: one connection per post.
AlertPoster HttpAlertPoster();

class Reloader {
 public:
  // `running` is the configuration sestond started with; the references must outlive
  // the reloader.
  Reloader(std::filesystem::path config_path, Config running, ServiceLoop& loop,
           AlertOutputs& outputs)
      : config_path_(std::move(config_path)),
        running_(std::move(running)),
        loop_(loop),
        outputs_(outputs) {}

  void Reload();

  // For the metrics.
  void AddCounts(ServiceMetricsExtras& extras) const {
    extras.reloads_applied = applied_.load();
    extras.reloads_invalid = invalid_.load();
    extras.reloads_refused = refused_.load();
  }

 private:
  std::filesystem::path config_path_;
  std::mutex mutex_;  // guards running_: Reload (io thread) and the posted task
  Config running_;
  ServiceLoop& loop_;
  AlertOutputs& outputs_;
  std::atomic<std::uint64_t> applied_{0};
  std::atomic<std::uint64_t> invalid_{0};
  std::atomic<std::uint64_t> refused_{0};
};

}  // namespace seston::daemon
