#include <cstdio>

#include "base/command_line.h"
#include "base/file_system.h"
#include "config/config_loader.h"
#include "config/config_summary.h"
#include "daemon/commands.h"

namespace seston::daemon {

int CheckConfigCommand(const std::vector<std::string>& args) {
  CommandLine cli("sestond check-config",
                  "Validates a config file. Prints every problem with its file, line and key,\n"
                  "or a summary of what the daemon would do with it.");
  cli.AddFlag("quiet", "print problems only, no summary");
  cli.AddPositional("FILE", "the config file (YAML)");
  Status parsed = cli.Parse(args);
  if (cli.help_requested()) {
    std::fputs(cli.Help().c_str(), stdout);
    return kExitOk;
  }
  if (!parsed.ok() || cli.positionals().size() != 1) {
    std::fprintf(stderr, "%s\n%s", parsed.ok() ? "sestond check-config: give one config file"
                                               : parsed.message().c_str(),
                 cli.Usage().c_str());
    return kExitUsage;
  }
  Config config;
  auto problems = CheckConfigFile(PosixFileSystem::Instance(), cli.positionals()[0], &config);
  for (const auto& problem : problems) std::fprintf(stderr, "%s\n", problem.ToString().c_str());
  if (!problems.empty()) {
    std::fprintf(stderr, "%zu problem%s found\n", problems.size(), problems.size() == 1 ? "" : "s");
    return kExitUsage;
  }
  if (!cli.Flag("quiet")) std::fputs(DescribeConfig(config).c_str(), stdout);
  std::printf("%s: ok\n", cli.positionals()[0].c_str());
  return kExitOk;
}

}  // namespace seston::daemon
