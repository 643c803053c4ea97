// HttpClient: a blocking HTTP/1.1 client for sestond's API, used by sestonctl and tests.
//
// One connection, kept alive across Send calls. Every step (resolve, connect, write,
// read) is bounded by the timeout given to Connect. Beast's asynchronous operations are
// run to completion on a private io_context, because only they honour a timeout; to the
// caller each call is synchronous. Responses larger than 64 MiB are refused.
//
// Errors: Unavailable for a daemon that cannot be reached or stops answering (the
// message reads "cannot reach sestond at HOST:PORT: connection refused"), InvalidArgument
// for a malformed address. An HTTP error status is not an error here: it is a reply.
//
// Thread safety: one thread at a time per client.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "base/status.h"

namespace seston {

struct HttpReply {
  int status = 0;
  std::string body;
  std::vector<std::pair<std::string, std::string>> headers;  // as received, in order
  bool keep_alive = false;  // the server will take another request on this connection

  // The first header called `name` (case-insensitive), if any.
  std::optional<std::string> Header(std::string_view name) const;
};

class HttpClient {
 public:
  // Resolves and connects to `address` ("HOST:PORT", see api/host_port.h).
  static Result<std::unique_ptr<HttpClient>> Connect(std::string_view address,
                                                     double timeout_seconds);
  ~HttpClient();
  HttpClient(const HttpClient&) = delete;
  HttpClient& operator=(const HttpClient&) = delete;

  // Sends one request; `token` non-empty adds "Authorization: Bearer TOKEN", `body`
  // non-empty is sent as application/json.
  Result<HttpReply> Send(std::string_view method, std::string_view target,
                         std::string_view body = "", std::string_view token = "");

 private:
  struct Connection;
  explicit HttpClient(std::unique_ptr<Connection> connection);
  std::unique_ptr<Connection> connection_;
};

}  // namespace seston
