// RecordQueue: the bounded hand-over of socket lines from the io thread to the pipeline.
//
// Producers are socket sessions on the io thread(s); the one consumer is the pipeline
// thread. The queue is bounded twice: by line count (SocketOptions::max_queued_records)
// and by bytes of line text (max_queued_bytes); an empty queue always takes one line,
// so a single line as long as the line limit still passes.
//
// Nothing is dropped: TryPush() either takes the line or answers kFull and leaves the
// line with the caller, having stored the caller's `resume` callback. The producer then
// stops reading its socket (TCP back-pressure reaches the client) and keeps the line.
// `resume` is called once, on the consumer's thread, when the queue has drained to half
// its bounds (hysteresis, so producers are not woken for every single free slot), or
// when the queue is closed; it must be cheap and thread-safe — sessions post onto their
// own strand. At most one callback per producer is waiting at a time.
//
// Close() ends the queue: pushes answer kClosed, and PopBatch returns what is left,
// then nothing without waiting.
//
// Threading: every method may be called from any thread. One mutex and one condition
// variable: lines cross it in batches (PopBatch takes up to `max_lines` in one lock),
// so the lock is taken once per line by producers and once per batch by the consumer,
// far below the rate where a lock-free ring would pay for its complexity.
#pragma once

#include <chrono>
#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <deque>
#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

#include "ingest/reply_channel.h"

namespace seston {

struct QueuedLine {
  std::string line;                           // one NDJSON record, without the line break
  std::uint64_t line_number = 0;              // 1-based, counted per connection
  std::uint64_t connection = 0;               // server-unique connection number, from 1
  std::shared_ptr<const std::string> source;  // "socket:127.0.0.1:40312" or "socket:unix"
  std::weak_ptr<ReplyChannel> reply_to;       // expired once the connection closed
};

class RecordQueue {
 public:
  enum class PushResult { kAccepted, kFull, kClosed };

  // Both bounds at least 1.
  RecordQueue(std::size_t max_lines, std::size_t max_bytes);

  // Takes `item` (moving from it) when there is room. Otherwise leaves `item` as it was,
  // and, for kFull, keeps `resume` to be called once when room returns.
  PushResult TryPush(QueuedLine& item, std::function<void()> resume);

  // Waits up to `timeout` for at least one line, then moves up to `max_lines` lines to
  // the end of `out`. Returns how many were added (0: timed out, or closed and empty).
  std::size_t PopBatch(std::vector<QueuedLine>& out, std::size_t max_lines,
                       std::chrono::milliseconds timeout);

  void Close();
  bool closed() const;

  std::size_t size() const;
  std::size_t bytes() const;
  std::size_t max_lines() const { return max_lines_; }
  std::size_t max_bytes() const { return max_bytes_; }
  // How often a producer was told kFull: how often back-pressure reached the sockets.
  std::uint64_t full_count() const;

 private:
  bool FullLocked(std::size_t adding_bytes) const;

  const std::size_t max_lines_;
  const std::size_t max_bytes_;
  mutable std::mutex mutex_;
  std::condition_variable not_empty_;
  std::deque<QueuedLine> lines_;
  std::size_t bytes_ = 0;
  bool closed_ = false;
  std::uint64_t full_count_ = 0;
  std::vector<std::function<void()>> waiting_;
};

}  // namespace seston
