// The status page served at GET /: what a person glancing at the station sees.
//
// One self-contained HTML document (inline CSS and hand-written JavaScript, no library,
// nothing fetched from outside the daemon), so it works on a station with no internet.
// In the browser it reads the daemon's own API and draws, with inline SVG:
//   - each group's concentration (particles per mL) as line plots over the last hours
//     (GET /v1/series?step=10m&steps=36) and days (?step=6h&steps=56);
//   - a scatter of recent particles in two features the reader chooses, with the
//     centres of the groups (GET /v1/particles/recent, GET /v1/clusters);
//   - the active alerts (GET /v1/alerts) and health (GET /v1/health).
// It refreshes every 30 s. When a round of drawing is done it sets data-ready="yes" on
// <body> and data-points="N" on each plot (N = points drawn), so a headless browser
// test can tell that the plots rendered with data.
//
// The document lives in api/page/status_page.html.inc as a C++ raw string literal, so
// that it is compiled into the daemon (no file to install or find at run time) and yet
// edited as HTML.
//
// Thread safety: returns a view of a constant; call from any thread.
#pragma once

#include <string_view>

namespace seston {

std::string_view StatusPageHtml();

}  // namespace seston
