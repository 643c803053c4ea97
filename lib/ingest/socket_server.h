// SocketServer: receives NDJSON records over TCP and a Unix-domain socket, one line per
// record, and hands each line to the pipeline through a RecordQueue.
//
// It frames lines and carries replies; it does not look inside a line (NdjsonParser
// does, on the pipeline thread).
//
// Listening: SocketOptions::listen "HOST:PORT" with a numeric HOST ("127.0.0.1",
// "[::1]"), "localhost", or nothing (":7510") for 127.0.0.1; port 0 takes a free port
// (see port()). SocketOptions::unix_path, when set, also listens there; a stale socket
// file left by an earlier run is replaced, any other file at that path is an error.
//
// Framing, per connection:
//   - lines end with LF; a CR before it is removed; lines are numbered from 1 and every
//     line counts, blank ones included, but blank (spaces/tabs only) lines are not
//     queued; at end of input a last line without LF is still taken;
//   - a line longer than InputOptions::max_line_bytes (bytes, without the line break) is
//     answered {"rejected":N,"reason":"line_too_long",...} and skipped up to the next
//     LF; the connection stays open. Per connection at most one read chunk (16 KiB) plus
//     one line is buffered.
// Back-pressure: when the RecordQueue is full the connection keeps the one line it could
// not queue and stops reading, so TCP flow control slows the client; it reads again
// when the queue calls back. No line is dropped while the connection is open.
//
// Connections: at most SocketOptions::max_connections at once; one more is accepted,
// sent {"error":"too many connections (limit 16)"} and closed.
//
// Replies: QueuedLine::reply_to reaches the connection from any thread; replies are
// written in the order sent. The bytes waiting to be written on one connection are
// bounded by SocketOptions::max_pending_reply_bytes: a reply that would go past it
// closes the connection at once (with a warning in the log naming the peer), since a
// client that does not read its answers must not make the daemon grow. After the client
// ends its input the connection stays open for replies until reply_linger_seconds pass
// without one.
//
// Stop(): stops accepting and closes every connection after writing the replies already
// queued (at most 2 s, then closed anyway). Lines a paused connection held back are not
// queued; the client sees the close without a commit and sends them again. Stop()
// does not close the RecordQueue.
//
// Threading: Create() on any thread; everything else runs on the io_context, which may
// be run by one thread or several (each connection and the listeners have their own
// strand). Stop() and the counters may be called from any thread. The RecordQueue must
// outlive the io_context's handlers.
#pragma once

#include <atomic>
#include <boost/asio/io_context.hpp>
#include <cstddef>
#include <cstdint>
#include <memory>

#include "base/status.h"
#include "ingest/input_options.h"
#include "ingest/record_queue.h"

namespace seston {

class SocketServer {
 public:
  // Binds and listens (so that a port in use fails here, with the address); accepting
  // begins with Start(). Fails when neither listen nor unix_path is set.
  static Result<std::unique_ptr<SocketServer>> Create(boost::asio::io_context& io,
                                                      const InputOptions& options,
                                                      RecordQueue& queue);
  ~SocketServer();
  SocketServer(const SocketServer&) = delete;
  SocketServer& operator=(const SocketServer&) = delete;

  void Start();
  void Stop();

  // The TCP port listened on (the one chosen when listen asked for port 0); 0 without TCP.
  std::uint16_t port() const { return port_; }

  // Counters for metrics; any thread.
  struct Counters {
    std::uint64_t connections_accepted = 0;
    std::uint64_t connections_refused = 0;  // over max_connections
    std::uint64_t connections_open = 0;
    std::uint64_t lines_queued = 0;
    std::uint64_t lines_too_long = 0;
    std::uint64_t slow_reader_closes = 0;        // closed for unread replies
    std::uint64_t peak_pending_reply_bytes = 0;  // highest on any one connection
  };
  Counters counters() const;

  struct Core;  // the state shared with connections; defined in socket_server.cc

 private:
  SocketServer(std::shared_ptr<Core> core, std::uint16_t port);

  std::shared_ptr<Core> core_;
  std::uint16_t port_;
};

}  // namespace seston
