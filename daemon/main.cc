// sestond: groups the particles of an imaging flow instrument, counts them, and screens
// for change. Subcommands: run (the live daemon), replay (archived files),
// check-config (validate a config file).
#include <cstdio>
#include <string>
#include <vector>

#include "daemon/commands.h"

namespace {

constexpr const char* kHelp =
    "usage: sestond COMMAND [options]\n"
    "\n"
    "Groups the particles of an imaging flow instrument with online k-means, keeps\n"
    "counts and concentrations (particles per mL) per group, and screens for change.\n"
    "\n"
    "commands:\n"
    "  run           run the live daemon: watch the drop directory and socket, answer\n"
    "                the HTTP API (sestond run --config FILE)\n"
    "  replay        run the same pipeline over archived sample files as fast as the\n"
    "                machine allows (sestond replay --config FILE PATH...)\n"
    "  check-config  validate a config file and print every problem with its line\n"
    "                (sestond check-config FILE)\n"
    "\n"
    "'sestond COMMAND --help' describes each command's options.\n"
    "seston is a screening aid: where water quality is at stake, the local authority and\n"
    "accredited laboratory methods decide.\n";

}  // namespace

int main(int argc, char** argv) {
  std::vector<std::string> args(argv + 1, argv + argc);
  if (args.empty() || args[0] == "--help" || args[0] == "-h" || args[0] == "help") {
    std::fputs(kHelp, args.empty() ? stderr : stdout);
    return args.empty() ? seston::daemon::kExitUsage : seston::daemon::kExitOk;
  }
  if (args[0] == "--version") {
    std::printf("sestond %s\n", SESTON_VERSION);
    return seston::daemon::kExitOk;
  }
  std::string command = args[0];
  args.erase(args.begin());
  if (command == "run") return seston::daemon::RunCommand(args);
  if (command == "replay") return seston::daemon::ReplayCommand(args);
  if (command == "check-config") return seston::daemon::CheckConfigCommand(args);
  std::fprintf(stderr, "sestond: unknown command \"%s\" (commands: run, replay, check-config)\n",
               command.c_str());
  return seston::daemon::kExitUsage;
}
