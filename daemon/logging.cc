#include "daemon/logging.h"

#include <spdlog/sinks/stdout_color_sinks.h>
#include <spdlog/spdlog.h>

namespace seston::daemon {

void SetUpLogging(const LoggingOptions& options) {
  auto logger = spdlog::stderr_color_mt("sestond");
  logger->set_pattern("%Y-%m-%dT%H:%M:%S.%eZ %^%l%$ %v", spdlog::pattern_time_type::utc);
  logger->set_level(spdlog::level::from_str(options.level));
  spdlog::set_default_logger(logger);
}

}  // namespace seston::daemon
