#include <cstdio>

#include "base/clock.h"
#include "base/command_line.h"
#include "base/file_system.h"
#include "config/config_loader.h"
#include "daemon/commands.h"
#include "daemon/logging.h"
#include "pipeline/replay.h"

namespace seston::daemon {

int ReplayCommand(const std::vector<std::string>& args) {
  CommandLine cli("sestond replay",
                  "Runs the pipeline over archived sample files (files or directories, taken in\n"
                  "name order, which is time order for instrument-named files), with time taken\n"
                  "from the records: the output is deterministic. Writes count files and alerts\n"
                  "where the config says, and prints a table of groups and counts.");
  cli.AddOption("config", "FILE", "the config file (YAML)");
  cli.AddOption("assignments", "OUT.csv",
                "write file,line,cluster_id,distance for every accepted particle");
  cli.AddOption("summary", "OUT.json", "write the run summary as JSON");
  cli.AddFlag("quiet", "no progress line and no table");
  cli.AddPositional("PATH", "sample files or directories", true);
  Status parsed = cli.Parse(args);
  if (cli.help_requested()) {
    std::fputs(cli.Help().c_str(), stdout);
    return kExitOk;
  }
  if (parsed.ok() && !cli.Has("config")) {
    parsed = Status::InvalidArgument("sestond replay: --config FILE is required");
  }
  if (parsed.ok() && cli.positionals().empty()) {
    parsed = Status::InvalidArgument("sestond replay: give at least one file or directory");
  }
  if (!parsed.ok()) {
    std::fprintf(stderr, "%s\n%s", parsed.message().c_str(), cli.Usage().c_str());
    return kExitUsage;
  }
  auto config = LoadConfig(PosixFileSystem::Instance(), *cli.Get("config"));
  if (!config.ok()) {
    std::fprintf(stderr, "%s\n", config.status().message().c_str());
    return kExitUsage;
  }
  SetUpLogging(config->logging);

  ReplayRequest request;
  for (const auto& path : cli.positionals()) request.paths.emplace_back(path);
  if (auto path = cli.Get("assignments")) request.assignments_csv = *path;
  if (auto path = cli.Get("summary")) request.summary_json = *path;
  request.quiet = cli.Flag("quiet");
  auto summary = RunReplay(*config, request, PosixFileSystem::Instance(),
                           SystemClock::Instance(), stderr);
  if (!summary.ok()) {
    std::fprintf(stderr, "sestond replay: %s\n", summary.status().message().c_str());
    return kExitFailed;
  }
  for (const auto& skipped : (*summary)["files_skipped"]) {
    std::fprintf(stderr, "skipped %s\n", skipped["reason"].get<std::string>().c_str());
  }
  if (!request.quiet) std::fputs(FormatSummaryTable(*summary).c_str(), stdout);
  return kExitOk;
}

}  // namespace seston::daemon
