// The subcommands of sestond. Each takes the arguments after its own name and returns
// the process exit code: 0 success, 1 the work failed, 2 a usage or config error.
#pragma once

#include <string>
#include <vector>

namespace seston::daemon {

int RunCommand(const std::vector<std::string>& args);
int ReplayCommand(const std::vector<std::string>& args);
int CheckConfigCommand(const std::vector<std::string>& args);

inline constexpr int kExitOk = 0;
inline constexpr int kExitFailed = 1;
inline constexpr int kExitUsage = 2;

}  // namespace seston::daemon
