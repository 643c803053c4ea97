// A real HttpServer on 127.0.0.1 (a free port) over a FakeBackend, for tests that talk
// to it through sockets.
#pragma once

#include <gtest/gtest.h>

#include <boost/asio/io_context.hpp>
#include <chrono>
#include <future>
#include <memory>
#include <string>
#include <thread>

#include "api/http_client.h"
#include "api/http_server.h"
#include "fake_backend.h"

namespace seston::testing {

inline constexpr char kHarnessToken[] = "token-for-server-tests";

// A server on 127.0.0.1 with a free port, its io_context run by two threads.
class Harness {
 public:
  explicit Harness(ApiOptions options) {
    options.listen = "127.0.0.1:0";
    auto server = HttpServer::Create(io_context_, options, backend, kHarnessToken);
    EXPECT_TRUE(server.ok()) << server.status().ToString();
    server_ = std::move(*server);
    server_->Start();
    for (auto& thread : threads_) thread = std::thread([this] { io_context_.run(); });
  }

  ~Harness() {
    if (!stopped_) {
      EXPECT_TRUE(StopAndWait());
    }
  }

  // Stops the server; true when every handler finished within 5 s (no session left).
  bool StopAndWait() {
    stopped_ = true;
    server_->Stop();
    auto done = std::async(std::launch::async, [this] {
      for (auto& thread : threads_) thread.join();
    });
    if (done.wait_for(std::chrono::seconds(5)) == std::future_status::ready) return true;
    io_context_.stop();
    done.wait();
    return false;
  }

  std::uint16_t port() const { return server_->port(); }
  std::string address() const { return "127.0.0.1:" + std::to_string(port()); }

  std::unique_ptr<HttpClient> Client() {
    auto client = HttpClient::Connect(address(), 5);
    EXPECT_TRUE(client.ok()) << client.status().ToString();
    return client.ok() ? std::move(*client) : nullptr;
  }

  testing::FakeBackend backend;

 private:
  boost::asio::io_context io_context_;
  std::unique_ptr<HttpServer> server_;
  std::thread threads_[2];
  bool stopped_ = false;
};

}  // namespace seston::testing
