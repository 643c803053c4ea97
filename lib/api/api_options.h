// Options of the HTTP API.
#pragma once

#include <cstddef>
#include <string>

namespace seston {

struct ApiOptions {
  std::string listen = "127.0.0.1:7460";  // HOST:PORT; loopback by default
  std::string token_file;                 // bearer token for writes; "" = writes refused
  std::size_t max_body_bytes = 65536;
  std::size_t max_connections = 64;
  double request_timeout_seconds = 10;
};

}  // namespace seston
