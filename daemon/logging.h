// Logging set-up for sestond: spdlog to stderr (journald keeps it under systemd), at the
// configured level.
#pragma once

#include "config/config.h"

namespace seston::daemon {

void SetUpLogging(const LoggingOptions& options);

}  // namespace seston::daemon
