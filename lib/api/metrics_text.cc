#include "api/metrics_text.h"

#include <charconv>
#include <cmath>

namespace seston {
namespace {

bool IsNameStart(char c, bool allow_colon) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || c == '_' || (allow_colon && c == ':');
}

bool IsNameChar(char c, bool allow_colon) {
  return IsNameStart(c, allow_colon) || (c >= '0' && c <= '9');
}

bool IsValidName(std::string_view name, bool allow_colon) {
  if (name.empty() || !IsNameStart(name.front(), allow_colon)) return false;
  for (char c : name) {
    if (!IsNameChar(c, allow_colon)) return false;
  }
  return true;
}

std::string EscapeHelp(std::string_view help) {
  std::string escaped;
  escaped.reserve(help.size());
  for (char c : help) {
    if (c == '\\') {
      escaped += "\\\\";
    } else if (c == '\n') {
      escaped += "\\n";
    } else {
      escaped += c;
    }
  }
  return escaped;
}

}  // namespace

std::string_view MetricTypeName(MetricType type) {
  switch (type) {
    case MetricType::kCounter:
      return "counter";
    case MetricType::kGauge:
      return "gauge";
    case MetricType::kUntyped:
      return "untyped";
  }
  return "untyped";
}

std::string MetricsText::FormatValue(double value) {
  if (std::isnan(value)) return "NaN";
  if (std::isinf(value)) return value > 0 ? "+Inf" : "-Inf";
  // Whole numbers up to 2^53 are written without exponent or point: counters read best so.
  constexpr double kExactIntegers = 9007199254740992.0;
  if (value == std::floor(value) && std::fabs(value) <= kExactIntegers) {
    return std::to_string(static_cast<long long>(value));
  }
  char buffer[32];
  auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value);
  return error == std::errc() ? std::string(buffer, end) : "NaN";
}

std::string MetricsText::EscapeLabelValue(std::string_view value) {
  std::string escaped;
  escaped.reserve(value.size());
  for (char c : value) {
    if (c == '\\') {
      escaped += "\\\\";
    } else if (c == '"') {
      escaped += "\\\"";
    } else if (c == '\n') {
      escaped += "\\n";
    } else {
      escaped += c;
    }
  }
  return escaped;
}

Status MetricsText::Family(std::string_view name, MetricType type, std::string_view help) {
  if (!IsValidName(name, /*allow_colon=*/true)) {
    return Status::InvalidArgument("metric name \"" + std::string(name) +
                                   "\" must match [a-zA-Z_:][a-zA-Z0-9_:]*");
  }
  if (type == MetricType::kCounter && !name.ends_with("_total")) {
    return Status::InvalidArgument("counter \"" + std::string(name) +
                                   "\" must be named NAME_total");
  }
  if (families_.contains(name)) {
    return Status::InvalidArgument("metric family \"" + std::string(name) +
                                   "\" was already written; a family appears once");
  }
  families_.emplace(name);
  current_ = std::string(name);
  current_label_sets_.clear();
  text_ += "# HELP " + current_ + " " + EscapeHelp(help) + "\n";
  text_ += "# TYPE " + current_ + " " + std::string(MetricTypeName(type)) + "\n";
  return Status::Ok();
}

Status MetricsText::Sample(const MetricLabels& labels, double value) {
  if (current_.empty()) {
    return Status::InvalidArgument("a sample needs a metric family first (call Family)");
  }
  std::string rendered;
  std::set<std::string_view> names;
  for (const auto& [name, label_value] : labels) {
    if (!IsValidName(name, /*allow_colon=*/false) || name.starts_with("__")) {
      return Status::InvalidArgument("label name \"" + name + "\" of " + current_ +
                                     " must match [a-zA-Z_][a-zA-Z0-9_]* and not start "
                                     "with __");
    }
    if (!names.insert(name).second) {
      return Status::InvalidArgument("label \"" + name + "\" appears twice in a sample of " +
                                     current_);
    }
    rendered += (rendered.empty() ? "" : ",") + name + "=\"" + EscapeLabelValue(label_value) + "\"";
  }
  if (!current_label_sets_.insert(rendered).second) {
    return Status::InvalidArgument("a sample of " + current_ + " with labels {" + rendered +
                                   "} was already written");
  }
  text_ += current_;
  if (!rendered.empty()) text_ += "{" + rendered + "}";
  text_ += " " + FormatValue(value) + "\n";
  return Status::Ok();
}

Status MetricsText::Single(std::string_view name, MetricType type, std::string_view help,
                           double value) {
  SESTON_RETURN_IF_ERROR(Family(name, type, help));
  return Sample({}, value);
}

}  // namespace seston
