// ReplyChannel and Reply: the way back from the pipeline to a socket client.
//
// Each line read from a socket connection carries a weak_ptr<ReplyChannel> to its
// connection (see record_queue.h). The pipeline answers through it: rejections of bad
// records and commits of samples. A channel whose connection has closed has expired, so
// a late answer is simply not delivered.
//
// Wire form: one JSON object per line (NDJSON), our own vocabulary:
//   {"rejected":17,"reason":"not_a_number","detail":"field area_um2: \"abc\""}
//   {"committed":"S000123","particles":812}
//   {"error":"too many connections (limit 16)"}
// Text that is not valid UTF-8 is written with U+FFFD in place of the bad bytes.
//
// Threading: Send() may be called from any thread, any number of times; it never
// blocks (the connection queues the reply, bounded, see socket_server.h).
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

namespace seston {

struct Reply {
  std::string text;  // one JSON object, without the newline

  static Reply Rejected(std::uint64_t line_number, std::string_view reason,
                        std::string_view detail);
  static Reply Committed(std::string_view sample, std::uint64_t particles);
  static Reply Error(std::string_view message);
};

class ReplyChannel {
 public:
  virtual ~ReplyChannel() = default;
  virtual void Send(Reply reply) = 0;
};

}  // namespace seston
