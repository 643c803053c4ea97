// Options of the alert policy and the alert outputs.
#pragma once

#include <cstddef>
#include <string>

#include "alerts/forwarding_options.h"

namespace seston {

struct AlertOptions {
  std::string dir = "./var/alerts";  // one JSON file per event
  int raise_after = 3;               // consecutive alarm evaluations before raising
  int resolve_after = 5;             // consecutive ok evaluations before resolving
  double cooldown_seconds = 3600;    // event time after a resolve before the same kind and
                                     // cluster may raise again, s
  std::string hook_command;          // run with the alert file path as argument; "" = none
  double hook_timeout_seconds = 10;
  std::size_t recent_kept = 200;  // resolved alerts kept for GET /v1/alerts
  AlertmanagerOptions alertmanager;  // forwarding to an Alertmanager; off by default
};

}  // namespace seston
