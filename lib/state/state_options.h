// Options of the checkpoint store.
#pragma once

#include <cstdint>
#include <string>

namespace seston {

struct StateOptions {
  std::string dir = "./var/state";         // checkpoint files (created when missing); default
                                           // ./var/state
  double checkpoint_seconds = 60;          // at most this long between checkpoints, s (the live
                                           // daemon also checkpoints after every file)
  bool start_fresh_if_unreadable = false;  // both checkpoints damaged: start empty
  std::uint64_t max_checkpoint_bytes = 256ull << 20;  // a checkpoint file larger than this
                                                      // is refused on load (and on write),
                                                      // bytes; default 256 MiB
};

}  // namespace seston
