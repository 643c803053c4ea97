#include "api/http_server.h"

#include <gtest/gtest.h>

#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/write.hpp>
#include <boost/beast/core.hpp>
#include <chrono>
#include <future>
#include <thread>

#include "api/http_client.h"
#include "server_harness.h"

namespace seston {
namespace {

using testing::Harness;
using testing::kHarnessToken;

namespace beast = boost::beast;
namespace net = boost::asio;
using tcp = net::ip::tcp;
using Seconds = std::chrono::duration<double>;

ApiOptions ShortTimeouts() {
  ApiOptions options;
  options.request_timeout_seconds = 0.5;
  return options;
}

// Connects a raw socket; reads until the server closes it, at most `limit` seconds.
// Returns the bytes received and the seconds it took.
struct RawResult {
  std::string received;
  double seconds = 0;
  bool closed_by_server = false;
};

RawResult SendRawAndWaitForClose(std::uint16_t port, const std::string& bytes, double limit) {
  net::io_context io_context;
  beast::tcp_stream stream(io_context);
  stream.connect(tcp::endpoint(net::ip::make_address("127.0.0.1"), port));
  auto start = std::chrono::steady_clock::now();
  if (!bytes.empty()) net::write(stream.socket(), net::buffer(bytes));
  RawResult result;
  std::array<char, 4096> chunk;
  std::function<void()> read_more = [&] {
    stream.async_read_some(net::buffer(chunk), [&](beast::error_code error, std::size_t n) {
      result.received.append(chunk.data(), n);
      if (!error) return read_more();
      result.closed_by_server = error != beast::error::timeout;
    });
  };
  stream.expires_after(
      std::chrono::duration_cast<std::chrono::steady_clock::duration>(Seconds(limit)));
  read_more();
  io_context.run();
  result.seconds = Seconds(std::chrono::steady_clock::now() - start).count();
  return result;
}

TEST(HttpServer, KeepAliveServesSeveralRequestsOnOneConnection) {
  Harness harness(ShortTimeouts());
  harness.backend.health.state = "running";
  auto client = harness.Client();
  ASSERT_NE(client, nullptr);
  for (const char* target : {"/v1/health", "/v1/clusters", "/v1/alerts", "/v1/health"}) {
    Result<HttpReply> reply = client->Send("GET", target);
    ASSERT_TRUE(reply.ok()) << target << ": " << reply.status().ToString();
    EXPECT_EQ(reply->status, 200) << target;
    EXPECT_TRUE(reply->keep_alive) << target;
    EXPECT_EQ(reply->Header("content-type"), "application/json");
  }
  Result<HttpReply> health = client->Send("GET", "/v1/health");
  ASSERT_TRUE(health.ok());
  EXPECT_EQ(nlohmann::json::parse(health->body)["state"], "running");
}

TEST(HttpServer, WritesCarryTheBearerTokenThroughTheSocket) {
  Harness harness(ShortTimeouts());
  harness.backend.clusters = {{7, "", 1, {}, 0, 0, false}};
  auto client = harness.Client();
  ASSERT_NE(client, nullptr);
  Result<HttpReply> refused = client->Send("PUT", "/v1/clusters/7/label", R"({"label":"a"})");
  ASSERT_TRUE(refused.ok());
  EXPECT_EQ(refused->status, 401);
  EXPECT_EQ(refused->Header("WWW-Authenticate"), "Bearer realm=\"sestond\"");
  Result<HttpReply> accepted =
      client->Send("PUT", "/v1/clusters/7/label", R"({"label":"ciliates"})", kHarnessToken);
  ASSERT_TRUE(accepted.ok());
  EXPECT_EQ(accepted->status, 200) << accepted->body;
  std::lock_guard lock(harness.backend.mutex);
  EXPECT_EQ(harness.backend.clusters[0].label, "ciliates");
}

TEST(HttpServer, WrongMethodGetsAllowHeaderOverTheWire) {
  Harness harness(ShortTimeouts());
  auto client = harness.Client();
  ASSERT_NE(client, nullptr);
  Result<HttpReply> reply = client->Send("DELETE", "/v1/health");
  ASSERT_TRUE(reply.ok());
  EXPECT_EQ(reply->status, 405);
  EXPECT_EQ(reply->Header("Allow"), "GET");
}

TEST(HttpServer, OneMegabyteBodyIsRefusedWith413AndClosed) {
  Harness harness(ShortTimeouts());  // max_body_bytes defaults to 65536
  auto client = harness.Client();
  ASSERT_NE(client, nullptr);
  std::string body = R"({"label":")" + std::string(1 << 20, 'a') + R"("})";
  Result<HttpReply> reply = client->Send("PUT", "/v1/clusters/1/label", body, kHarnessToken);
  ASSERT_TRUE(reply.ok()) << reply.status().ToString();
  EXPECT_EQ(reply->status, 413);
  EXPECT_FALSE(reply->keep_alive);
  EXPECT_NE(nlohmann::json::parse(reply->body)["error"]["message"].get<std::string>().find(
                "api.max_body_bytes = 65536"),
            std::string::npos);
}

TEST(HttpServer, OversizedHeadersAreRefusedWith431) {
  ApiOptions options = ShortTimeouts();
  options.max_header_bytes = 1024;
  Harness harness(options);
  RawResult result = SendRawAndWaitForClose(
      harness.port(),
      "GET /v1/health HTTP/1.1\r\nHost: x\r\nX-Filler: " + std::string(4096, 'f') + "\r\n\r\n", 5);
  EXPECT_TRUE(result.received.starts_with("HTTP/1.1 431")) << result.received;
  EXPECT_TRUE(result.closed_by_server);
}

TEST(HttpServer, MalformedRequestGets400AndClose) {
  Harness harness(ShortTimeouts());
  RawResult result = SendRawAndWaitForClose(harness.port(), "NOT A REQUEST AT ALL\r\n\r\n", 5);
  EXPECT_TRUE(result.received.starts_with("HTTP/1.1 400")) << result.received;
  EXPECT_TRUE(result.closed_by_server);
}

TEST(HttpServer, SlowClientIsDisconnectedAfterTheRequestTimeout) {
  Harness harness(ShortTimeouts());
  // Half a request: the request line and one header, never the blank line.
  RawResult result =
      SendRawAndWaitForClose(harness.port(), "GET /v1/health HTTP/1.1\r\nHost: x\r\n", 5);
  EXPECT_TRUE(result.closed_by_server);
  EXPECT_TRUE(result.received.empty()) << result.received;
  EXPECT_GE(result.seconds, 0.4);
  EXPECT_LT(result.seconds, 2.5);
}

TEST(HttpServer, ConnectionsOverTheLimitGet503ThenServiceResumes) {
  ApiOptions options = ShortTimeouts();
  options.request_timeout_seconds = 3;
  options.max_connections = 2;
  Harness harness(options);
  auto first = harness.Client();
  auto second = harness.Client();
  ASSERT_NE(first, nullptr);
  ASSERT_NE(second, nullptr);
  ASSERT_EQ(first->Send("GET", "/v1/health")->status, 200);
  ASSERT_EQ(second->Send("GET", "/v1/health")->status, 200);

  auto third = harness.Client();
  ASSERT_NE(third, nullptr);
  Result<HttpReply> busy = third->Send("GET", "/v1/health");
  ASSERT_TRUE(busy.ok()) << busy.status().ToString();
  EXPECT_EQ(busy->status, 503);
  EXPECT_FALSE(busy->keep_alive);
  EXPECT_EQ(busy->Header("Retry-After"), "1");
  EXPECT_NE(busy->body.find("api.max_connections = 2"), std::string::npos);

  first.reset();  // frees a slot once the server sees the close
  int status = 0;
  for (int attempt = 0; attempt < 50 && status != 200; ++attempt) {
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
    auto again = harness.Client();
    ASSERT_NE(again, nullptr);
    Result<HttpReply> reply = again->Send("GET", "/v1/health");
    status = reply.ok() ? reply->status : 0;
  }
  EXPECT_EQ(status, 200);
}

TEST(HttpServer, BeyondTwiceTheLimitConnectionsAreClosedAtOnce) {
  ApiOptions options = ShortTimeouts();
  options.request_timeout_seconds = 3;
  options.max_connections = 1;
  Harness harness(options);
  auto served = harness.Client();
  ASSERT_NE(served, nullptr);
  ASSERT_EQ(served->Send("GET", "/v1/health")->status, 200);
  // The refused slot is held by a connection that sends nothing.
  net::io_context io_context;
  tcp::socket idle(io_context);
  std::uint16_t port = harness.port();
  idle.connect(tcp::endpoint(net::ip::make_address("127.0.0.1"), port));
  std::this_thread::sleep_for(std::chrono::milliseconds(100));  // let the server accept it
  RawResult result = SendRawAndWaitForClose(port, "", 2.5);
  EXPECT_TRUE(result.closed_by_server);
  EXPECT_TRUE(result.received.empty()) << result.received;
  EXPECT_LT(result.seconds, 1.0);  // far below the 3 s request timeout
}

TEST(HttpServer, ConcurrentClientsAllGetAnswers) {
  ApiOptions options = ShortTimeouts();
  options.request_timeout_seconds = 5;
  Harness harness(options);
  harness.backend.health.station = "Skerry Sound mooring B";
  constexpr int kClients = 8;
  constexpr int kRequestsEach = 25;
  std::vector<std::future<int>> answered;
  for (int c = 0; c < kClients; ++c) {
    answered.push_back(std::async(std::launch::async, [&] {
      auto client = HttpClient::Connect(harness.address(), 5);
      if (!client.ok()) return 0;
      int good = 0;
      for (int r = 0; r < kRequestsEach; ++r) {
        Result<HttpReply> reply = (*client)->Send("GET", r % 2 ? "/v1/health" : "/v1/counts");
        if (!reply.ok() || reply->status != 200) continue;
        if (r % 2 && nlohmann::json::parse(reply->body)["station"] != "Skerry Sound mooring B") {
          continue;
        }
        ++good;
      }
      return good;
    }));
  }
  for (auto& future : answered) EXPECT_EQ(future.get(), kRequestsEach);
  std::lock_guard lock(harness.backend.mutex);
  EXPECT_EQ(harness.backend.counts_calls.size(), std::size_t{kClients * (kRequestsEach + 1) / 2});
}

TEST(HttpServer, StopClosesIdleKeepAliveConnections) {
  ApiOptions options = ShortTimeouts();
  options.request_timeout_seconds = 30;  // so only Stop can end the session in time
  Harness harness(options);
  auto client = harness.Client();
  ASSERT_NE(client, nullptr);
  ASSERT_EQ(client->Send("GET", "/v1/health")->status, 200);
  EXPECT_TRUE(harness.StopAndWait());
  Result<HttpReply> after = client->Send("GET", "/v1/health");
  EXPECT_FALSE(after.ok());
}

TEST(HttpServer, CreateRejectsBadListenAndOptions) {
  net::io_context io_context;
  testing::FakeBackend backend;
  ApiOptions options;
  options.listen = "localhost:0";
  auto named = HttpServer::Create(io_context, options, backend, "");
  ASSERT_FALSE(named.ok());
  EXPECT_NE(named.status().message().find("must be an IP address"), std::string::npos);
  options.listen = "7460";
  EXPECT_EQ(HttpServer::Create(io_context, options, backend, "").status().code(),
            StatusCode::kInvalidArgument);
  options.listen = "127.0.0.1:0";
  options.max_connections = 0;
  auto no_connections = HttpServer::Create(io_context, options, backend, "");
  ASSERT_FALSE(no_connections.ok());
  EXPECT_NE(no_connections.status().message().find("api.max_connections"), std::string::npos);
  options.max_connections = 4;
  options.request_timeout_seconds = 0;
  EXPECT_FALSE(HttpServer::Create(io_context, options, backend, "").ok());
}

TEST(HttpServer, CreateReportsAPortInUse) {
  Harness harness(ShortTimeouts());
  net::io_context io_context;
  testing::FakeBackend backend;
  ApiOptions options;
  options.listen = harness.address();
  auto second = HttpServer::Create(io_context, options, backend, "");
  ASSERT_FALSE(second.ok());
  EXPECT_EQ(second.status().code(), StatusCode::kIoError);
  EXPECT_NE(second.status().message().find("cannot bind"), std::string::npos);
}

TEST(HttpClient, UnreachableDaemonIsUnavailableWithClearMessage) {
  std::uint16_t port = 0;
  {
    net::io_context io_context;
    tcp::acceptor probe(io_context, tcp::endpoint(net::ip::make_address("127.0.0.1"), 0));
    port = probe.local_endpoint().port();
  }  // closed again: nothing listens there now
  auto client = HttpClient::Connect("127.0.0.1:" + std::to_string(port), 2);
  ASSERT_FALSE(client.ok());
  EXPECT_EQ(client.status().code(), StatusCode::kUnavailable);
  EXPECT_EQ(client.status().message(),
            "cannot reach sestond at 127.0.0.1:" + std::to_string(port) + ": connection refused");
}

}  // namespace
}  // namespace seston
