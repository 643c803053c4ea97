// Options of the checkpoint store.
#pragma once

#include <string>

namespace seston {

struct StateOptions {
  std::string dir = "./var/state";
  double checkpoint_seconds = 60;   // at most this long between checkpoints, s (the live
                                    // daemon also checkpoints after every file)
  bool start_fresh_if_unreadable = false;  // both checkpoints damaged: start empty
};

}  // namespace seston
