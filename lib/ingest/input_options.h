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
  // Bytes of record text waiting for the pipeline, all connections together. Default
  // 64 MiB. With max_queued_records this bounds the queue whatever the line length.
  std::size_t max_queued_bytes = 64u << 20;
  // Reply bytes a connection may have waiting to be written. Default 1 MiB. A client
  // that does not read its replies is disconnected when this is exceeded.
  std::size_t max_pending_reply_bytes = 1u << 20;
  // After a client ends its input (half-close), the connection stays open this long
  // after the last reply, s, so that late answers (commits) still reach it. Default 10.
  double reply_linger_seconds = 10.0;
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
  // Names the drop-directory watcher remembers at once (waiting, ready or being read).
  // Default 100000. Further files wait in the directory for a later rescan, taken in
  // name order, so a large backlog costs bounded memory.
  std::size_t max_tracked_files = 100000;

  double max_bad_row_fraction = 0.5;         // more rejected rows than this: quarantine
  std::size_t max_line_bytes = 65536;        // longer lines are rejected
  std::uint64_t max_file_bytes = 1ull << 30; // 1 GiB; larger files are quarantined

  SocketOptions socket;
};

}  // namespace seston
