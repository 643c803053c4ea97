#include "config/config_diff.h"

#include <algorithm>
#include <map>
#include <nlohmann/json.hpp>

#include "config/config_summary.h"

namespace seston {
namespace {

// Keys applied live: an entry ending in '.' covers every key below it.
constexpr std::string_view kLiveKeys[] = {
    "drift.evaluate_every_particles",
    "drift.composition.",
    "drift.centre.",
    "drift.fit.",
    "drift.novelty.",
    "alerts.raise_after",
    "alerts.resolve_after",
    "alerts.cooldown_seconds",
    "alerts.recent_kept",
    "alerts.hook_command",
    "alerts.hook_timeout_seconds",
    "alerts.alertmanager.",
    "input.max_bad_row_fraction",
    "input.max_line_bytes",
    "logging.level",
};

// Keys that would invalidate the fitted model or the kept counts.
constexpr std::string_view kRefusedKeys[] = {
    "features",
    "standardize",
    "model.",
    "counts.bin_seconds",
};

bool Covers(std::string_view entry, std::string_view key) {
  return entry.ends_with('.') ? key.starts_with(entry) : key == entry;
}

// Leaves of a ConfigToJson tree by dotted key; arrays are leaves.
void Flatten(const nlohmann::json& node, const std::string& prefix,
             std::map<std::string, std::string>& out) {
  if (node.is_object()) {
    for (const auto& [name, child] : node.items()) {
      Flatten(child, prefix.empty() ? name : prefix + "." + name, out);
    }
    return;
  }
  out[prefix] = node.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace);
}

}  // namespace

std::string_view ReloadEffectName(ReloadEffect effect) {
  switch (effect) {
    case ReloadEffect::kLive:
      return "live";
    case ReloadEffect::kRestart:
      return "restart";
    case ReloadEffect::kRefused:
      return "refused";
  }
  return "restart";
}

ReloadEffect ReloadEffectOf(std::string_view key) {
  for (std::string_view entry : kRefusedKeys) {
    if (Covers(entry, key)) return ReloadEffect::kRefused;
  }
  for (std::string_view entry : kLiveKeys) {
    if (Covers(entry, key)) return ReloadEffect::kLive;
  }
  return ReloadEffect::kRestart;
}

bool ConfigDiff::refused() const {
  return std::any_of(changes.begin(), changes.end(), [](const ConfigChange& change) {
    return change.effect == ReloadEffect::kRefused;
  });
}

std::vector<ConfigChange> ConfigDiff::Of(ReloadEffect effect) const {
  std::vector<ConfigChange> selected;
  std::copy_if(changes.begin(), changes.end(), std::back_inserter(selected),
               [effect](const ConfigChange& change) { return change.effect == effect; });
  return selected;
}

std::string ConfigDiff::Describe(ReloadEffect effect) const {
  std::string text;
  for (const ConfigChange& change : Of(effect)) {
    if (!text.empty()) text += ", ";
    text += change.key + " (" + change.old_value + " -> " + change.new_value + ")";
  }
  return text;
}

std::string ConfigDiff::RefusalMessage() const {
  if (!refused()) return "";
  return "reload refused, the running configuration is kept: " + Describe(ReloadEffect::kRefused) +
         " would invalidate the fitted model or the counts kept in the checkpoint; put the "
         "old value back, or stop sestond and start it with a new state.dir to fit afresh";
}

ConfigDiff DiffConfigs(const Config& running, const Config& loaded) {
  std::map<std::string, std::string> before, after;
  Flatten(ConfigToJson(running), "", before);
  Flatten(ConfigToJson(loaded), "", after);
  ConfigDiff diff;
  auto add = [&diff](const std::string& key, const std::string& old_value,
                     const std::string& new_value) {
    diff.changes.push_back({key, old_value, new_value, ReloadEffectOf(key)});
  };
  for (const auto& [key, value] : before) {
    auto found = after.find(key);
    if (found == after.end()) {
      add(key, value, "(none)");
    } else if (found->second != value) {
      add(key, value, found->second);
    }
  }
  for (const auto& [key, value] : after) {
    if (!before.contains(key)) add(key, "(none)", value);
  }
  std::sort(diff.changes.begin(), diff.changes.end(),
            [](const ConfigChange& a, const ConfigChange& b) { return a.key < b.key; });
  return diff;
}

}  // namespace seston
