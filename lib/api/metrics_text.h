// MetricsText: builds a page in the Prometheus text exposition format, version 0.0.4.
//
// What GET /metrics answers. The daemon declares each metric family once (name, type,
// help text) and adds its samples; Text() returns the page. The builder enforces the
// format's rules so that a caller cannot emit a page a scraper would reject:
//   - metric names match [a-zA-Z_:][a-zA-Z0-9_:]*, label names [a-zA-Z_][a-zA-Z0-9_]*
//     and do not start with "__" (reserved by Prometheus);
//   - a family appears once, with one "# HELP" and one "# TYPE" line before its samples;
//     samples of a family are contiguous; no two samples share their labels;
//   - counters are named NAME_total (the naming rule for counters);
//   - label values escape backslash, double quote and line feed (\\, \", \n); HELP text
//     escapes backslash and line feed;
//   - values are written so that they read back exactly: integers as integers, other
//     finite values in the shortest form that round-trips, and +Inf, -Inf, NaN.
// Naming follows Prometheus's conventions (base units in the name: _seconds, _bytes;
// _total for counters; _info with value 1 for build information); the builder checks
// the syntax, the caller chooses meaningful names.
//
// A mistake (bad name, a second family of one name, a counter without _total, a sample
// before any family, a repeated label set) is a programming error: the call returns
// kInvalidArgument naming what was wrong and adds nothing.
//
// Thread safety: a value; one thread at a time.
#pragma once

#include <set>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "base/status.h"

namespace seston {

enum class MetricType { kCounter, kGauge, kUntyped };

// "counter", "gauge", "untyped" as the TYPE line writes them.
std::string_view MetricTypeName(MetricType type);

using MetricLabels = std::vector<std::pair<std::string, std::string>>;  // name, value

class MetricsText {
 public:
  // Starts the family `name`; its samples follow until the next Family call.
  Status Family(std::string_view name, MetricType type, std::string_view help);
  // One sample of the current family with these labels (in the order given).
  Status Sample(const MetricLabels& labels, double value);
  // Family + one unlabelled sample, for the common single-valued metric.
  Status Single(std::string_view name, MetricType type, std::string_view help, double value);

  // The page so far, every line ending in "\n".
  const std::string& Text() const { return text_; }

  // Formatting of one value and escaping of one label value, as written on the page.
  static std::string FormatValue(double value);
  static std::string EscapeLabelValue(std::string_view value);

 private:
  std::string text_;
  std::set<std::string, std::less<>> families_;
  std::string current_;                       // name of the open family, "" for none
  std::set<std::string> current_label_sets_;  // rendered label sets seen in it
};

}  // namespace seston
