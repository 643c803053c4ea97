#include "api/http_server.h"

#include <spdlog/spdlog.h>

#include <array>
#include <boost/asio/dispatch.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/post.hpp>
#include <boost/asio/steady_timer.hpp>
#include <boost/asio/strand.hpp>
#include <boost/beast/core.hpp>
#include <boost/beast/http.hpp>
#include <chrono>
#include <cmath>
#include <map>
#include <mutex>
#include <optional>

#include "api/host_port.h"
#include "api/router.h"

namespace seston {
namespace {

namespace beast = boost::beast;
namespace http = beast::http;
namespace net = boost::asio;
using tcp = net::ip::tcp;

class Session;

// What the listener and its sessions share; kept alive by every session, so a session
// finishing after the HttpServer is gone still finds it.
struct Shared {
  Shared(const ApiOptions& options, ApiBackend& backend, std::string token)
      : options(options), backend(backend), token(std::move(token)) {}

  std::chrono::steady_clock::duration Timeout() const {
    return std::chrono::duration_cast<std::chrono::steady_clock::duration>(
        std::chrono::duration<double>(options.request_timeout_seconds));
  }

  const ApiOptions options;
  ApiBackend& backend;
  const std::string token;

  std::mutex mutex;  // guards the members below; never held while doing I/O
  std::map<const Session*, std::weak_ptr<Session>> sessions;
  std::size_t served = 0;   // sessions answering requests
  std::size_t refused = 0;  // sessions over max_connections, answering 503
};

class Session : public std::enable_shared_from_this<Session> {
 public:
  Session(tcp::socket&& socket, std::shared_ptr<Shared> shared, bool over_limit)
      : stream_(std::move(socket)), shared_(std::move(shared)), over_limit_(over_limit) {
    beast::error_code ignored;
    tcp::endpoint remote = stream_.socket().remote_endpoint(ignored);
    peer_ = remote.address().to_string(ignored) + ":" + std::to_string(remote.port());
  }

  ~Session() {
    std::lock_guard lock(shared_->mutex);
    shared_->sessions.erase(this);
    --(over_limit_ ? shared_->refused : shared_->served);
  }

  // Called under shared->mutex by the listener, which has already counted the session.
  void Register() { shared_->sessions.emplace(this, weak_from_this()); }

  void Run() {
    net::dispatch(stream_.get_executor(),
                  beast::bind_front_handler(&Session::DoRead, shared_from_this()));
  }

  // From any thread: closes the connection on the session's strand.
  void Close() {
    net::post(stream_.get_executor(), [self = shared_from_this()] {
      beast::error_code ignored;
      self->stream_.socket().shutdown(tcp::socket::shutdown_both, ignored);
      self->stream_.close();
    });
  }

 private:
  void DoRead() {
    parser_.emplace();
    parser_->header_limit(static_cast<std::uint32_t>(shared_->options.max_header_bytes));
    parser_->body_limit(shared_->options.max_body_bytes);
    stream_.expires_after(shared_->Timeout());
    http::async_read(stream_, buffer_, *parser_,
                     beast::bind_front_handler(&Session::OnRead, shared_from_this()));
  }

  void OnRead(beast::error_code error, std::size_t) {
    if (error == http::error::end_of_stream) return HalfClose();
    if (error == beast::error::timeout) {
      spdlog::debug("api: {} closed: no whole request within {} s", peer_,
                    shared_->options.request_timeout_seconds);
      return;
    }
    if (error == http::error::body_limit) {
      return WriteAndClose(
          ErrorResponse(413, "the request body is larger than api.max_body_bytes = " +
                                 std::to_string(shared_->options.max_body_bytes) + " bytes"));
    }
    if (error == http::error::header_limit) {
      return WriteAndClose(
          ErrorResponse(431, "the request headers are larger than api.max_header_bytes = " +
                                 std::to_string(shared_->options.max_header_bytes) + " bytes"));
    }
    if (error.category() ==
        http::make_error_code(http::error::body_limit).category()) {  // any other parse error
      return WriteAndClose(ErrorResponse(400, "malformed HTTP request: " + error.message()));
    }
    if (error) return;  // reset, aborted by Stop: nothing to answer
    Handle();
  }

  void Handle() {
    const http::request<http::string_body>& request = parser_->get();
    HttpResponse response;
    if (over_limit_) {
      response = ErrorResponse(503, "sestond is serving api.max_connections = " +
                                        std::to_string(shared_->options.max_connections) +
                                        " connections; retry shortly");
      response.headers.emplace_back("Retry-After", "1");
    } else {
      HttpRequest routed{std::string(request.method_string()), std::string(request.target()),
                         std::string(request[http::field::authorization]), request.body()};
      response = Route(routed, shared_->backend, shared_->token);
    }
    spdlog::debug("api: {} {} {} -> {}", peer_, std::string(request.method_string()),
                  std::string(request.target()), response.status);
    DoWrite(std::move(response), request.keep_alive() && !over_limit_);
  }

  void WriteAndClose(HttpResponse response) {
    spdlog::debug("api: {} refused -> {}", peer_, response.status);
    DoWrite(std::move(response), false);
  }

  void DoWrite(HttpResponse answer, bool keep_alive) {
    response_ = {};
    response_.result(static_cast<unsigned>(answer.status));
    response_.version(parser_ && parser_->is_header_done() ? parser_->get().version() : 11);
    response_.set(http::field::server, "sestond");
    response_.set(http::field::content_type, answer.content_type);
    for (const auto& [name, value] : answer.headers) response_.set(name, value);
    response_.keep_alive(keep_alive);
    response_.body() = std::move(answer.body);
    response_.prepare_payload();
    stream_.expires_after(shared_->Timeout());
    http::async_write(stream_, response_,
                      beast::bind_front_handler(&Session::OnWrite, shared_from_this()));
  }

  void OnWrite(beast::error_code error, std::size_t) {
    if (error) return;
    if (!response_.keep_alive()) return HalfClose();
    DoRead();
  }

  // Sends FIN, then reads and discards until the client closes or the timeout passes,
  // so that unread request bytes do not make the kernel answer the client with a reset
  // that would discard our response before the client read it.
  void HalfClose() {
    beast::error_code ignored;
    stream_.socket().shutdown(tcp::socket::shutdown_send, ignored);
    stream_.expires_after(shared_->Timeout());
    DoDrain();
  }

  void DoDrain() {
    stream_.async_read_some(net::buffer(drain_),
                            [self = shared_from_this()](beast::error_code error, std::size_t) {
                              if (!error) self->DoDrain();
                            });
  }

  beast::tcp_stream stream_;
  std::shared_ptr<Shared> shared_;
  const bool over_limit_;
  std::string peer_;
  beast::flat_buffer buffer_;
  std::optional<http::request_parser<http::string_body>> parser_;
  http::response<http::string_body> response_;
  std::array<char, 4096> drain_;
};

Status CheckOptions(const ApiOptions& options) {
  if (options.max_body_bytes < 1) {
    return Status::InvalidArgument("api.max_body_bytes must be at least 1, got 0");
  }
  if (options.max_header_bytes < 256 || options.max_header_bytes > (1u << 20)) {
    return Status::InvalidArgument("api.max_header_bytes must be from 256 to 1048576, got " +
                                   std::to_string(options.max_header_bytes));
  }
  if (options.max_connections < 1) {
    return Status::InvalidArgument("api.max_connections must be at least 1, got 0");
  }
  if (!std::isfinite(options.request_timeout_seconds) || options.request_timeout_seconds <= 0 ||
      options.request_timeout_seconds > 3600) {
    return Status::InvalidArgument(
        "api.request_timeout_seconds must be above 0 and at most 3600, got " +
        std::to_string(options.request_timeout_seconds));
  }
  return Status::Ok();
}

}  // namespace

class HttpServer::Listener : public std::enable_shared_from_this<Listener> {
 public:
  Listener(net::io_context& io_context, std::shared_ptr<Shared> shared)
      : io_context_(io_context),
        acceptor_(net::make_strand(io_context)),
        retry_timer_(acceptor_.get_executor()),
        shared_(std::move(shared)) {}

  Status Bind(const tcp::endpoint& endpoint, const std::string& listen) {
    beast::error_code error;
    auto failed = [&](std::string_view step) {
      return Status::IoError("api.listen \"" + listen + "\": cannot " + std::string(step) + ": " +
                             error.message());
    };
    if (acceptor_.open(endpoint.protocol(), error)) return failed("open a socket");
    if (acceptor_.set_option(net::socket_base::reuse_address(true), error)) {
      return failed("set SO_REUSEADDR");
    }
    if (acceptor_.bind(endpoint, error)) return failed("bind");
    if (acceptor_.listen(net::socket_base::max_listen_connections, error)) {
      return failed("listen");
    }
    return Status::Ok();
  }

  std::uint16_t BoundPort() const {
    beast::error_code ignored;
    return acceptor_.local_endpoint(ignored).port();
  }

  void Start() {
    net::dispatch(acceptor_.get_executor(),
                  beast::bind_front_handler(&Listener::DoAccept, shared_from_this()));
  }

  void Stop() {
    net::dispatch(acceptor_.get_executor(), [self = shared_from_this()] {
      self->stopped_ = true;
      beast::error_code ignored;
      self->acceptor_.close(ignored);
      self->retry_timer_.cancel();
      std::vector<std::shared_ptr<Session>> open;
      {
        std::lock_guard lock(self->shared_->mutex);
        for (auto& [key, weak] : self->shared_->sessions) {
          if (auto session = weak.lock()) open.push_back(std::move(session));
        }
      }
      for (auto& session : open) session->Close();
    });
  }

 private:
  void DoAccept() {
    if (stopped_) return;
    acceptor_.async_accept(net::make_strand(io_context_),
                           beast::bind_front_handler(&Listener::OnAccept, shared_from_this()));
  }

  void OnAccept(beast::error_code error, tcp::socket socket) {
    if (stopped_) return;
    if (error) {
      // Out of file descriptors and the like: wait a little rather than spin.
      spdlog::warn("api: accept failed: {}; retrying in 100 ms", error.message());
      retry_timer_.expires_after(std::chrono::milliseconds(100));
      retry_timer_.async_wait([self = shared_from_this()](beast::error_code timer_error) {
        if (!timer_error) self->DoAccept();
      });
      return;
    }
    std::shared_ptr<Session> session;
    {
      std::lock_guard lock(shared_->mutex);
      const std::size_t limit = shared_->options.max_connections;
      if (shared_->served < limit) {
        ++shared_->served;
        session = std::make_shared<Session>(std::move(socket), shared_, false);
      } else if (shared_->refused < limit) {
        ++shared_->refused;
        session = std::make_shared<Session>(std::move(socket), shared_, true);
      }
      if (session) session->Register();
    }
    if (session) {
      session->Run();
    } else {
      spdlog::debug("api: connection closed at once: twice api.max_connections are open");
      beast::error_code ignored;
      socket.close(ignored);
    }
    DoAccept();
  }

  net::io_context& io_context_;
  tcp::acceptor acceptor_;
  net::steady_timer retry_timer_;
  std::shared_ptr<Shared> shared_;
  bool stopped_ = false;  // touched on the acceptor's strand only
};

Result<std::unique_ptr<HttpServer>> HttpServer::Create(net::io_context& io_context,
                                                       const ApiOptions& options,
                                                       ApiBackend& backend, std::string token) {
  SESTON_RETURN_IF_ERROR(CheckOptions(options));
  Result<HostPort> host_port = ParseHostPort(options.listen);
  if (!host_port.ok()) return host_port.status().WithContext("api.listen");
  beast::error_code error;
  net::ip::address address = net::ip::make_address(host_port->host, error);
  if (error) {
    return Status::InvalidArgument("api.listen \"" + options.listen + "\": host \"" +
                                   host_port->host +
                                   "\" must be an IP address such as 127.0.0.1 or [::1]");
  }
  const bool writes_enabled = !token.empty();
  auto shared = std::make_shared<Shared>(options, backend, std::move(token));
  auto listener = std::make_shared<Listener>(io_context, std::move(shared));
  SESTON_RETURN_IF_ERROR(listener->Bind(tcp::endpoint(address, host_port->port), options.listen));
  std::uint16_t port = listener->BoundPort();
  spdlog::info("api: listening on {}:{}{}", host_port->host, port,
               writes_enabled ? "" : " (writes disabled: no api.token_file)");
  return std::unique_ptr<HttpServer>(new HttpServer(std::move(listener), port));
}

HttpServer::~HttpServer() { Stop(); }

void HttpServer::Start() { listener_->Start(); }

void HttpServer::Stop() { listener_->Stop(); }

}  // namespace seston
