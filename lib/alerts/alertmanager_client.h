// Alert forwarding to a Prometheus Alertmanager through its HTTP API v2.
//
// The pipeline's raised and resolved alert events are mirrored as Alertmanager alerts:
//   POST <url>/api/v2/alerts  with a JSON array of
//   {"labels": {alertname, kind, cluster, station, severity},
//    "annotations": {summary, description, caution},
//    "startsAt": RFC 3339, "endsAt": RFC 3339, "generatorURL": the status page}
// Labels are stable for the life of an alert — they identify it to the Alertmanager —
// so a cluster's label (which a technician may rename) goes into the annotations only:
//   alertname  "seston_" + kind, e.g. "seston_composition"
//   kind       the detector kind; cluster  the primary cluster id, "none" when none
//   station    the configured station; severity  "alarm" | "warning"
// While an alert is active it is posted again every `resend_seconds`, each time with
// endsAt = now + 4 x resend_seconds, so the Alertmanager keeps it firing while seston
// runs and lets it lapse if seston stops. A resolved alert is posted once more with
// endsAt = its resolve time (no later than now), and then forgotten. One-off events
// (new_cluster, cluster_retired: raised and never resolved) are posted once with
// endsAt = now + 4 x resend_seconds. startsAt is the alert's `since`, no later than the
// moment it reached the forwarder, so an instrument clock running ahead cannot make
// startsAt fall after endsAt.
//
// Delivery: each post carries every alert held, in its present state (the API is
// idempotent: the Alertmanager merges alerts by their labels). A
// post that fails (no connection, timeout, HTTP 5xx or 429) is retried after 1 s, then
// 2 s, 4 s, ... up to max_retry_seconds; another HTTP error (4xx: the Alertmanager
// refuses the payload) is counted and not retried. Memory is bounded by
// max_pending_alerts: beyond it the oldest resolved or one-off alerts are dropped first,
// then the oldest active ones, and counted.
//
// AlertmanagerForwarder is that logic, pure (times are passed in: wall seconds since the
// epoch). AlertmanagerClient runs it on its own thread with an AlertPoster doing the
// HTTP, so the pipeline only ever takes a mutex for the time of a map update.
//
// Thread safety: AlertmanagerForwarder, one thread at a time. AlertmanagerClient: every
// public method may be called from any thread.
#pragma once

#include <condition_variable>
#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <thread>
#include <utility>

#include "alerts/alert_event.h"
#include "alerts/forwarding_options.h"
#include "base/clock.h"
#include "base/status.h"

namespace seston {

// Where posts go, parsed from AlertmanagerOptions::url.
struct AlertmanagerEndpoint {
  std::string host_port;  // "127.0.0.1:9093", "alertmanager.lan:9093", "[::1]:9093"
  std::string target;     // "/api/v2/alerts", or "/prefix/api/v2/alerts"
};

// InvalidArgument naming the url and what is accepted ("http://HOST:PORT[/PREFIX]").
Result<AlertmanagerEndpoint> ParseAlertmanagerUrl(std::string_view url);

// One postable alert of the v2 API for `event` (raised or resolved), with the given
// start and end, seconds since the epoch.
nlohmann::json AlertmanagerAlert(const AlertEvent& event, double starts_at, double ends_at,
                                 const std::string& generator_url);

class AlertmanagerForwarder {
 public:
  AlertmanagerForwarder(AlertmanagerOptions options, std::string generator_url)
      : options_(std::move(options)), generator_url_(std::move(generator_url)) {}

  // Takes one event of the pipeline at wall time `now`.
  void Observe(const AlertEvent& event, double now);

  // The JSON array to post now, or nullopt when nothing is due (nothing new, no resend
  // yet, or waiting out a retry pause).
  std::optional<std::string> Due(double now);
  // The post from the last Due was accepted (2xx), or refused for good (4xx other than
  // 429): either way what it carried is done. `error` is "" on success.
  void Delivered(double now, const std::string& error = "");
  // The post from the last Due failed and is retried after the back-off pause.
  void Failed(double now, const std::string& error);
  // The wall time at which Due may next have something, or nullopt for "only when an
  // event arrives".
  std::optional<double> NextDue() const;

  // Replaces the options (a reload); pending alerts stay.
  void SetOptions(AlertmanagerOptions options) { options_ = std::move(options); }
  const AlertmanagerOptions& options() const { return options_; }

  struct Stats {
    std::uint64_t posts_ok = 0;
    std::uint64_t posts_failed = 0;    // failed attempts, retried
    std::uint64_t posts_refused = 0;   // answered with a 4xx, not retried
    std::uint64_t alerts_dropped = 0;  // over max_pending_alerts
    std::size_t pending = 0;           // alerts held (active or awaiting delivery)
    std::optional<double> last_success_seconds;
    std::string last_error;
  };
  Stats stats() const;

 private:
  struct Entry {
    AlertEvent event;  // the raise (or the resolve when the raise was never seen)
    double starts_at = 0;
    std::optional<double> ends_at;  // set for resolved and one-off alerts
    bool one_off = false;
    bool dirty = true;          // changed since it was last delivered
    std::uint64_t version = 0;  // bumped at every change
    std::uint64_t order = 0;    // arrival, for dropping the oldest
  };
  using Key = std::pair<std::string, std::uint32_t>;  // kind, primary cluster

  void Put(const Key& key, Entry entry);
  void Bound();

  AlertmanagerOptions options_;
  std::string generator_url_;
  std::map<Key, Entry> entries_;
  std::map<Key, std::uint64_t> in_flight_;  // versions carried by the last Due
  std::uint64_t next_version_ = 1;
  std::uint64_t next_order_ = 1;
  std::optional<double> next_resend_;  // when active alerts are posted again
  std::optional<double> retry_at_;     // set while backing off
  double retry_pause_seconds_ = 0;     // the last pause, 0 after a success
  Stats stats_;
};

// Sends one post; the answer's HTTP status, or an error (unreachable, timed out).
using AlertPoster = std::function<Result<int>(const AlertmanagerEndpoint& endpoint,
                                              const std::string& body, double timeout_seconds)>;

class AlertmanagerClient {
 public:
  // Fails for a bad url. Starts the thread.
  static Result<std::unique_ptr<AlertmanagerClient>> Create(AlertmanagerOptions options,
                                                            std::string generator_url,
                                                            AlertPoster poster, const Clock& clock);
  // Stops the thread; an in-flight post is waited for (it is bounded by the timeout).
  ~AlertmanagerClient();
  AlertmanagerClient(const AlertmanagerClient&) = delete;
  AlertmanagerClient& operator=(const AlertmanagerClient&) = delete;

  // Never waits for the network.
  void Observe(const AlertEvent& event);
  // New options (a reload): InvalidArgument for a bad url, else applied at once.
  Status Reconfigure(AlertmanagerOptions options);
  AlertmanagerForwarder::Stats stats() const;

 private:
  AlertmanagerClient(AlertmanagerOptions options, AlertmanagerEndpoint endpoint,
                     std::string generator_url, AlertPoster poster, const Clock& clock);
  void Run();

  AlertPoster poster_;
  const Clock& clock_;
  mutable std::mutex mutex_;
  std::condition_variable wake_;
  AlertmanagerEndpoint endpoint_;    // guarded by mutex_
  AlertmanagerForwarder forwarder_;  // guarded by mutex_
  bool stopping_ = false;            // guarded by mutex_
  std::thread thread_;               // last: starts once the rest is built
};

}  // namespace seston
