// sestonctl: query and label a running sestond from a shell.
//
//   sestonctl [--api HOST:PORT] [--token-file FILE] [--json] [--timeout SECONDS] COMMAND
//     status                       the daemon's health (GET /v1/health)
//     counts [--window 1h | --from TIME --to TIME]   counts and conc. /mL per cluster
//     clusters                     every cluster with its centre (GET /v1/clusters)
//     alerts                       active and recently resolved alerts
//     label ID NAME                name cluster ID (PUT, needs --token-file)
//     baseline accept              take the present mix as the drift baseline (POST)
//
// --api defaults to $SESTON_API, else 127.0.0.1:7460. Tables by default; --json prints
// the daemon's JSON as received. Exit codes: 0 done, 1 the daemon answered with an
// error (its message is printed), 2 usage error, 3 the daemon cannot be reached.
#pragma once

#include <optional>
#include <ostream>
#include <string>
#include <vector>

namespace seston::ctl {

inline constexpr int kExitOk = 0;
inline constexpr int kExitServerError = 1;
inline constexpr int kExitUsage = 2;
inline constexpr int kExitUnreachable = 3;

// Runs one sestonctl invocation: `args` without the program name, `api_from_environment`
// the value of SESTON_API if set. Writes results to `out`, messages to `err`; returns
// the exit code.
int RunSestonctl(const std::vector<std::string>& args,
                 const std::optional<std::string>& api_from_environment, std::ostream& out,
                 std::ostream& err);

}  // namespace seston::ctl
