#include "ingest/socket_server.h"

#include <arpa/inet.h>
#include <gtest/gtest.h>
#include <netinet/in.h>
#include <sys/socket.h>
#include <sys/time.h>
#include <sys/un.h>
#include <unistd.h>

#include <atomic>
#include <boost/asio/executor_work_guard.hpp>
#include <chrono>
#include <cstring>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <nlohmann/json.hpp>
#include <set>
#include <thread>

#include "support/test_paths.h"

namespace seston {
namespace {

using namespace std::chrono_literals;

// A plain blocking client on POSIX sockets, with a receive timeout so that no test can
// hang on a read.
class Client {
 public:
  static Client Tcp(std::uint16_t port, int receive_buffer_bytes = 0) {
    Client client(::socket(AF_INET, SOCK_STREAM, 0));
    if (receive_buffer_bytes > 0) {
      ::setsockopt(client.fd_, SOL_SOCKET, SO_RCVBUF, &receive_buffer_bytes,
                   sizeof receive_buffer_bytes);
    }
    sockaddr_in address{};
    address.sin_family = AF_INET;
    address.sin_port = htons(port);
    address.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
    client.connected_ =
        ::connect(client.fd_, reinterpret_cast<sockaddr*>(&address), sizeof address) == 0;
    return client;
  }
  static Client Unix(const std::string& path) {
    Client client(::socket(AF_UNIX, SOCK_STREAM, 0));
    sockaddr_un address{};
    address.sun_family = AF_UNIX;
    std::strncpy(address.sun_path, path.c_str(), sizeof address.sun_path - 1);
    client.connected_ =
        ::connect(client.fd_, reinterpret_cast<sockaddr*>(&address), sizeof address) == 0;
    return client;
  }
  Client(Client&& other) noexcept
      : fd_(std::exchange(other.fd_, -1)), connected_(other.connected_) {}
  ~Client() {
    if (fd_ >= 0) ::close(fd_);
  }

  bool connected() const { return connected_; }

  // False once the server has closed the connection.
  bool Send(std::string_view data) {
    while (!data.empty()) {
      ssize_t sent = ::send(fd_, data.data(), data.size(), MSG_NOSIGNAL);
      if (sent <= 0) return false;
      data.remove_prefix(static_cast<std::size_t>(sent));
    }
    return true;
  }
  void EndInput() { ::shutdown(fd_, SHUT_WR); }

  // The next line without its LF; nullopt at end of stream or after 5 s of silence.
  std::optional<std::string> ReadLine() {
    while (true) {
      std::size_t end = buffer_.find('\n');
      if (end != std::string::npos) {
        std::string line = buffer_.substr(0, end);
        buffer_.erase(0, end + 1);
        return line;
      }
      char chunk[4096];
      ssize_t got = ::recv(fd_, chunk, sizeof chunk, 0);
      if (got <= 0) return std::nullopt;
      buffer_.append(chunk, static_cast<std::size_t>(got));
    }
  }

 private:
  explicit Client(int fd) : fd_(fd) {
    timeval timeout{5, 0};
    ::setsockopt(fd_, SOL_SOCKET, SO_RCVTIMEO, &timeout, sizeof timeout);
  }

  int fd_;
  bool connected_ = false;
  std::string buffer_;
};

bool WaitUntil(const std::function<bool()>& condition, std::chrono::milliseconds limit) {
  auto deadline = std::chrono::steady_clock::now() + limit;
  while (!condition()) {
    if (std::chrono::steady_clock::now() > deadline) return false;
    std::this_thread::sleep_for(2ms);
  }
  return true;
}

// A server on loopback port 0 run by two io threads, and a consumer thread standing in
// for the pipeline: it records every line and may answer it.
class SocketServerTest : public ::testing::Test {
 protected:
  void StartServer(std::size_t queue_lines = 1024,
                   std::function<void(const QueuedLine&)> answer = nullptr,
                   std::chrono::microseconds pause_per_batch = 0us, std::size_t batch_lines = 256) {
    queue_.emplace(queue_lines, 1 << 20);
    auto made = SocketServer::Create(io_, options_, *queue_);
    ASSERT_TRUE(made.ok()) << made.status().ToString();
    server_ = std::move(*made);
    server_->Start();
    for (int i = 0; i < 2; ++i) io_threads_.emplace_back([this] { io_.run(); });
    consumer_ = std::thread([this, answer, pause_per_batch, batch_lines] {
      std::vector<QueuedLine> batch;
      while (!queue_->closed()) {
        batch.clear();
        queue_->PopBatch(batch, batch_lines, 20ms);
        for (QueuedLine& line : batch) {
          if (answer) answer(line);
          std::lock_guard lock(mutex_);
          received_[line.connection].push_back(std::move(line));
        }
        if (pause_per_batch > 0us) std::this_thread::sleep_for(pause_per_batch);
      }
    });
  }

  std::size_t ReceivedCount() {
    std::lock_guard lock(mutex_);
    std::size_t count = 0;
    for (const auto& [connection, lines] : received_) count += lines.size();
    return count;
  }

  void TearDown() override {
    if (server_) {
      server_->Stop();
      WaitUntil([this] { return server_->counters().connections_open == 0; }, 3000ms);
    }
    if (queue_) queue_->Close();
    if (consumer_.joinable()) consumer_.join();
    work_.reset();
    io_.stop();
    for (auto& thread : io_threads_) thread.join();
  }

  boost::asio::io_context io_;
  std::optional<boost::asio::executor_work_guard<boost::asio::io_context::executor_type>> work_{
      io_.get_executor()};
  InputOptions options_ = [] {
    InputOptions options;
    options.socket.listen = "127.0.0.1:0";
    options.socket.reply_linger_seconds = 0.5;
    return options;
  }();
  std::optional<RecordQueue> queue_;
  std::unique_ptr<SocketServer> server_;
  std::vector<std::thread> io_threads_;
  std::thread consumer_;
  std::mutex mutex_;
  std::map<std::uint64_t, std::vector<QueuedLine>> received_;
};

// Each connection's lines must arrive exactly once, numbered 1..n in the order sent.
void ExpectEveryClientInOrder(const std::map<std::uint64_t, std::vector<QueuedLine>>& received,
                              std::size_t clients, std::size_t lines_each) {
  ASSERT_EQ(received.size(), clients);
  std::set<int> senders;
  for (const auto& [connection, lines] : received) {
    ASSERT_EQ(lines.size(), lines_each) << "connection " << connection;
    int sender = nlohmann::json::parse(lines.front().line)["client"];
    senders.insert(sender);
    for (std::size_t i = 0; i < lines.size(); ++i) {
      ASSERT_EQ(lines[i].line_number, i + 1);
      auto record = nlohmann::json::parse(lines[i].line);
      ASSERT_EQ(record["client"], sender);
      ASSERT_EQ(record["n"], i);
    }
  }
  EXPECT_EQ(senders.size(), clients) << "each connection carried one client's lines";
}

std::string Record(int client, std::size_t n) {
  return "{\"client\":" + std::to_string(client) + ",\"n\":" + std::to_string(n) +
         ",\"area_um2\":310.5}\n";
}

TEST_F(SocketServerTest, ConcurrentClientsEachArriveExactlyOnceInOrder) {
  constexpr int kClients = 4;
  constexpr std::size_t kLines = 3000;
  StartServer();
  ASSERT_NE(server_->port(), 0);
  std::vector<std::thread> clients;
  for (int c = 0; c < kClients; ++c) {
    clients.emplace_back([this, c] {
      Client client = Client::Tcp(server_->port());
      ASSERT_TRUE(client.connected());
      // Uneven writes so that lines straddle the server's reads.
      std::string pending;
      for (std::size_t n = 0; n < kLines; ++n) {
        pending += Record(c, n);
        if (pending.size() > 1000 + 37 * static_cast<std::size_t>(c)) {
          ASSERT_TRUE(client.Send(pending));
          pending.clear();
        }
      }
      ASSERT_TRUE(client.Send(pending));
      ASSERT_TRUE(WaitUntil([this] { return ReceivedCount() >= kClients * kLines; }, 10000ms));
    });
  }
  for (auto& client : clients) client.join();
  std::lock_guard lock(mutex_);
  ExpectEveryClientInOrder(received_, kClients, kLines);
  EXPECT_EQ(server_->counters().lines_queued, kClients * kLines);
}

TEST_F(SocketServerTest, TooLongLineIsAnsweredAndSkippedAndTheConnectionStaysOpen) {
  options_.max_line_bytes = 100;
  StartServer();
  Client client = Client::Tcp(server_->port());
  ASSERT_TRUE(client.connected());
  // Line 2 spans several 16 KiB reads; line 4 is long but arrives in one piece.
  ASSERT_TRUE(client.Send("{\"a\":1}\n" + std::string(50000, 'x') + "\n{\"a\":3}\r\n" +
                          std::string(101, 'y') + "\n{\"a\":5}\n"));
  auto first = client.ReadLine();
  auto second = client.ReadLine();
  ASSERT_TRUE(first && second);
  auto reply = nlohmann::json::parse(*first);
  EXPECT_EQ(reply["rejected"], 2);
  EXPECT_EQ(reply["reason"], "line_too_long");
  EXPECT_EQ(nlohmann::json::parse(*second)["rejected"], 4);
  ASSERT_TRUE(WaitUntil([this] { return ReceivedCount() == 3; }, 5000ms));
  ASSERT_TRUE(client.Send("{\"a\":6}\n"));
  ASSERT_TRUE(WaitUntil([this] { return ReceivedCount() == 4; }, 5000ms));
  std::lock_guard lock(mutex_);
  const auto& lines = received_.begin()->second;
  EXPECT_EQ(lines[0].line, "{\"a\":1}");
  EXPECT_EQ(lines[1].line, "{\"a\":3}") << "the CR before LF is removed";
  EXPECT_EQ(lines[1].line_number, 3u);
  EXPECT_EQ(lines[2].line_number, 5u);
  EXPECT_EQ(lines[3].line_number, 6u);
  EXPECT_EQ(server_->counters().lines_too_long, 2u);
}

TEST_F(SocketServerTest, ConnectionOverTheLimitIsToldWhyAndClosed) {
  options_.socket.max_connections = 2;
  StartServer();
  Client one = Client::Tcp(server_->port());
  Client two = Client::Tcp(server_->port());
  ASSERT_TRUE(WaitUntil([this] { return server_->counters().connections_open == 2; }, 3000ms));
  Client three = Client::Tcp(server_->port());
  ASSERT_TRUE(three.connected());
  EXPECT_EQ(three.ReadLine(),
            std::optional<std::string>("{\"error\":\"too many connections (limit 2)\"}"));
  EXPECT_EQ(three.ReadLine(), std::nullopt) << "then closed";
  EXPECT_EQ(server_->counters().connections_refused, 1u);
  ASSERT_TRUE(one.Send("{\"from\":1}\n"));
  ASSERT_TRUE(two.Send("{\"from\":2}\n"));
  EXPECT_TRUE(WaitUntil([this] { return ReceivedCount() == 2; }, 3000ms));
}

TEST_F(SocketServerTest, RepliesArriveInOrderAndStopFlushesThemBeforeClosing) {
  StartServer(1024, [](const QueuedLine& line) {
    auto channel = line.reply_to.lock();
    ASSERT_TRUE(channel);
    channel->Send(Reply::Rejected(line.line_number, "not_a_number", "field area_um2: \"abc\""));
    channel->Send(Reply::Committed("S000123", 812));
  });
  Client client = Client::Tcp(server_->port());
  ASSERT_TRUE(client.Send("{\"area_um2\":\"abc\"}\n"));
  // Both replies were handed over before Stop: they must be written before the close.
  ASSERT_TRUE(WaitUntil([this] { return ReceivedCount() == 1; }, 3000ms));
  server_->Stop();
  EXPECT_EQ(client.ReadLine(),
            std::optional<std::string>(
                R"({"rejected":1,"reason":"not_a_number","detail":"field area_um2: \"abc\""})"));
  EXPECT_EQ(client.ReadLine(),
            std::optional<std::string>(R"({"committed":"S000123","particles":812})"));
  EXPECT_EQ(client.ReadLine(), std::nullopt) << "then Stop closes the connection";
  EXPECT_FALSE(Client::Tcp(server_->port()).connected()) << "and stops listening";
}

TEST_F(SocketServerTest, ClientThatNeverReadsRepliesIsClosedAtTheBound) {
  constexpr std::size_t kBound = 64 * 1024;
  options_.socket.max_pending_reply_bytes = kBound;
  // Shared with the consumer thread, which TearDown joins only after this body has returned.
  auto reply_bytes = std::make_shared<std::atomic<std::size_t>>(0);
  StartServer(1024, [reply_bytes](const QueuedLine& line) {
    if (auto channel = line.reply_to.lock()) {
      Reply reply = Reply::Rejected(line.line_number, "bad_record", std::string(900, 'd'));
      *reply_bytes += reply.text.size() + 1;
      channel->Send(std::move(reply));
    }
  });
  Client client = Client::Tcp(server_->port(), /*receive_buffer_bytes=*/4096);
  ASSERT_TRUE(client.connected());
  for (std::size_t n = 0; n < 40000; ++n) {
    if (!client.Send(Record(0, n))) break;  // the server gave up on us
    if (server_->counters().slow_reader_closes > 0) break;
  }
  ASSERT_TRUE(WaitUntil([this] { return server_->counters().slow_reader_closes == 1; }, 10000ms))
      << "replies sent: " << reply_bytes->load() << " bytes";
  SocketServer::Counters counters = server_->counters();
  EXPECT_LE(counters.peak_pending_reply_bytes, kBound);
  EXPECT_GT(reply_bytes->load(), kBound) << "the pipeline answered more than the bound";
  EXPECT_TRUE(WaitUntil([this] { return server_->counters().connections_open == 0; }, 3000ms));
}

TEST_F(SocketServerTest, TinyQueueAndSlowConsumerStillLoseNoLine) {
  constexpr int kClients = 3;
  constexpr std::size_t kLines = 600;
  StartServer(/*queue_lines=*/4, nullptr, /*pause_per_batch=*/300us, /*batch_lines=*/2);
  std::vector<std::thread> clients;
  for (int c = 0; c < kClients; ++c) {
    clients.emplace_back([this, c] {
      Client client = Client::Tcp(server_->port());
      ASSERT_TRUE(client.connected());
      std::string all;
      for (std::size_t n = 0; n < kLines; ++n) all += Record(c, n);
      ASSERT_TRUE(client.Send(all));
    });
  }
  for (auto& client : clients) client.join();
  ASSERT_TRUE(WaitUntil([this] { return ReceivedCount() == kClients * kLines; }, 20000ms))
      << "received " << ReceivedCount();
  EXPECT_GT(queue_->full_count(), 0u) << "back-pressure must have happened";
  std::lock_guard lock(mutex_);
  ExpectEveryClientInOrder(received_, kClients, kLines);
}

TEST_F(SocketServerTest, UnixSocketTakesALastLineWithoutLineBreak) {
  testing::ScratchDirectory scratch;
  options_.socket.listen.clear();
  options_.socket.unix_path = (scratch.path() / "records.sock").string();
  StartServer();
  EXPECT_EQ(server_->port(), 0);
  Client client = Client::Unix(options_.socket.unix_path);
  ASSERT_TRUE(client.connected());
  ASSERT_TRUE(client.Send("{\"a\":1}\n\n   \n{\"a\":4}"));
  client.EndInput();
  ASSERT_TRUE(WaitUntil([this] { return ReceivedCount() == 2; }, 3000ms));
  std::lock_guard lock(mutex_);
  const auto& lines = received_.begin()->second;
  EXPECT_EQ(lines[1].line, "{\"a\":4}");
  EXPECT_EQ(lines[1].line_number, 4u) << "blank lines are counted, not queued";
  EXPECT_EQ(*lines[1].source, "socket:unix");
}

TEST(SocketServerCreate, RefusesAnAddressItCannotUse) {
  boost::asio::io_context io;
  RecordQueue queue(4, 1024);
  InputOptions options;
  for (const char* listen : {"7510", "127.0.0.1:port", "127.0.0.1:70000", "sea.example:7510"}) {
    options.socket.listen = listen;
    auto made = SocketServer::Create(io, options, queue);
    ASSERT_FALSE(made.ok()) << listen;
    EXPECT_NE(made.status().message().find("HOST:PORT"), std::string::npos) << listen;
  }
  options.socket.listen.clear();
  EXPECT_EQ(SocketServer::Create(io, options, queue).status().code(), StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace seston
