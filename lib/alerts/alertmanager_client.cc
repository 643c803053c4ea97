#include "alerts/alertmanager_client.h"

#include <algorithm>
#include <charconv>
#include <chrono>

#include "base/time_format.h"
#include "drift/detector_reading.h"

namespace seston {
namespace {

// An active alert is said to end this many resend periods ahead, so one or two lost
// posts do not make it flicker, yet it lapses soon after seston stops (Prometheus's own
// rule evaluator uses the same factor of 4 for its alerts; from memory).
constexpr double kActiveLeaseResends = 4;

constexpr std::string_view kAlertsPath = "/api/v2/alerts";

std::string KindWords(const std::string& kind) {
  std::string words = kind;
  std::replace(words.begin(), words.end(), '_', ' ');
  return words;
}

}  // namespace

Result<AlertmanagerEndpoint> ParseAlertmanagerUrl(std::string_view url) {
  constexpr std::string_view kScheme = "http://";
  auto bad = [url](std::string_view why) {
    return Status::InvalidArgument("alerts.alertmanager.url \"" + std::string(url) +
                                   "\": " + std::string(why) +
                                   "; expected http://HOST:PORT with an optional /PREFIX, "
                                   "e.g. http://127.0.0.1:9093");
  };
  if (!url.starts_with(kScheme)) return bad("only plain http:// is supported");
  std::string_view rest = url.substr(kScheme.size());
  std::size_t slash = rest.find('/');
  std::string_view authority = rest.substr(0, slash);
  std::string_view prefix = slash == std::string_view::npos ? "" : rest.substr(slash);
  while (prefix.ends_with('/')) prefix.remove_suffix(1);
  std::size_t colon = authority.rfind(':');
  if (colon == std::string_view::npos || colon == 0 || authority.back() == ']') {
    return bad("a host and a :PORT are needed");
  }
  std::string_view port_text = authority.substr(colon + 1);
  int port = 0;
  auto [end, error] = std::from_chars(port_text.data(), port_text.data() + port_text.size(), port);
  if (error != std::errc() || end != port_text.data() + port_text.size() || port < 1 ||
      port > 65535) {
    return bad("the port must be a number from 1 to 65535");
  }
  if (prefix.find_first_of("?#") != std::string_view::npos) {
    return bad("a query or fragment is not allowed");
  }
  return AlertmanagerEndpoint{std::string(authority),
                              std::string(prefix) + std::string(kAlertsPath)};
}

nlohmann::json AlertmanagerAlert(const AlertEvent& event, double starts_at, double ends_at,
                                 const std::string& generator_url) {
  std::string cluster = "none";
  std::string named;
  if (!event.clusters.empty()) {
    cluster = std::to_string(event.clusters.front().first);
    named = " (cluster " + cluster +
            (event.clusters.front().second.empty() ? "" : ", " + event.clusters.front().second) +
            ")";
  }
  nlohmann::json alert = {
      {"labels",
       {{"alertname", "seston_" + event.kind},
        {"kind", event.kind},
        {"cluster", cluster},
        {"station", event.station},
        {"severity", event.severity}}},
      {"annotations",
       {{"summary", KindWords(event.kind) + " at " + event.station + named},
        {"description",
         event.message +
             (event.what_to_check.empty() ? "" : " What to check: " + event.what_to_check)},
        {"caution", std::string(kScreeningAidCaution)}}},
      {"startsAt", FormatIso8601(starts_at, /*millis=*/true)},
      {"endsAt", FormatIso8601(ends_at, /*millis=*/true)},
  };
  if (!generator_url.empty()) alert["generatorURL"] = generator_url;
  return alert;
}

void AlertmanagerForwarder::Observe(const AlertEvent& event, double now) {
  Key key{event.kind, event.clusters.empty() ? 0u : event.clusters.front().first};
  double lease = kActiveLeaseResends * options_.resend_seconds;
  if (event.event == "resolved") {
    auto found = entries_.find(key);
    if (found != entries_.end() && !found->second.one_off) {
      Entry entry = found->second;
      entry.ends_at = std::max(entry.starts_at, std::min(event.time_seconds, now));
      Put(key, std::move(entry));
      return;
    }
    // The raise was never seen here (it came before a restart): end it all the same.
    Entry entry;
    entry.event = event;
    entry.starts_at = std::min(event.since_seconds, now);
    entry.ends_at = std::max(entry.starts_at, std::min(event.time_seconds, now));
    Put(key, std::move(entry));
    return;
  }
  Entry entry;
  entry.event = event;
  entry.starts_at = std::min(event.since_seconds, now);
  entry.one_off = event.severity != "alarm";
  if (entry.one_off) entry.ends_at = now + lease;
  Put(key, std::move(entry));
}

void AlertmanagerForwarder::Put(const Key& key, Entry entry) {
  auto found = entries_.find(key);
  entry.order = found == entries_.end() ? next_order_++ : found->second.order;
  entry.version = next_version_++;
  entry.dirty = true;
  entries_[key] = std::move(entry);
  Bound();
}

void AlertmanagerForwarder::Bound() {
  while (entries_.size() > std::max<std::size_t>(1, options_.max_pending_alerts)) {
    auto victim = entries_.end();
    for (bool ended : {true, false}) {
      for (auto it = entries_.begin(); it != entries_.end(); ++it) {
        if (it->second.ends_at.has_value() != ended) continue;
        if (victim == entries_.end() || it->second.order < victim->second.order) victim = it;
      }
      if (victim != entries_.end()) break;
    }
    in_flight_.erase(victim->first);
    entries_.erase(victim);
    ++stats_.alerts_dropped;
  }
}

std::optional<std::string> AlertmanagerForwarder::Due(double now) {
  if (entries_.empty()) return std::nullopt;
  if (retry_at_ && now < *retry_at_) return std::nullopt;
  bool dirty = std::any_of(entries_.begin(), entries_.end(),
                           [](const auto& item) { return item.second.dirty; });
  bool resend = next_resend_ && now >= *next_resend_;
  if (!dirty && !resend && !retry_at_) return std::nullopt;
  nlohmann::json alerts = nlohmann::json::array();
  double lease = kActiveLeaseResends * options_.resend_seconds;
  in_flight_.clear();
  for (const auto& [key, entry] : entries_) {
    alerts.push_back(AlertmanagerAlert(entry.event, entry.starts_at,
                                       entry.ends_at.value_or(now + lease), generator_url_));
    in_flight_[key] = entry.version;
  }
  return alerts.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace);
}

void AlertmanagerForwarder::Delivered(double now, const std::string& error) {
  for (const auto& [key, version] : in_flight_) {
    auto found = entries_.find(key);
    if (found == entries_.end() || found->second.version != version) continue;
    if (found->second.ends_at) {
      entries_.erase(found);
    } else {
      found->second.dirty = false;
    }
  }
  in_flight_.clear();
  retry_at_.reset();
  retry_pause_seconds_ = 0;
  bool active = std::any_of(entries_.begin(), entries_.end(),
                            [](const auto& item) { return !item.second.ends_at; });
  next_resend_ = active ? std::optional<double>(now + options_.resend_seconds) : std::nullopt;
  if (error.empty()) {
    ++stats_.posts_ok;
    stats_.last_success_seconds = now;
  } else {
    ++stats_.posts_refused;
    stats_.last_error = error;
  }
}

void AlertmanagerForwarder::Failed(double now, const std::string& error) {
  in_flight_.clear();
  retry_pause_seconds_ = retry_pause_seconds_ == 0
                             ? std::min(1.0, options_.max_retry_seconds)
                             : std::min(retry_pause_seconds_ * 2, options_.max_retry_seconds);
  retry_at_ = now + retry_pause_seconds_;
  ++stats_.posts_failed;
  stats_.last_error = error;
}

std::optional<double> AlertmanagerForwarder::NextDue() const {
  if (entries_.empty()) return std::nullopt;
  if (retry_at_) return retry_at_;
  bool dirty = std::any_of(entries_.begin(), entries_.end(),
                           [](const auto& item) { return item.second.dirty; });
  if (dirty) return 0.0;
  return next_resend_;
}

AlertmanagerForwarder::Stats AlertmanagerForwarder::stats() const {
  Stats stats = stats_;
  stats.pending = entries_.size();
  return stats;
}

Result<std::unique_ptr<AlertmanagerClient>> AlertmanagerClient::Create(AlertmanagerOptions options,
                                                                       std::string generator_url,
                                                                       AlertPoster poster,
                                                                       const Clock& clock) {
  SESTON_ASSIGN_OR_RETURN(AlertmanagerEndpoint endpoint, ParseAlertmanagerUrl(options.url));
  return std::unique_ptr<AlertmanagerClient>(new AlertmanagerClient(
      std::move(options), std::move(endpoint), std::move(generator_url), std::move(poster), clock));
}

AlertmanagerClient::AlertmanagerClient(AlertmanagerOptions options, AlertmanagerEndpoint endpoint,
                                       std::string generator_url, AlertPoster poster, const Clock& clock)
    : poster_(std::move(poster)),
      clock_(clock),
      endpoint_(std::move(endpoint)),
      forwarder_(std::move(options), std::move(generator_url)),
      thread_([this] { Run(); }) {}

AlertmanagerClient::~AlertmanagerClient() {
  {
    std::lock_guard lock(mutex_);
    stopping_ = true;
  }
  wake_.notify_all();
  thread_.join();
}

void AlertmanagerClient::Observe(const AlertEvent& event) {
  {
    std::lock_guard lock(mutex_);
    forwarder_.Observe(event, clock_.WallSeconds());
  }
  wake_.notify_all();
}

Status AlertmanagerClient::Reconfigure(AlertmanagerOptions options) {
  SESTON_ASSIGN_OR_RETURN(AlertmanagerEndpoint endpoint, ParseAlertmanagerUrl(options.url));
  {
    std::lock_guard lock(mutex_);
    endpoint_ = std::move(endpoint);
    forwarder_.SetOptions(std::move(options));
  }
  wake_.notify_all();
  return Status::Ok();
}

AlertmanagerForwarder::Stats AlertmanagerClient::stats() const {
  std::lock_guard lock(mutex_);
  return forwarder_.stats();
}

void AlertmanagerClient::Run() {
  std::unique_lock lock(mutex_);
  while (!stopping_) {
    double now = clock_.WallSeconds();
    if (std::optional<std::string> body = forwarder_.Due(now)) {
      AlertmanagerEndpoint endpoint = endpoint_;
      double timeout = forwarder_.options().timeout_seconds;
      lock.unlock();
      Result<int> answer = poster_(endpoint, *body, timeout);
      lock.lock();
      now = clock_.WallSeconds();
      if (!answer.ok()) {
        forwarder_.Failed(now, answer.status().message());
      } else if (*answer >= 200 && *answer < 300) {
        forwarder_.Delivered(now);
      } else if (*answer == 429 || *answer >= 500) {
        forwarder_.Failed(now, "the Alertmanager at " + endpoint.host_port + " answered HTTP " +
                                   std::to_string(*answer));
      } else {
        forwarder_.Delivered(now, "the Alertmanager at " + endpoint.host_port +
                                      " refused the alerts with HTTP " + std::to_string(*answer));
      }
      continue;
    }
    std::optional<double> next = forwarder_.NextDue();
    if (!next) {
      wake_.wait(lock);
    } else {
      wake_.wait_for(lock, std::chrono::duration<double>(std::max(0.0, *next - now)));
    }
  }
}

}  // namespace seston
