#include "ingest/record_queue.h"

#include <algorithm>
#include <utility>

namespace seston {

RecordQueue::RecordQueue(std::size_t max_lines, std::size_t max_bytes)
    : max_lines_(std::max<std::size_t>(max_lines, 1)),
      max_bytes_(std::max<std::size_t>(max_bytes, 1)) {}

bool RecordQueue::FullLocked(std::size_t adding_bytes) const {
  if (lines_.empty()) return false;
  return lines_.size() >= max_lines_ || bytes_ + adding_bytes > max_bytes_;
}

RecordQueue::PushResult RecordQueue::TryPush(QueuedLine& item, std::function<void()> resume) {
  {
    std::lock_guard lock(mutex_);
    if (closed_) return PushResult::kClosed;
    if (FullLocked(item.line.size())) {
      ++full_count_;
      if (resume) waiting_.push_back(std::move(resume));
      return PushResult::kFull;
    }
    bytes_ += item.line.size();
    lines_.push_back(std::move(item));
  }
  not_empty_.notify_one();
  return PushResult::kAccepted;
}

std::size_t RecordQueue::PopBatch(std::vector<QueuedLine>& out, std::size_t max_lines,
                                  std::chrono::milliseconds timeout) {
  std::vector<std::function<void()>> to_resume;
  std::size_t taken = 0;
  {
    std::unique_lock lock(mutex_);
    not_empty_.wait_for(lock, timeout, [this] { return !lines_.empty() || closed_; });
    while (taken < max_lines && !lines_.empty()) {
      bytes_ -= lines_.front().line.size();
      out.push_back(std::move(lines_.front()));
      lines_.pop_front();
      ++taken;
    }
    if (!waiting_.empty() && lines_.size() <= max_lines_ / 2 && bytes_ <= max_bytes_ / 2) {
      to_resume.swap(waiting_);
    }
  }
  // Outside the lock, so that a callback may push at once.
  for (auto& resume : to_resume) resume();
  return taken;
}

void RecordQueue::Close() {
  std::vector<std::function<void()>> to_resume;
  {
    std::lock_guard lock(mutex_);
    closed_ = true;
    to_resume.swap(waiting_);
  }
  not_empty_.notify_all();
  for (auto& resume : to_resume) resume();
}

bool RecordQueue::closed() const {
  std::lock_guard lock(mutex_);
  return closed_;
}

std::size_t RecordQueue::size() const {
  std::lock_guard lock(mutex_);
  return lines_.size();
}

std::size_t RecordQueue::bytes() const {
  std::lock_guard lock(mutex_);
  return bytes_;
}

std::uint64_t RecordQueue::full_count() const {
  std::lock_guard lock(mutex_);
  return full_count_;
}

}  // namespace seston
