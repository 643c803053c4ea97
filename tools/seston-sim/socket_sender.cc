#include "seston-sim/socket_sender.h"

#include <boost/asio/connect.hpp>
#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/write.hpp>
#include <chrono>
#include <thread>
#include <utility>

namespace seston::sim {

namespace asio = boost::asio;
using asio::ip::tcp;

struct SocketSender::Connection {
  asio::io_context context;
  tcp::socket socket{context};
};

Result<std::pair<std::string, std::string>> SplitHostPort(std::string_view address) {
  std::string_view host;
  std::string_view port;
  if (!address.empty() && address.front() == '[') {
    std::size_t close = address.find("]:");
    if (close != std::string_view::npos) {
      host = address.substr(1, close - 1);
      port = address.substr(close + 2);
    }
  } else if (std::size_t colon = address.rfind(':'); colon != std::string_view::npos) {
    host = address.substr(0, colon);
    port = address.substr(colon + 1);
  }
  bool digits = !port.empty() && port.size() <= 5 &&
                port.find_first_not_of("0123456789") == std::string_view::npos;
  if (host.empty() || !digits || std::stoi(std::string(port)) > 65535) {
    return Status::InvalidArgument(
        "socket address must be HOST:PORT with PORT 0..65535 (e.g. "
        "127.0.0.1:7400 or [::1]:7400), got \"" +
        std::string(address) + "\"");
  }
  return std::pair<std::string, std::string>(host, port);
}

SocketSender::SocketSender(std::unique_ptr<Connection> connection, AnswerCallback on_answer,
                           std::string address)
    : connection_(std::move(connection)),
      on_answer_(std::move(on_answer)),
      address_(std::move(address)) {}

SocketSender::~SocketSender() = default;

Result<std::unique_ptr<SocketSender>> SocketSender::Connect(std::string_view address,
                                                            AnswerCallback on_answer) {
  SESTON_ASSIGN_OR_RETURN(auto host_port, SplitHostPort(address));
  auto connection = std::make_unique<Connection>();
  boost::system::error_code error;
  tcp::resolver resolver(connection->context);
  auto endpoints = resolver.resolve(host_port.first, host_port.second, error);
  if (!error) asio::connect(connection->socket, endpoints, error);
  if (error) {
    return Status::Unavailable("cannot connect to " + std::string(address) + ": " +
                               error.message());
  }
  return std::unique_ptr<SocketSender>(
      new SocketSender(std::move(connection), std::move(on_answer), std::string(address)));
}

Status SocketSender::Send(std::string_view ndjson) {
  boost::system::error_code error;
  asio::write(connection_->socket, asio::buffer(ndjson.data(), ndjson.size()), error);
  if (error) return Status::IoError("cannot send to " + address_ + ": " + error.message());
  return ReadWaitingAnswers();
}

Status SocketSender::ReadWaitingAnswers() {
  boost::system::error_code error;
  std::size_t waiting = connection_->socket.available(error);
  while (!error && waiting > 0) {
    std::string chunk(waiting, '\0');
    std::size_t got = connection_->socket.read_some(asio::buffer(chunk), error);
    pending_.append(chunk, 0, got);
    DeliverLines();
    if (!error) waiting = connection_->socket.available(error);
  }
  if (error && error != asio::error::eof) {
    return Status::IoError("cannot read answers from " + address_ + ": " + error.message());
  }
  return Status::Ok();
}

void SocketSender::DeliverLines() {
  std::size_t start = 0;
  for (std::size_t end = pending_.find('\n'); end != std::string::npos;
       end = pending_.find('\n', start)) {
    if (end > start) on_answer_(std::string_view(pending_).substr(start, end - start));
    start = end + 1;
  }
  pending_.erase(0, start);
}

Status SocketSender::Finish(double linger_seconds) {
  boost::system::error_code error;
  connection_->socket.shutdown(tcp::socket::shutdown_send, error);
  if (error) return Status::IoError("cannot close the sending side to " + address_);
  // Non-blocking reads polled until the deadline keep the wait bounded without an async
  // timer; a blocking read could wait forever on a peer that never closes.
  connection_->socket.non_blocking(true, error);
  auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(linger_seconds);
  boost::system::error_code read_error;
  char buffer[4096];
  while (std::chrono::steady_clock::now() < deadline) {
    std::size_t got = connection_->socket.read_some(asio::buffer(buffer), read_error);
    if (read_error == asio::error::would_block) {
      std::this_thread::sleep_for(std::chrono::milliseconds(20));
      continue;
    }
    if (read_error) break;
    pending_.append(buffer, got);
    DeliverLines();
  }
  if (!pending_.empty()) on_answer_(pending_);
  pending_.clear();
  connection_->socket.close(error);
  if (!read_error || read_error == asio::error::eof || read_error == asio::error::would_block) {
    return Status::Ok();
  }
  return Status::IoError("cannot read answers from " + address_ + ": " + read_error.message());
}

}  // namespace seston::sim
