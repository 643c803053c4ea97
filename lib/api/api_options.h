// Options of the HTTP API (see api/http_server.h).
#pragma once

#include <cstddef>
#include <string>

namespace seston {

struct ApiOptions {
  // HOST:PORT to bind. HOST is an IP literal ("127.0.0.1", "::1" written "[::1]:7460",
  // "0.0.0.0" to listen on every interface); an empty HOST (":7460") means 127.0.0.1.
  // PORT 0 picks a free port (tests). Default 127.0.0.1:7460, loopback only.
  std::string listen = "127.0.0.1:7460";
  // File holding the bearer token that writes (PUT label, POST baseline) must present.
  // Read by the daemon, not by the API. "" (default) = writes are refused with 403.
  std::string token_file;
  // Largest request body accepted, bytes; a larger one is answered 413 and the
  // connection closed. Default 65536.
  std::size_t max_body_bytes = 65536;
  // Largest request line plus header fields, bytes; larger is answered 431 and the
  // connection closed. Default 8192.
  std::size_t max_header_bytes = 8192;
  // Connections served at once. Over this, up to as many again are accepted, their
  // request read and answered 503 with "Connection: close"; beyond twice this a new
  // connection is closed at once without an answer. Default 64.
  std::size_t max_connections = 64;
  // Time allowed to receive one whole request (and, separately, to send its answer), s.
  // On a keep-alive connection the wait for the next request counts too, so this is
  // also the idle timeout. Default 10.
  double request_timeout_seconds = 10;
};

}  // namespace seston
