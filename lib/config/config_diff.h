// ConfigDiff: what changed between the running configuration and a newly read one, and
// what a reload (SIGHUP) may do with each change.
//
// The daemon re-reads its config file on SIGHUP. Every changed key falls in one of three
// classes (ReloadEffectOf):
//   live     applied at once: the drift detectors' thresholds and windows (drift.*,
//            except drift.enabled), the alert policy (alerts.raise_after, resolve_after,
//            cooldown_seconds, recent_kept), the alert hook (alerts.hook_command,
//            hook_timeout_seconds), alert forwarding (alerts.alertmanager.*), the row
//            limits (input.max_bad_row_fraction, input.max_line_bytes) and
//            logging.level;
//   restart  accepted but only taken at the next start, the running daemon keeping its
//            old value: addresses, directories, files, watcher timing, queue and
//            connection bounds, the station name, drift.enabled and the rest of input,
//            counts (but bin_seconds), state and api;
//   refused  would invalidate what the daemon has learnt — the fitted model or the
//            counts it keeps: features, standardize, every model.* key and
//            counts.bin_seconds. A reload with any refused change applies nothing; the
//            message names each such key with its old and new value.
// Keys are compared through ConfigToJson, so a key added to the config later is covered
// at once (as restart unless listed above); lists (features, model.k_range) compare
// whole.
//
// Thread safety: pure functions of their arguments.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "config/config.h"

namespace seston {

enum class ReloadEffect { kLive, kRestart, kRefused };

// "live", "restart", "refused".
std::string_view ReloadEffectName(ReloadEffect effect);

// The class of the dotted key (as ConfigToJson spells it, e.g. "drift.fit.lambda").
ReloadEffect ReloadEffectOf(std::string_view key);

struct ConfigChange {
  std::string key;        // dotted, e.g. "alerts.raise_after"
  std::string old_value;  // JSON text, e.g. "3", "\"info\"", "[2,12]"
  std::string new_value;
  ReloadEffect effect = ReloadEffect::kRestart;
};

struct ConfigDiff {
  std::vector<ConfigChange> changes;  // by key, ascending

  bool empty() const { return changes.empty(); }
  // True when any change is refused: then none may be applied.
  bool refused() const;
  // The changes of one class.
  std::vector<ConfigChange> Of(ReloadEffect effect) const;
  // "model.k (6 -> 8), features ([...] -> [...])" over the changes of one class; "" when
  // there are none.
  std::string Describe(ReloadEffect effect) const;
  // Why a refused reload was refused, naming the keys and what to do instead.
  std::string RefusalMessage() const;
};

ConfigDiff DiffConfigs(const Config& running, const Config& loaded);

}  // namespace seston
