#include "api/http_client.h"

#include <boost/asio/connect.hpp>
#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/beast/core.hpp>
#include <boost/beast/http.hpp>
#include <chrono>
#include <cmath>

#include "api/host_port.h"

namespace seston {
namespace {

namespace beast = boost::beast;
namespace http = beast::http;
namespace net = boost::asio;
using tcp = net::ip::tcp;

constexpr std::uint64_t kMaxReplyBytes = 64u << 20;

bool EqualsIgnoringCase(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    auto lower = [](char c) { return c >= 'A' && c <= 'Z' ? static_cast<char>(c + 32) : c; };
    if (lower(a[i]) != lower(b[i])) return false;
  }
  return true;
}

// "Connection refused" -> "connection refused", to read well after a colon.
std::string Describe(const beast::error_code& error) {
  if (error == beast::error::timeout) return "no answer within the timeout";
  std::string text = error.message();
  if (!text.empty() && text[0] >= 'A' && text[0] <= 'Z') text[0] = static_cast<char>(text[0] + 32);
  return text;
}

}  // namespace

std::optional<std::string> HttpReply::Header(std::string_view name) const {
  for (const auto& [key, value] : headers) {
    if (EqualsIgnoringCase(key, name)) return value;
  }
  return std::nullopt;
}

struct HttpClient::Connection {
  Connection(std::string address, std::chrono::steady_clock::duration timeout)
      : address(std::move(address)), timeout(timeout), stream(io_context) {}

  // Runs the operations started on io_context to completion.
  void RunAll() {
    io_context.restart();
    io_context.run();
  }

  Status Unreachable(const beast::error_code& error) const {
    return Status::Unavailable("cannot reach sestond at " + address + ": " + Describe(error));
  }

  std::string address;
  std::chrono::steady_clock::duration timeout;
  std::string host;  // for the Host header
  net::io_context io_context;
  beast::tcp_stream stream;
  beast::flat_buffer buffer;
};

HttpClient::HttpClient(std::unique_ptr<Connection> connection)
    : connection_(std::move(connection)) {}

HttpClient::~HttpClient() {
  beast::error_code ignored;
  connection_->stream.socket().shutdown(tcp::socket::shutdown_both, ignored);
}

Result<std::unique_ptr<HttpClient>> HttpClient::Connect(std::string_view address,
                                                        double timeout_seconds) {
  SESTON_ASSIGN_OR_RETURN(HostPort host_port, ParseHostPort(address));
  if (!std::isfinite(timeout_seconds) || timeout_seconds <= 0) {
    return Status::InvalidArgument("HTTP client timeout must be above 0 s");
  }
  auto connection = std::make_unique<Connection>(
      std::string(address), std::chrono::duration_cast<std::chrono::steady_clock::duration>(
                                std::chrono::duration<double>(timeout_seconds)));
  connection->host = host_port.host;
  tcp::resolver resolver(connection->io_context);
  beast::error_code error;
  tcp::resolver::results_type endpoints;
  resolver.async_resolve(host_port.host, std::to_string(host_port.port),
                         [&](beast::error_code e, tcp::resolver::results_type results) {
                           error = e;
                           endpoints = std::move(results);
                         });
  connection->RunAll();
  if (error) return connection->Unreachable(error);
  connection->stream.expires_after(connection->timeout);
  connection->stream.async_connect(endpoints,
                                   [&](beast::error_code e, const tcp::endpoint&) { error = e; });
  connection->RunAll();
  if (error) return connection->Unreachable(error);
  return std::unique_ptr<HttpClient>(new HttpClient(std::move(connection)));
}

Result<HttpReply> HttpClient::Send(std::string_view method, std::string_view target,
                                   std::string_view body, std::string_view token) {
  Connection& c = *connection_;
  http::request<http::string_body> request;
  request.method_string(beast::string_view(method.data(), method.size()));
  request.target(beast::string_view(target.data(), target.size()));
  request.version(11);
  request.set(http::field::host, c.host);
  request.set(http::field::user_agent, "sestonctl");
  if (!token.empty()) request.set(http::field::authorization, "Bearer " + std::string(token));
  if (!body.empty()) {
    request.set(http::field::content_type, "application/json");
    request.body() = std::string(body);
  }
  request.keep_alive(true);
  request.prepare_payload();

  beast::error_code error;
  c.stream.expires_after(c.timeout);
  http::async_write(c.stream, request, [&](beast::error_code e, std::size_t) { error = e; });
  c.RunAll();
  if (error) return c.Unreachable(error);

  http::response_parser<http::string_body> parser;
  parser.body_limit(kMaxReplyBytes);
  c.stream.expires_after(c.timeout);
  http::async_read(c.stream, c.buffer, parser,
                   [&](beast::error_code e, std::size_t) { error = e; });
  c.RunAll();
  if (error) return c.Unreachable(error);

  const http::response<http::string_body>& response = parser.get();
  HttpReply reply;
  reply.status = static_cast<int>(response.result_int());
  reply.body = response.body();
  reply.keep_alive = response.keep_alive();
  for (const auto& field : response) {
    reply.headers.emplace_back(std::string(field.name_string()), std::string(field.value()));
  }
  return reply;
}

}  // namespace seston
