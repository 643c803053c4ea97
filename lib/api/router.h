// Router: one HTTP request in, one HTTP response out, with no sockets involved.
//
// The HTTP server (api/http_server.h) reads a request, calls Route, and writes what it
// returns; everything the API means lives here so that it is tested without a network.
// Route never throws: an exception escaping the backend becomes a 500.
//
// Endpoints (JSON unless said otherwise; shapes in api/api_views.h):
//   GET  /                          the status page (text/html, api/status_page.h)
//   GET  /v1/health                 HealthView; always 200, "state" says how things are
//   GET  /v1/counts                 CountsView over an event-time window, chosen by
//          ?window=DURATION           "3600", "3600s", "90m", "1h", "2d" (0 < w <= 400 d)
//          ?from=TIME&to=TIME         ISO 8601 UTC or epoch seconds (ParseEventTime)
//        "to" may go with either; "window" and "from" exclude each other; no parameter
//        means the backend's default window ending at the latest event time.
//   GET  /v1/series                 SeriesView: concentrations in equal steps,
//          ?step=DURATION             each step's width, as window above (default 1h)
//          ?steps=N                   1..1000 steps (default 24)
//          ?to=TIME                   end of the last step (default: as /v1/counts)
//   GET  /v1/particles/recent       RecentParticlesView; ?limit=N, 1..10000 (default 2000)
//   GET  /v1/clusters               {"clusters": [ClusterView...]}
//   PUT  /v1/clusters/{id}/label    body {"label": "..."}, 1..64 printable UTF-8
//                                   characters, no control characters, no space at
//                                   either end; token; answers {"id", "label"}
//   POST /v1/baseline               token; answers {"baseline": "accepted"}
//   GET  /v1/alerts                 {"active": [...], "recent": [...]}
//   GET  /metrics                   Prometheus text (text/plain; version=0.0.4)
//
// Errors are {"error": {"status": N, "message": "..."}}:
//   400 bad query parameter, unknown parameter (named), bad body or label;
//   401 missing or wrong bearer token (with WWW-Authenticate: Bearer realm="sestond");
//   403 a write while no token is configured (api.token_file unset);
//   404 unknown path or cluster; 405 wrong method (with Allow);
//   503 backend FailedPrecondition/Unavailable/ResourceExhausted (with Retry-After: 5),
//       e.g. a baseline before the first fit; 500 any other backend failure.
// 413 (body too large) and 431 (header too large) come from the server, built with
// ErrorResponse. Request text never becomes a path or a file name.
//
// Thread safety: Route is reentrant; it calls `backend` from the caller's thread.
#pragma once

#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "api/api_backend.h"

namespace seston {

struct HttpRequest {
  std::string method;         // "GET", "PUT", ...
  std::string target;         // path and query as sent: "/v1/counts?window=1h"
  std::string authorization;  // the Authorization header's value, "" when absent
  std::string body;
};

struct HttpResponse {
  int status = 200;
  std::string content_type;
  std::string body;
  std::vector<std::pair<std::string, std::string>> headers;  // besides Content-Type
};

// The longest count window a query may ask for, s (400 days).
inline constexpr double kMaxCountWindowSeconds = 400.0 * 86400.0;
// Label length bounds, in Unicode code points.
inline constexpr std::size_t kMaxLabelCharacters = 64;

// `token` is the bearer token writes must present; "" refuses every write with 403.
HttpResponse Route(const HttpRequest& request, ApiBackend& backend, const std::string& token);

// {"error": {"status": status, "message": message}} as application/json.
HttpResponse ErrorResponse(int status, std::string_view message);

}  // namespace seston
