// "HOST:PORT" addresses as written in api.listen and sestonctl --api.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

#include "base/status.h"

namespace seston {

struct HostPort {
  std::string host;  // "127.0.0.1", "::1" (brackets removed), "localhost"
  std::uint16_t port = 0;
};

// "127.0.0.1:7460", "[::1]:7460", "localhost:7460"; an empty HOST (":7460") means
// 127.0.0.1. InvalidArgument naming `text` and the accepted forms otherwise.
Result<HostPort> ParseHostPort(std::string_view text);

}  // namespace seston
