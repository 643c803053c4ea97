// Config: the whole of sestond's configuration, as plain structs.
//
// Only this module knows YAML. LoadConfig reads a file, checks every key (unknown keys,
// wrong types and out-of-range values are errors naming file, line and key) and fills
// the Options structs that the other modules take. Defaults are the structs' own.
#pragma once

#include <string>
#include <vector>

#include "alerts/alert_options.h"
#include "api/api_options.h"
#include "base/status.h"
#include "counts/counts_options.h"
#include "drift/drift_options.h"
#include "features/feature_options.h"
#include "ingest/input_options.h"
#include "model/model_options.h"
#include "state/state_options.h"

namespace seston {

struct LoggingOptions {
  std::string level = "info";  // trace | debug | info | warn | error
};

struct Config {
  std::string station = "demo";  // free text shown in outputs and alerts
  InputOptions input;
  FeatureOptions features;
  ModelOptions model;
  CountsOptions counts;
  DriftOptions drift;
  AlertOptions alerts;
  StateOptions state;
  ApiOptions api;
  LoggingOptions logging;
  std::string source_path;  // the file this config was read from
};

}  // namespace seston
