// What a loaded Config says, for people and for the API.
//
// DescribeConfig is what `sestond check-config` prints: a few lines per stage in plain
// words with units, so an operator can see how the file was understood (resolved paths,
// k or its range, which features and transforms). ConfigToJson has the same keys and
// shape as the YAML file, so its output is itself a valid config (JSON is YAML) that
// ParseConfig reads back to an equal Config; Config::source_path is not a key and is
// left out. Used by the summary and health endpoints.
//
// Thread safety: pure functions of their argument.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "config/config.h"

namespace seston {

std::string DescribeConfig(const Config& config);

nlohmann::json ConfigToJson(const Config& config);

}  // namespace seston
