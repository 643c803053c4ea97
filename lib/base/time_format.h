// Event-time parsing and formatting.
//
// Times inside seston are double seconds since 1970-01-01T00:00:00Z (UTC). Records give
// them either as epoch seconds ("1764633600", "1764633600.25") or as ISO 8601 in UTC
// ("2026-12-02T03:04:05Z", "2026-12-02T03:04:05.250Z", "2026-12-02 03:04:05",
// "2026-12-02T03:04:05+00:00"). A non-zero offset ("+02:00") is applied. Local times
// without an offset are taken as UTC, as the instrument's computer is expected to run on
// UTC (common practice on moorings and ships).
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

namespace seston {

// The date and clock part ("2026-06-01T00:00:00", 19 characters) of the last ISO 8601
// time parsed with it, and its value in seconds. Consecutive records mostly fall in the
// same second, and then only the fraction and zone are read: the value is the same to
// the last bit (the part memoised is a whole number of seconds, exact in a double). One
// memo per stream of times, on one thread; a fresh one remembers nothing.
struct IsoTimeMemo {
  static constexpr std::size_t kPrefixLength = 19;
  char prefix[kPrefixLength] = {};
  bool valid = false;
  double whole_seconds = 0;
};

// Parses epoch seconds or ISO 8601; nullopt when `text` is neither or is out of the
// years 1970..9999. `memo` (optional) only saves work; results do not depend on it.
std::optional<double> ParseEventTime(std::string_view text, IsoTimeMemo* memo = nullptr);

// "2026-12-02T03:04:05Z"; with `millis` true, "2026-12-02T03:04:05.250Z".
std::string FormatIso8601(double seconds, bool millis = false);

// "2026-12-02": the UTC day of `seconds`, used to roll daily files.
std::string FormatDay(double seconds);

// Compact, sortable, file-name safe: "20261202T030405Z".
std::string FormatCompact(double seconds);

}  // namespace seston
