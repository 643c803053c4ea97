// CommandLine: the options of the seston-sim binary, parsed and checked.
//
// Boost.Program_options would do this, but it is a compiled Boost library and the
// project uses Boost header-only (its -dev package is not among our dependencies), so
// this is a small parser of its own: "--name VALUE", "--name=VALUE" and bare flags.
// UsageText() lists every option with its unit and default; the binary exits with code 2
// on any error ParseCommandLine returns.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "base/status.h"
#include "seston-sim/sample_generator.h"

namespace seston::sim {

struct CommandLine {
  SimulatorOptions simulator;
  std::string out_dir;              // --out; required unless --socket
  std::uint64_t samples = 0;        // --samples; required in batch mode; live: 0 = no end
  bool truth = false;               // --truth: add the generating group's name as "group"
  bool live = false;                // --live: pace samples by the simulated clock
  double speed = 1.0;               // --speed: event seconds per wall second (live)
  bool slow_write = false;          // --slow-write (live, files)
  double slow_write_seconds = 3.0;  // --slow-write-seconds: wall seconds per slow file
  std::string socket;               // --socket HOST:PORT (live): NDJSON over TCP
  bool help = false;                // --help: print UsageText() and exit 0
};

// `args` excludes the program name.
Result<CommandLine> ParseCommandLine(const std::vector<std::string>& args);

std::string UsageText();

}  // namespace seston::sim
