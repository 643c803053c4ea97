// Human-readable renderings of sestond's API answers, for sestonctl.
//
// Each Format* function takes the JSON body of one endpoint (shapes in
// lib/api/api_views.h and lib/alerts/alert_event.h) and returns text for a terminal.
// Missing or null fields print as "-" rather than failing, so that an older or newer
// daemon still gives a readable answer. Column widths count UTF-8 code points (a label
// with wide East Asian characters may be misaligned; acceptable for a shell tool).
// Pure functions; no I/O.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace seston::ctl {

enum class Align { kLeft, kRight };

struct Column {
  std::string header;
  Align align = Align::kLeft;
};

// Columns separated by two spaces, padded to the widest cell, a header row first;
// trailing spaces trimmed. A row shorter than the header is padded with "".
std::string FormatTable(const std::vector<Column>& columns,
                        const std::vector<std::vector<std::string>>& rows);

// 42.0 -> "42", 0.012345 -> "0.01235", 1234.5 -> "1234.5", 2.5e-7 -> "2.5e-07";
// null or not a number -> "-".
std::string FormatNumber(const nlohmann::json& value);

// 45 -> "45 s", 754 -> "12 min 34 s", 7380 -> "2 h 3 min", 273600 -> "3 d 4 h".
std::string FormatDuration(double seconds);

std::string FormatStatus(const nlohmann::json& health);      // GET /v1/health
std::string FormatCounts(const nlohmann::json& counts);      // GET /v1/counts
std::string FormatClusters(const nlohmann::json& clusters);  // GET /v1/clusters
std::string FormatAlerts(const nlohmann::json& alerts);      // GET /v1/alerts

}  // namespace seston::ctl
