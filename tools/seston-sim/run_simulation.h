// RunSimulation: carries out a parsed seston-sim command line.
//
// Batch mode generates samples 0..N-1 and writes them as fast as the disk allows. Live
// mode paces them: sample n is released when the simulated clock reaches the end of its
// acquisition, and the simulated clock runs `speed` event seconds per wall second from
// the moment the run starts. Wall time only paces the run; it never enters the data.
//
// Messages go to `log`: the scenario's change notice when its first changed sample is
// produced, one line per sample in live mode, answers from a socket peer, and a summary
// at the end. With `progress_line` (stderr is a terminal) batch mode redraws one
// progress line in place.
#pragma once

#include <ostream>

#include "base/file_system.h"
#include "base/status.h"
#include "seston-sim/command_line.h"

namespace seston::sim {

Status RunSimulation(const CommandLine& command, FileSystem& fs, std::ostream& log,
                     bool progress_line);

}  // namespace seston::sim
