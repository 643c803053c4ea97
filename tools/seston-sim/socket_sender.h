// SocketSender: streams samples as NDJSON over TCP to a listening daemon.
//
// Each sample goes out as FormatNdjson's lines (particle records, then the close record).
// Writes block while the peer's receive window is full, so the peer's back-pressure
// slows the simulator instead of piling data up in memory. Lines the peer sends back
// (acknowledgements, rejections) are read whenever they are waiting and handed to the
// `on_answer` callback, so the peer never blocks writing to us; Finish() half-closes
// the connection and collects the last answers until the peer closes or
// `linger_seconds` of wall time pass.
//
// Thread safety: one thread owns a SocketSender.
#pragma once

#include <functional>
#include <memory>
#include <string>
#include <string_view>

#include "base/status.h"

namespace seston::sim {

class SocketSender {
 public:
  using AnswerCallback = std::function<void(std::string_view line)>;

  // `address` is "HOST:PORT" (HOST a name, IPv4 address or [IPv6] address).
  static Result<std::unique_ptr<SocketSender>> Connect(std::string_view address,
                                                       AnswerCallback on_answer);
  ~SocketSender();
  SocketSender(const SocketSender&) = delete;
  SocketSender& operator=(const SocketSender&) = delete;

  // Sends `ndjson` (whole lines), blocking while the peer is not reading.
  Status Send(std::string_view ndjson);
  // Half-closes, then reads answers for up to `linger_seconds` or until the peer closes.
  Status Finish(double linger_seconds = 2.0);

 private:
  struct Connection;
  SocketSender(std::unique_ptr<Connection> connection, AnswerCallback on_answer,
               std::string address);
  Status ReadWaitingAnswers();
  void DeliverLines();

  std::unique_ptr<Connection> connection_;
  AnswerCallback on_answer_;
  std::string address_;
  std::string pending_;  // answer bytes after the last complete line
};

// Splits "HOST:PORT" / "[v6]:PORT"; the message names what is accepted.
Result<std::pair<std::string, std::string>> SplitHostPort(std::string_view address);

}  // namespace seston::sim
