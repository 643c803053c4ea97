#include "ingest/socket_server.h"

#include <spdlog/spdlog.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/local/stream_protocol.hpp>
#include <boost/asio/post.hpp>
#include <boost/asio/steady_timer.hpp>
#include <boost/asio/strand.hpp>
#include <boost/asio/write.hpp>
#include <chrono>
#include <deque>
#include <mutex>
#include <optional>
#include <string>
#include <string_view>
#include <type_traits>
#include <unordered_map>
#include <utility>
#include <vector>

#include "ingest/particle_batch.h"
#include "ingest/reply_channel.h"

namespace seston {

using boost::asio::ip::tcp;
using UnixSocket = boost::asio::local::stream_protocol;

namespace {

constexpr std::size_t kReadChunkBytes = 16384;
constexpr double kStopDrainSeconds = 2.0;
constexpr auto kAcceptRetryDelay = std::chrono::milliseconds(100);

std::chrono::steady_clock::duration Seconds(double seconds) {
  return std::chrono::duration_cast<std::chrono::steady_clock::duration>(
      std::chrono::duration<double>(std::max(seconds, 0.0)));
}

bool IsBlank(std::string_view line) {
  return line.find_first_not_of(" \t") == std::string_view::npos;
}

Result<tcp::endpoint> ParseListenAddress(const std::string& listen) {
  auto invalid = [&listen](const std::string& why) {
    return Status::InvalidArgument("socket listen address \"" + listen + "\" " + why +
                                   "; give HOST:PORT such as 127.0.0.1:7510, [::1]:7510 "
                                   "or :7510 for loopback");
  };
  std::size_t colon = listen.rfind(':');
  if (colon == std::string::npos) return invalid("has no port");
  std::string host = listen.substr(0, colon);
  std::string port_text = listen.substr(colon + 1);
  if (host.size() >= 2 && host.front() == '[' && host.back() == ']') {
    host = host.substr(1, host.size() - 2);
  }
  if (host.empty() || host == "localhost") host = "127.0.0.1";
  if (port_text.empty() || port_text.size() > 5 ||
      port_text.find_first_not_of("0123456789") != std::string::npos ||
      std::stoul(port_text) > 65535) {
    return invalid("has a port that is not a number from 0 to 65535");
  }
  boost::system::error_code error;
  auto address = boost::asio::ip::make_address(host, error);
  if (error) return invalid("has a host that is not a numeric address");
  return tcp::endpoint(address, static_cast<std::uint16_t>(std::stoul(port_text)));
}

class Connection;

}  // namespace

struct SocketServer::Core : std::enable_shared_from_this<SocketServer::Core> {
  Core(boost::asio::io_context& io_context, const InputOptions& input, RecordQueue& records)
      : io(io_context),
        options(input),
        queue(records),
        strand(boost::asio::make_strand(io_context)),
        tcp_acceptor(strand),
        unix_acceptor(strand),
        retry_timer(strand) {}

  template <typename Acceptor>
  void Accept(Acceptor& acceptor);
  void StopOnStrand();
  void Unregister(std::uint64_t id);
  void NotePendingReplyBytes(std::size_t bytes);

  boost::asio::io_context& io;
  InputOptions options;
  RecordQueue& queue;
  boost::asio::strand<boost::asio::io_context::executor_type> strand;
  tcp::acceptor tcp_acceptor;
  UnixSocket::acceptor unix_acceptor;
  boost::asio::steady_timer retry_timer;
  bool stopped = false;  // on `strand`

  std::mutex mutex;  // guards connections and next_id
  std::unordered_map<std::uint64_t, std::weak_ptr<Connection>> connections;
  std::uint64_t next_id = 1;

  std::atomic<std::uint64_t> accepted{0};
  std::atomic<std::uint64_t> refused{0};
  std::atomic<std::uint64_t> lines_queued{0};
  std::atomic<std::uint64_t> lines_too_long{0};
  std::atomic<std::uint64_t> slow_reader_closes{0};
  std::atomic<std::uint64_t> peak_pending_reply_bytes{0};
};

namespace {

// A connection's own interface, apart from the protocol it runs on.
class Connection : public ReplyChannel {
 public:
  virtual void Begin() = 0;
  // Stops reading, writes what is queued (bounded in time), then closes.
  virtual void CloseGracefully() = 0;
};

// One client connection, in the usual Asio session shape: DoRead -> OnRead -> Drain
// (frame, queue) -> DoRead, and replies through QueueReply -> DoWrite -> OnWrite. Every
// member below is touched only on the socket's strand, except pending_reply_bytes_.
template <typename Protocol>
class Session final : public Connection, public std::enable_shared_from_this<Session<Protocol>> {
 public:
  Session(typename Protocol::socket socket, std::shared_ptr<SocketServer::Core> core,
          std::uint64_t id, std::string peer)
      : socket_(std::move(socket)),
        executor_(socket_.get_executor()),
        core_(std::move(core)),
        id_(id),
        source_(std::make_shared<const std::string>("socket:" + std::move(peer))),
        timer_(executor_) {}

  void Begin() override {
    boost::asio::post(executor_, [self = this->shared_from_this()] { self->DoRead(); });
  }

  void Send(Reply reply) override {
    std::string text = std::move(reply.text);
    text += '\n';
    std::size_t limit = core_->options.socket.max_pending_reply_bytes;
    std::size_t before = pending_reply_bytes_.fetch_add(text.size());
    if (before + text.size() > limit) {
      pending_reply_bytes_.fetch_sub(text.size());
      boost::asio::post(executor_,
                        [self = this->shared_from_this()] { self->CloseForSlowReader(); });
      return;
    }
    core_->NotePendingReplyBytes(before + text.size());
    boost::asio::post(executor_, [self = this->shared_from_this(), text = std::move(text)] {
      self->QueueReply(text);
    });
  }

  void CloseGracefully() override {
    boost::asio::post(executor_, [self = this->shared_from_this()] {
      if (self->closing_) return;
      self->closing_ = true;
      self->held_.reset();
      // Ends the pending read (it sees end of input) without cancelling a reply being
      // written, as cancel() would.
      boost::system::error_code ignored;
      self->socket_.shutdown(Protocol::socket::shutdown_receive, ignored);
      if (!self->writing_) {
        self->Close();
        return;
      }
      self->timer_.expires_after(Seconds(kStopDrainSeconds));
      self->timer_.async_wait([self](const boost::system::error_code& error) {
        if (!error) self->Close();
      });
    });
  }

 private:
  void DoRead() {
    if (closing_) return;
    socket_.async_read_some(
        boost::asio::buffer(chunk_),
        [self = this->shared_from_this()](const boost::system::error_code& error,
                                          std::size_t bytes) { self->OnRead(error, bytes); });
  }

  void OnRead(const boost::system::error_code& error, std::size_t bytes) {
    if (closing_) return;
    if (error == boost::asio::error::eof) {
      input_ended_ = true;
    } else if (error) {
      Close();
      return;
    }
    inbox_.append(chunk_.data(), bytes);
    Continue();
  }

  // Queues what is framed, then reads on, or waits for room, or lingers after the end.
  void Continue() {
    if (!Drain()) return;
    if (!input_ended_) {
      DoRead();
      return;
    }
    if (!last_line_taken_) {
      last_line_taken_ = true;
      if (!inbox_.empty() && !skipping_) {
        inbox_ += '\n';
        if (!Drain()) return;
      }
    }
    ArmLinger();
  }

  // Frames and queues the lines in inbox_; false when the queue is full (or closed).
  bool Drain() {
    if (held_ && !PushHeld()) return false;
    const std::size_t max_line = core_->options.max_line_bytes;
    std::size_t start = 0;
    bool go_on = true;
    while (go_on) {
      std::size_t end = inbox_.find('\n', start);
      if (end == std::string::npos) {
        if (!skipping_ && inbox_.size() - start > max_line) RejectTooLong();
        if (skipping_) start = inbox_.size();
        break;
      }
      std::string_view line(inbox_.data() + start, end - start);
      start = end + 1;
      if (skipping_) {  // the rest of a line already rejected
        skipping_ = false;
        continue;
      }
      if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
      if (line.size() > max_line) {
        RejectTooLong();
        skipping_ = false;
        continue;
      }
      ++line_number_;
      if (IsBlank(line)) continue;
      held_ = QueuedLine{std::string(line), line_number_, id_, source_,
                         std::weak_ptr<ReplyChannel>(this->weak_from_this())};
      go_on = PushHeld();
    }
    inbox_.erase(0, start);
    return go_on;
  }

  void RejectTooLong() {
    ++line_number_;
    skipping_ = true;
    core_->lines_too_long.fetch_add(1);
    Send(Reply::Rejected(line_number_, RejectReasonName(RejectReason::kLineTooLong),
                         "line is longer than " + std::to_string(core_->options.max_line_bytes) +
                             " bytes; skipped up to the next line break"));
  }

  bool PushHeld() {
    auto resume = [self = this->shared_from_this()] {
      boost::asio::post(self->executor_, [self] {
        if (!self->closing_) self->Continue();
      });
    };
    switch (core_->queue.TryPush(*held_, resume)) {
      case RecordQueue::PushResult::kAccepted:
        held_.reset();
        core_->lines_queued.fetch_add(1);
        return true;
      case RecordQueue::PushResult::kFull:
        return false;
      case RecordQueue::PushResult::kClosed:
        Close();
        return false;
    }
    return false;
  }

  void ArmLinger() {
    if (closing_) return;
    timer_.expires_after(Seconds(core_->options.socket.reply_linger_seconds));
    timer_.async_wait([self = this->shared_from_this()](const boost::system::error_code& error) {
      if (!error) self->Close();
    });
  }

  void QueueReply(const std::string& text) {
    if (closing_) {
      pending_reply_bytes_.fetch_sub(text.size());
      return;
    }
    outbox_.push_back(text);
    if (input_ended_ && last_line_taken_) ArmLinger();
    if (!writing_) DoWrite();
  }

  void DoWrite() {
    writing_ = true;
    boost::asio::async_write(
        socket_, boost::asio::buffer(outbox_.front()),
        [self = this->shared_from_this()](const boost::system::error_code& error, std::size_t) {
          self->OnWrite(error);
        });
  }

  void OnWrite(const boost::system::error_code& error) {
    writing_ = false;
    if (outbox_.empty()) return;  // closed meanwhile
    pending_reply_bytes_.fetch_sub(outbox_.front().size());
    outbox_.pop_front();
    if (error) {
      Close();
      return;
    }
    if (!outbox_.empty()) {
      DoWrite();
    } else if (closing_) {
      Close();
    }
  }

  void CloseForSlowReader() {
    if (!socket_.is_open()) return;
    core_->slow_reader_closes.fetch_add(1);
    spdlog::warn("{}: closing the connection: more than {} bytes of replies unread", *source_,
                 core_->options.socket.max_pending_reply_bytes);
    Close();
  }

  void Close() {
    closing_ = true;
    held_.reset();
    boost::system::error_code ignored;
    timer_.cancel();
    if (socket_.is_open()) {
      socket_.shutdown(Protocol::socket::shutdown_both, ignored);
      socket_.close(ignored);
    }
    for (const std::string& text : outbox_) pending_reply_bytes_.fetch_sub(text.size());
    outbox_.clear();
    if (!unregistered_) {
      unregistered_ = true;
      core_->Unregister(id_);
    }
  }

  typename Protocol::socket socket_;
  boost::asio::any_io_executor executor_;
  std::shared_ptr<SocketServer::Core> core_;
  const std::uint64_t id_;
  const std::shared_ptr<const std::string> source_;
  boost::asio::steady_timer timer_;  // linger after input ends, or drain on Stop

  std::array<char, kReadChunkBytes> chunk_{};
  std::string inbox_;               // bytes read and not yet framed
  std::optional<QueuedLine> held_;  // framed, waiting for room in the queue
  std::uint64_t line_number_ = 0;
  bool skipping_ = false;  // inside a line already rejected as too long
  bool input_ended_ = false;
  bool last_line_taken_ = false;
  bool closing_ = false;
  bool writing_ = false;
  bool unregistered_ = false;
  std::deque<std::string> outbox_;
  std::atomic<std::size_t> pending_reply_bytes_{0};
};

std::string DescribePeer(const tcp::socket& socket) {
  boost::system::error_code error;
  tcp::endpoint peer = socket.remote_endpoint(error);
  if (error) return "tcp";
  return peer.address().to_string() + ":" + std::to_string(peer.port());
}

std::string DescribePeer(const UnixSocket::socket&) { return "unix"; }

}  // namespace

template <typename Acceptor>
void SocketServer::Core::Accept(Acceptor& acceptor) {
  using Protocol = typename Acceptor::protocol_type;
  auto socket = std::make_shared<typename Protocol::socket>(boost::asio::make_strand(io));
  acceptor.async_accept(*socket, [core = shared_from_this(), &acceptor,
                                  socket](const boost::system::error_code& error) {
    if (core->stopped || error == boost::asio::error::operation_aborted) return;
    if (error) {
      // Out of descriptors or a similar passing trouble: wait instead of spinning.
      spdlog::warn("socket accept failed, retrying: {}", error.message());
      core->retry_timer.expires_after(kAcceptRetryDelay);
      core->retry_timer.async_wait([core, &acceptor](const boost::system::error_code& e) {
        if (!e && !core->stopped) core->Accept(acceptor);
      });
      return;
    }
    if constexpr (std::is_same_v<Protocol, tcp>) {
      boost::system::error_code ignored;
      socket->set_option(tcp::no_delay(true), ignored);
    }
    std::string peer = DescribePeer(*socket);
    std::shared_ptr<Connection> connection;
    {
      std::lock_guard lock(core->mutex);
      if (core->connections.size() < core->options.socket.max_connections) {
        std::uint64_t id = core->next_id++;
        connection = std::make_shared<Session<Protocol>>(std::move(*socket), core, id, peer);
        core->connections.emplace(id, connection);
      }
    }
    if (connection) {
      core->accepted.fetch_add(1);
      connection->Begin();
    } else {
      core->refused.fetch_add(1);
      spdlog::warn("socket:{}: refused, already {} connections", peer,
                   core->options.socket.max_connections);
      auto text = std::make_shared<std::string>(
          Reply::Error("too many connections (limit " +
                       std::to_string(core->options.socket.max_connections) + ")")
              .text +
          "\n");
      boost::asio::async_write(*socket, boost::asio::buffer(*text),
                               [socket, text](const boost::system::error_code&, std::size_t) {
                                 boost::system::error_code ignored;
                                 socket->shutdown(Protocol::socket::shutdown_both, ignored);
                                 socket->close(ignored);
                               });
    }
    core->Accept(acceptor);
  });
}

void SocketServer::Core::StopOnStrand() {
  if (stopped) return;
  stopped = true;
  boost::system::error_code ignored;
  retry_timer.cancel();
  tcp_acceptor.close(ignored);
  if (unix_acceptor.is_open()) {
    unix_acceptor.close(ignored);
    ::unlink(options.socket.unix_path.c_str());
  }
  std::vector<std::shared_ptr<Connection>> open;
  {
    std::lock_guard lock(mutex);
    for (auto& [id, weak] : connections) {
      if (auto connection = weak.lock()) open.push_back(std::move(connection));
    }
  }
  for (auto& connection : open) connection->CloseGracefully();
}

void SocketServer::Core::Unregister(std::uint64_t id) {
  std::lock_guard lock(mutex);
  connections.erase(id);
}

void SocketServer::Core::NotePendingReplyBytes(std::size_t bytes) {
  std::uint64_t peak = peak_pending_reply_bytes.load();
  while (bytes > peak && !peak_pending_reply_bytes.compare_exchange_weak(peak, bytes)) {
  }
}

Result<std::unique_ptr<SocketServer>> SocketServer::Create(boost::asio::io_context& io,
                                                           const InputOptions& options,
                                                           RecordQueue& queue) {
  const SocketOptions& socket = options.socket;
  if (socket.listen.empty() && socket.unix_path.empty()) {
    return Status::InvalidArgument(
        "socket input needs a listen address (HOST:PORT) or a unix socket path");
  }
  if (socket.max_connections == 0 || options.max_line_bytes == 0) {
    return Status::InvalidArgument(
        "socket max_connections and the line limit must both be at least 1");
  }
  auto core = std::make_shared<Core>(io, options, queue);
  std::uint16_t port = 0;
  boost::system::error_code error;
  if (!socket.listen.empty()) {
    SESTON_ASSIGN_OR_RETURN(tcp::endpoint endpoint, ParseListenAddress(socket.listen));
    tcp::acceptor& acceptor = core->tcp_acceptor;
    acceptor.open(endpoint.protocol(), error);
    if (!error) acceptor.set_option(tcp::acceptor::reuse_address(true), error);
    if (!error) acceptor.bind(endpoint, error);
    if (!error) acceptor.listen(boost::asio::socket_base::max_listen_connections, error);
    if (error) {
      return Status::IoError("cannot listen on " + socket.listen + ": " + error.message());
    }
    port = acceptor.local_endpoint().port();
  }
  if (!socket.unix_path.empty()) {
    struct stat st {};
    if (::lstat(socket.unix_path.c_str(), &st) == 0) {
      if (!S_ISSOCK(st.st_mode)) {
        return Status::AlreadyExists("unix socket path " + socket.unix_path +
                                     " exists and is not a socket; give a free path");
      }
      ::unlink(socket.unix_path.c_str());  // left by an earlier run
    }
    UnixSocket::acceptor& acceptor = core->unix_acceptor;
    UnixSocket::endpoint endpoint(socket.unix_path);
    acceptor.open(endpoint.protocol(), error);
    if (!error) acceptor.bind(endpoint, error);
    if (!error) acceptor.listen(boost::asio::socket_base::max_listen_connections, error);
    if (error) {
      return Status::IoError("cannot listen on unix socket " + socket.unix_path + ": " +
                             error.message());
    }
  }
  return std::unique_ptr<SocketServer>(new SocketServer(std::move(core), port));
}

SocketServer::SocketServer(std::shared_ptr<Core> core, std::uint16_t port)
    : core_(std::move(core)), port_(port) {}

SocketServer::~SocketServer() { Stop(); }

void SocketServer::Start() {
  boost::asio::post(core_->strand, [core = core_] {
    if (core->stopped) return;
    if (core->tcp_acceptor.is_open()) core->Accept(core->tcp_acceptor);
    if (core->unix_acceptor.is_open()) core->Accept(core->unix_acceptor);
  });
}

void SocketServer::Stop() {
  boost::asio::post(core_->strand, [core = core_] { core->StopOnStrand(); });
}

SocketServer::Counters SocketServer::counters() const {
  Counters counters;
  counters.connections_accepted = core_->accepted.load();
  counters.connections_refused = core_->refused.load();
  {
    std::lock_guard lock(core_->mutex);
    counters.connections_open = core_->connections.size();
  }
  counters.lines_queued = core_->lines_queued.load();
  counters.lines_too_long = core_->lines_too_long.load();
  counters.slow_reader_closes = core_->slow_reader_closes.load();
  counters.peak_pending_reply_bytes = core_->peak_pending_reply_bytes.load();
  return counters;
}

}  // namespace seston
