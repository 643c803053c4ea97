// Options of the ingest stage: which columns mean what, where files arrive, the socket.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>

namespace seston {

enum class WatchMode { kInotify, kPoll };

struct SocketOptions {
  // "HOST:PORT" for NDJSON over TCP; empty disables. Default "" (off). Loopback only
  // unless the operator writes another address.
  std::string listen;
  // Path of a Unix-domain socket for the same protocol; empty disables. Default "".
  std::string unix_path;
  std::size_t max_connections = 16;          // concurrent clients
  std::size_t max_queued_records = 65536;    // records waiting for the pipeline
};

struct InputOptions {
  std::string time_column = "time";          // ISO 8601 UTC or epoch seconds
  std::string sample_column = "sample";      // sample id; empty: the file is the sample
  std::string volume_column = "volume_ml";   // analysed volume per sample, mL; may be absent
  double default_volume_ml = 5.0;            // mL, used when the volume column is absent
  char delimiter = ',';

  std::string drop_dir = "./var/drop";       // watched directory
  std::string done_dir;                      // default <drop_dir>/done
  std::string quarantine_dir;                // default <drop_dir>/quarantine
  double settle_seconds = 5.0;               // unchanged this long before a file is taken
  double rescan_seconds = 30.0;              // periodic rescan, s, always on
  WatchMode watch = WatchMode::kInotify;
  std::string file_suffix = ".csv";          // files taken from drop_dir end with this

  double max_bad_row_fraction = 0.5;         // more rejected rows than this: quarantine
  std::size_t max_line_bytes = 65536;        // longer lines are rejected
  std::uint64_t max_file_bytes = 1ull << 30; // 1 GiB; larger files are quarantined

  SocketOptions socket;
};

}  // namespace seston
