// seston-sim: a simulated imaging flow instrument for demos and tests. See --help and
// tools/seston-sim/run_simulation.h.
#include <unistd.h>

#include <iostream>
#include <string>
#include <vector>

#include "seston-sim/command_line.h"
#include "seston-sim/run_simulation.h"

int main(int argc, char** argv) {
  std::vector<std::string> args(argv + 1, argv + argc);
  auto command = seston::sim::ParseCommandLine(args);
  if (!command.ok()) {
    std::cerr << "seston-sim: " << command.status().message() << "\n";
    return 2;
  }
  if (command->help) {
    std::cout << seston::sim::UsageText();
    return 0;
  }
  seston::Status status = seston::sim::RunSimulation(*command, seston::PosixFileSystem::Instance(),
                                                     std::cerr, ::isatty(STDERR_FILENO) == 1);
  if (!status.ok()) {
    std::cerr << "seston-sim: " << status.message() << "\n";
    return 1;
  }
  return 0;
}
