// HttpServer: the API's HTTP/1.1 listener on Boost.Beast, one async session per
// connection.
//
// Owns the listening socket and its sessions; borrows the backend, which must outlive the
// io_context's last handler (stop the server, then let io_context::run return, then
// destroy the backend). The token is given by the daemon, which reads api.token_file.
//
// A session reads a request (do_read -> on_read), routes it with Route (api/router.h,
// handle), writes the answer (do_write -> on_write) and, on keep-alive, reads the next.
// Bounds, all from ApiOptions:
//   request_timeout_seconds  to receive a whole request, and again to send its answer;
//                            a client that stalls is disconnected (also when idle);
//   max_body_bytes           a longer body gets 413 and the connection is closed;
//   max_header_bytes         longer headers get 431 and the connection is closed;
//   max_connections          sessions served at once; the next max_connections are
//                            accepted, their request read and answered 503 with
//                            "Connection: close"; beyond that a connection is closed at
//                            once. Answering (rather than leaving the connection in the
//                            kernel's backlog) lets a client tell "busy" from "down".
// A connection that is closed after an error answer is half-closed and drained until the
// client closes it (or the timeout), so the client reads the answer instead of a reset.
//
// Threads: the io_context may be run by one thread or several (each connection has its
// own strand). Start, Stop and port may be called from any thread. Each request is
// logged at debug level (peer, method, target, status), never its Authorization header.
#pragma once

#include <boost/asio/io_context.hpp>
#include <cstdint>
#include <memory>
#include <string>

#include "api/api_backend.h"
#include "api/api_options.h"
#include "base/status.h"

namespace seston {

class HttpServer {
 public:
  // Checks `options`, then binds and listens on options.listen; accepts nothing until
  // Start. InvalidArgument for bad options, IoError when the address cannot be bound.
  // `token` "" refuses every write (see Route).
  static Result<std::unique_ptr<HttpServer>> Create(boost::asio::io_context& io_context,
                                                    const ApiOptions& options, ApiBackend& backend,
                                                    std::string token);
  ~HttpServer();  // Stops.
  HttpServer(const HttpServer&) = delete;
  HttpServer& operator=(const HttpServer&) = delete;

  // Begins accepting connections. Call once.
  void Start();
  // Stops accepting and closes every open connection (a request being answered is cut
  // off). Returns at once; the closing runs on the io_context. Idempotent.
  void Stop();
  // The bound port, the real one when options.listen asked for port 0.
  std::uint16_t port() const { return port_; }

 private:
  class Listener;  // the Beast machinery, in http_server.cc

  HttpServer(std::shared_ptr<Listener> listener, std::uint16_t port)
      : listener_(std::move(listener)), port_(port) {}

  std::shared_ptr<Listener> listener_;
  std::uint16_t port_;
};

}  // namespace seston
