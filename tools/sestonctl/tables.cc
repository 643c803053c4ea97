#include "sestonctl/tables.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

namespace seston::ctl {
namespace {

constexpr char kNone[] = "-";

std::size_t DisplayWidth(const std::string& text) {
  return static_cast<std::size_t>(std::count_if(text.begin(), text.end(), [](char c) {
    return (static_cast<unsigned char>(c) & 0xC0) != 0x80;  // not a continuation byte
  }));
}

// The string at `key`, or "-" when absent, null or not a string.
std::string Text(const nlohmann::json& object, const char* key) {
  if (!object.is_object()) return kNone;
  auto it = object.find(key);
  if (it == object.end() || !it->is_string() || it->get<std::string>().empty()) return kNone;
  return it->get<std::string>();
}

// The value at `key`, or null. A reference, so that it may feed a range-for.
const nlohmann::json& Field(const nlohmann::json& object, const char* key) {
  static const nlohmann::json kNull;
  if (!object.is_object()) return kNull;
  auto it = object.find(key);
  return it == object.end() ? kNull : *it;
}

std::string Number(const nlohmann::json& object, const char* key) {
  return FormatNumber(Field(object, key));
}

const nlohmann::json& ArrayOrEmpty(const nlohmann::json& value) {
  static const nlohmann::json kEmpty = nlohmann::json::array();
  return value.is_array() ? value : kEmpty;
}

std::string Label(const nlohmann::json& cluster) {
  std::string label = Text(cluster, "label");
  return label == kNone ? "(unlabelled)" : label;
}

}  // namespace

std::string FormatTable(const std::vector<Column>& columns,
                        const std::vector<std::vector<std::string>>& rows) {
  std::vector<std::size_t> widths;
  for (const Column& column : columns) widths.push_back(DisplayWidth(column.header));
  for (const auto& row : rows) {
    for (std::size_t i = 0; i < columns.size() && i < row.size(); ++i) {
      widths[i] = std::max(widths[i], DisplayWidth(row[i]));
    }
  }
  std::string out;
  auto append_row = [&](auto cell_at) {
    std::string line;
    for (std::size_t i = 0; i < columns.size(); ++i) {
      std::string cell = cell_at(i);
      std::string padding(widths[i] - DisplayWidth(cell), ' ');
      if (i > 0) line += "  ";
      line += columns[i].align == Align::kRight ? padding + cell : cell + padding;
    }
    line.erase(line.find_last_not_of(' ') + 1);
    out += line + "\n";
  };
  append_row([&](std::size_t i) { return columns[i].header; });
  for (const auto& row : rows) {
    append_row([&](std::size_t i) { return i < row.size() ? row[i] : std::string(); });
  }
  return out;
}

std::string FormatNumber(const nlohmann::json& value) {
  if (value.is_number_integer() || value.is_number_unsigned()) return value.dump();
  if (!value.is_number_float() || !std::isfinite(value.get<double>())) return kNone;
  double number = value.get<double>();
  char buffer[64];
  if (std::fabs(number) >= 1000 && std::fabs(number) < 1e15) {
    std::snprintf(buffer, sizeof buffer, "%.1f", number);  // counts-like magnitudes
    std::string text = buffer;
    if (text.ends_with(".0")) text.resize(text.size() - 2);
    return text;
  }
  std::snprintf(buffer, sizeof buffer, "%.4g", number);
  return buffer;
}

std::string FormatDuration(double seconds) {
  if (!std::isfinite(seconds) || seconds < 0) return kNone;
  auto whole = static_cast<long long>(std::floor(seconds));
  long long days = whole / 86400, hours = whole % 86400 / 3600, minutes = whole % 3600 / 60,
            rest = whole % 60;
  auto pair = [](long long big, const char* big_unit, long long small, const char* small_unit) {
    std::string text = std::to_string(big) + " " + big_unit;
    if (small > 0) text += " " + std::to_string(small) + " " + small_unit;
    return text;
  };
  if (days > 0) return pair(days, "d", hours, "h");
  if (hours > 0) return pair(hours, "h", minutes, "min");
  if (minutes > 0) return pair(minutes, "min", rest, "s");
  return std::to_string(rest) + " s";
}

std::string FormatStatus(const nlohmann::json& health) {
  const nlohmann::json& particles = Field(health, "particles");
  const nlohmann::json& files = Field(health, "files");
  const nlohmann::json& backlog = Field(health, "backlog");
  const nlohmann::json& uptime = Field(health, "uptime_seconds");
  std::string last_error = Text(health, "last_error");
  std::vector<std::vector<std::string>> rows = {
      {"station", Text(health, "station")},
      {"state", Text(health, "state")},
      {"version", Text(health, "version")},
      {"uptime", uptime.is_number() ? FormatDuration(uptime.get<double>()) : kNone},
      {"clusters (k)", Number(health, "k")},
      {"last particle", Text(health, "last_particle_time")},
      {"last checkpoint", Text(health, "last_checkpoint_time")},
      {"particles", Number(particles, "accepted") + " accepted, " + Number(particles, "rejected") +
                        " rejected, " + Number(particles, "unclassified") + " unclassified"},
      {"files", Number(files, "done") + " done, " + Number(files, "quarantined") + " quarantined"},
      {"backlog", Number(backlog, "files") + " files, " + Number(backlog, "records") + " records"},
      {"last error", last_error == kNone ? "none" : last_error},
  };
  // A key/value listing: a two-column table without its header row.
  std::string table = FormatTable({{""}, {""}}, rows);
  return table.substr(table.find('\n') + 1);
}

std::string FormatCounts(const nlohmann::json& counts) {
  std::ostringstream out;
  const nlohmann::json& window = Field(counts, "window_seconds");
  out << "window " << Text(counts, "from") << " to " << Text(counts, "to") << " ("
      << (window.is_number() ? FormatDuration(window.get<double>()) : kNone) << "), "
      << Number(counts, "volume_ml") << " mL analysed\n\n";
  std::vector<std::vector<std::string>> rows;
  for (const nlohmann::json& cluster : ArrayOrEmpty(Field(counts, "clusters"))) {
    rows.push_back({Number(cluster, "id"), Label(cluster), Number(cluster, "count"),
                    Number(cluster, "concentration_per_ml")});
  }
  rows.push_back(
      {"", "unclassified", Number(counts, "unclassified"), Number(counts, "unclassified_per_ml")});
  rows.push_back({"", "total", Number(counts, "total"), ""});
  rows.push_back({"", "rejected (not in total)", Number(counts, "rejected"), ""});
  out << FormatTable(
      {{"id", Align::kRight}, {"label"}, {"count", Align::kRight}, {"conc. /mL", Align::kRight}},
      rows);
  return out.str();
}

std::string FormatClusters(const nlohmann::json& clusters) {
  std::vector<std::vector<std::string>> rows;
  for (const nlohmann::json& cluster : ArrayOrEmpty(Field(clusters, "clusters"))) {
    std::string centre;
    const nlohmann::json& columns = Field(cluster, "centre");
    if (columns.is_object()) {
      for (const auto& [column, value] : columns.items()) {
        centre += (centre.empty() ? "" : " ") + column + "=" + FormatNumber(value);
      }
    }
    const nlohmann::json& retired = Field(cluster, "retired");
    rows.push_back({Number(cluster, "id"), Label(cluster), Number(cluster, "count"),
                    Number(cluster, "spread"), Text(cluster, "born_time"),
                    retired.is_boolean() ? (retired.get<bool>() ? "retired" : "active") : kNone,
                    centre.empty() ? kNone : centre});
  }
  if (rows.empty()) return "no clusters yet (the model is still warming up)\n";
  return FormatTable({{"id", Align::kRight},
                      {"label"},
                      {"count", Align::kRight},
                      {"spread", Align::kRight},
                      {"born (UTC)"},
                      {"state"},
                      {"centre (input units)"}},
                     rows);
}

std::string FormatAlerts(const nlohmann::json& alerts) {
  std::ostringstream out;
  auto section = [&](const char* title, const nlohmann::json& list, const char* time_header,
                     bool with_advice) {
    const nlohmann::json& events = ArrayOrEmpty(list);
    out << title << ": " << events.size() << "\n";
    if (events.empty()) return;
    std::vector<std::vector<std::string>> rows;
    for (const nlohmann::json& event : events) {
      std::string clusters;
      for (const nlohmann::json& cluster : ArrayOrEmpty(Field(event, "clusters"))) {
        clusters += (clusters.empty() ? "" : ", ") + Number(cluster, "id");
        if (std::string label = Text(cluster, "label"); label != kNone) {
          clusters += " (" + label + ")";
        }
      }
      rows.push_back({Number(event, "sequence"), Text(event, "severity"), Text(event, "kind"),
                      Text(event, "since"), Text(event, "time"),
                      clusters.empty() ? kNone : clusters, Text(event, "message")});
    }
    out << FormatTable({{"#", Align::kRight},
                        {"severity"},
                        {"kind"},
                        {"since (UTC)"},
                        {time_header},
                        {"clusters"},
                        {"message"}},
                       rows);
    for (const nlohmann::json& event : events) {
      if (!with_advice) break;
      if (std::string advice = Text(event, "what_to_check"); advice != kNone) {
        out << "  #" << Number(event, "sequence") << " check: " << advice << "\n";
      }
    }
  };
  section("active alerts", Field(alerts, "active"), "raised (UTC)", true);
  out << "\n";
  section("recently resolved", Field(alerts, "recent"), "resolved (UTC)", false);
  return out.str();
}

}  // namespace seston::ctl
