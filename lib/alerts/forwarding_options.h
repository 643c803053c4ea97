// Options of alert forwarding to a Prometheus Alertmanager (alerts/alertmanager_client.h).
#pragma once

#include <cstddef>
#include <string>

namespace seston {

struct AlertmanagerOptions {
  // Base URL of the Alertmanager, "http://HOST:PORT" with an optional path prefix
  // ("http://127.0.0.1:9093/am"); alerts go to <url>/api/v2/alerts. Plain HTTP only.
  // "" (default) = no forwarding.
  std::string url;
  // Active alerts are posted again this often, so that the Alertmanager keeps them
  // firing; each post says they end 4 x this later unless renewed, s of wall time, > 0.
  // Default 60.
  double resend_seconds = 60;
  // Time allowed for one post (connect, send, answer), s of wall time, > 0. Default 5.
  double timeout_seconds = 5;
  // A failed post is retried after 1 s, then twice as long each time, at most this
  // long, s of wall time, >= 1. Default 60.
  double max_retry_seconds = 60;
  // Alert events waiting to be delivered; when full, the oldest resolved ones are
  // dropped first (they are counted), >= 1. Default 1024.
  std::size_t max_pending_alerts = 1024;
};

}  // namespace seston
