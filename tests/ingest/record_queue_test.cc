#include "ingest/record_queue.h"

#include <gtest/gtest.h>

#include <atomic>
#include <condition_variable>
#include <thread>

namespace seston {
namespace {

using std::chrono::milliseconds;

QueuedLine Line(std::string text, std::uint64_t number = 0, std::uint64_t connection = 0) {
  QueuedLine line;
  line.line = std::move(text);
  line.line_number = number;
  line.connection = connection;
  return line;
}

TEST(RecordQueue, TakesNoMoreLinesThanItsCapacityAndKeepsTheRefusedOne) {
  RecordQueue queue(3, 1 << 20);
  for (int i = 0; i < 3; ++i) {
    QueuedLine line = Line("{\"n\":" + std::to_string(i) + "}");
    EXPECT_EQ(queue.TryPush(line, nullptr), RecordQueue::PushResult::kAccepted);
  }
  QueuedLine fourth = Line("{\"n\":3}");
  EXPECT_EQ(queue.TryPush(fourth, nullptr), RecordQueue::PushResult::kFull);
  EXPECT_EQ(fourth.line, "{\"n\":3}") << "a refused line stays with the producer";
  EXPECT_EQ(queue.size(), 3u);
  EXPECT_EQ(queue.full_count(), 1u);
}

TEST(RecordQueue, BytesAreBoundedButOneLongLineAlwaysPasses) {
  RecordQueue queue(100, 10);
  QueuedLine eight = Line("12345678");
  QueuedLine five = Line("12345");
  EXPECT_EQ(queue.TryPush(eight, nullptr), RecordQueue::PushResult::kAccepted);
  EXPECT_EQ(queue.TryPush(five, nullptr), RecordQueue::PushResult::kFull);
  std::vector<QueuedLine> out;
  ASSERT_EQ(queue.PopBatch(out, 10, milliseconds(0)), 1u);
  QueuedLine long_line = Line(std::string(50, 'x'));
  EXPECT_EQ(queue.TryPush(long_line, nullptr), RecordQueue::PushResult::kAccepted);
  EXPECT_EQ(queue.bytes(), 50u);
}

TEST(RecordQueue, ResumeIsCalledOnceWhenDrainedToHalf) {
  RecordQueue queue(4, 1 << 20);
  for (int i = 0; i < 4; ++i) {
    QueuedLine line = Line("x");
    ASSERT_EQ(queue.TryPush(line, nullptr), RecordQueue::PushResult::kAccepted);
  }
  int resumed = 0;
  QueuedLine fifth = Line("y");
  ASSERT_EQ(queue.TryPush(fifth, [&resumed] { ++resumed; }), RecordQueue::PushResult::kFull);
  std::vector<QueuedLine> out;
  queue.PopBatch(out, 1, milliseconds(0));
  EXPECT_EQ(resumed, 0) << "3 of 4 left: above half";
  queue.PopBatch(out, 1, milliseconds(0));
  EXPECT_EQ(resumed, 1) << "2 of 4 left: half";
  queue.PopBatch(out, 2, milliseconds(0));
  EXPECT_EQ(resumed, 1) << "called once per refusal";
  EXPECT_EQ(queue.TryPush(fifth, nullptr), RecordQueue::PushResult::kAccepted);
}

TEST(RecordQueue, PopBatchWaitsAtMostItsTimeout) {
  RecordQueue queue(4, 1 << 20);
  std::vector<QueuedLine> out;
  auto start = std::chrono::steady_clock::now();
  EXPECT_EQ(queue.PopBatch(out, 8, milliseconds(50)), 0u);
  auto waited = std::chrono::steady_clock::now() - start;
  EXPECT_GE(waited, milliseconds(50));
  EXPECT_LT(waited, milliseconds(2000));
}

TEST(RecordQueue, CloseWakesTheConsumerAndTheWaitingProducers) {
  RecordQueue queue(1, 1 << 20);
  QueuedLine first = Line("a");
  ASSERT_EQ(queue.TryPush(first, nullptr), RecordQueue::PushResult::kAccepted);
  std::atomic<int> resumed{0};
  QueuedLine second = Line("b");
  ASSERT_EQ(queue.TryPush(second, [&resumed] { ++resumed; }), RecordQueue::PushResult::kFull);
  std::vector<QueuedLine> out;
  ASSERT_EQ(queue.PopBatch(out, 1, milliseconds(0)), 1u);
  EXPECT_EQ(resumed.load(), 1);

  std::thread consumer([&queue] {
    std::vector<QueuedLine> lines;
    auto start = std::chrono::steady_clock::now();
    EXPECT_EQ(queue.PopBatch(lines, 1, milliseconds(10000)), 0u);
    EXPECT_LT(std::chrono::steady_clock::now() - start, milliseconds(5000));
  });
  std::this_thread::sleep_for(milliseconds(20));
  queue.Close();
  consumer.join();
  EXPECT_EQ(queue.TryPush(second, nullptr), RecordQueue::PushResult::kClosed);
}

// Four producers race into a queue of 16; each waits for its resume call when refused.
// Every line must come out once, and each producer's lines in the order it sent them.
TEST(RecordQueue, NoLineIsLostOrReorderedAcrossProducers) {
  constexpr int kProducers = 4;
  constexpr std::uint64_t kLinesEach = 5000;
  RecordQueue queue(16, 1 << 20);
  std::vector<std::thread> producers;
  for (int p = 0; p < kProducers; ++p) {
    producers.emplace_back([&queue, p] {
      std::mutex mutex;
      std::condition_variable room;
      bool resumed = false;
      for (std::uint64_t n = 1; n <= kLinesEach; ++n) {
        QueuedLine line = Line(std::to_string(n), n, static_cast<std::uint64_t>(p));
        while (true) {
          {
            std::lock_guard lock(mutex);
            resumed = false;
          }
          auto result = queue.TryPush(line, [&] {
            std::lock_guard lock(mutex);
            resumed = true;
            room.notify_one();
          });
          if (result == RecordQueue::PushResult::kAccepted) break;
          ASSERT_EQ(result, RecordQueue::PushResult::kFull);
          std::unique_lock lock(mutex);
          room.wait(lock, [&] { return resumed; });
        }
      }
    });
  }
  std::vector<std::uint64_t> next(kProducers, 1);
  std::uint64_t received = 0;
  std::vector<QueuedLine> batch;
  auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(20);
  while (received < kProducers * kLinesEach && std::chrono::steady_clock::now() < deadline) {
    batch.clear();
    queue.PopBatch(batch, 7, milliseconds(100));
    for (const QueuedLine& line : batch) {
      ASSERT_EQ(line.line_number, next[line.connection]) << "producer " << line.connection;
      ASSERT_EQ(line.line, std::to_string(line.line_number));
      ++next[line.connection];
      ++received;
    }
  }
  for (auto& producer : producers) producer.join();
  EXPECT_EQ(received, kProducers * kLinesEach);
  EXPECT_EQ(queue.size(), 0u);
  EXPECT_GT(queue.full_count(), 0u) << "the test must have exercised back-pressure";
}

}  // namespace
}  // namespace seston
