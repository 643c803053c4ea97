#include <cstdio>

#include "daemon/commands.h"

namespace seston::daemon {

int RunCommand(const std::vector<std::string>&) {
  std::fputs("sestond run: the live daemon is not built yet; use sestond replay\n", stderr);
  return kExitFailed;
}

}  // namespace seston::daemon
