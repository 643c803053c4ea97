// Options of the counting stage.
#pragma once

#include <cstddef>
#include <string>

namespace seston {

struct CountsOptions {
  double bin_seconds = 60;                  // width of a time bin, s of event time
  std::string output_dir = "./var/counts";  // count CSV files, rolled daily
  std::size_t retained_bins = 20160;        // bins kept in memory for queries (14 d of 60 s)
  double bin_close_lag_seconds = 300;       // a bin is written once event time passes its end
                                            // by this much, s
  std::size_t retained_samples = 2000;      // per-sample summaries kept in memory for queries
                                            // (the newest ones), count; default 2000, >= 1
  std::size_t open_count_files = 64;        // count files the writer keeps track of at once
                                            // (least recently written forgotten first; a
                                            // forgotten file is simply looked up again), >= 2
};

}  // namespace seston
