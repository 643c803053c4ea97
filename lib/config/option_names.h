// The words the config file uses for the enum-valued options, both ways.
//
// Kept inside config/ so that loading a config needs no other module's code: the
// Options headers of the other stages are plain structs, and only this module knows
// how they are spelled in YAML and in the JSON summary.
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include "features/feature_options.h"
#include "ingest/input_options.h"
#include "model/model_options.h"

namespace seston {

// "none", "log10", "ln", "sqrt".
std::string_view TransformWord(Transform transform);
std::optional<Transform> TransformFromWord(std::string_view word);

// "inotify", "poll".
std::string_view WatchModeWord(WatchMode mode);
std::optional<WatchMode> WatchModeFromWord(std::string_view word);

// "elbow", "silhouette".
std::string_view KSelectionRuleWord(KSelectionRule rule);
std::optional<KSelectionRule> KSelectionRuleFromWord(std::string_view word);

// The accepted words of each enum, in declaration order, joined as "none | log10 | ...".
std::string TransformWords();
std::string WatchModeWords();
std::string KSelectionRuleWords();

// Log levels accepted by logging.level: "trace | debug | info | warn | error".
bool IsLogLevelWord(std::string_view word);
std::string LogLevelWords();

}  // namespace seston
