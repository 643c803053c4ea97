// The protocol checked here is the one systemd documents in sd_notify(3): one datagram
// of newline-separated VARIABLE=VALUE assignments to the AF_UNIX socket named by
// $NOTIFY_SOCKET, '@' meaning the abstract namespace; $WATCHDOG_USEC is the watchdog
// timeout, and the man page advises pinging at half of it.
#include "base/systemd_notify.h"

#include <gtest/gtest.h>
#include <poll.h>
#include <sys/socket.h>
#include <sys/un.h>
#include <unistd.h>

#include <cstdlib>
#include <cstring>
#include <string>

#include "support/test_paths.h"

namespace seston {
namespace {

// A bound datagram socket playing systemd's part.
class FakeServiceManager {
 public:
  explicit FakeServiceManager(const std::string& path) {
    fd_ = ::socket(AF_UNIX, SOCK_DGRAM | SOCK_CLOEXEC, 0);
    sockaddr_un address{};
    address.sun_family = AF_UNIX;
    std::memcpy(address.sun_path, path.data(), path.size());
    socklen_t length = offsetof(sockaddr_un, sun_path) + path.size();
    if (path.front() == '@') {
      address.sun_path[0] = '\0';
    } else {
      length += 1;
    }
    bound_ = ::bind(fd_, reinterpret_cast<sockaddr*>(&address), length) == 0;
  }
  ~FakeServiceManager() { ::close(fd_); }
  bool bound() const { return bound_; }

  // The next datagram, or "<none>" after two seconds.
  std::string Receive() {
    pollfd ready{fd_, POLLIN, 0};
    if (::poll(&ready, 1, 2000) != 1) return "<none>";
    char buffer[4096];
    ssize_t n = ::recv(fd_, buffer, sizeof buffer, 0);
    return n < 0 ? "<error>" : std::string(buffer, static_cast<std::size_t>(n));
  }
  bool Quiet() {
    pollfd ready{fd_, POLLIN, 0};
    return ::poll(&ready, 1, 50) == 0;
  }

 private:
  int fd_ = -1;
  bool bound_ = false;
};

TEST(SystemdNotifier, SendsEachMessageAsOneDatagramToAPathSocket) {
  testing::ScratchDirectory scratch;
  std::string path = (scratch.path() / "notify").string();
  FakeServiceManager manager(path);
  ASSERT_TRUE(manager.bound());
  Result<std::unique_ptr<SystemdNotifier>> notifier = SystemdNotifier::Create(path, 0);
  ASSERT_TRUE(notifier.ok()) << notifier.status().ToString();
  ASSERT_TRUE((*notifier)->enabled());

  ASSERT_TRUE((*notifier)->Ready("running, k=6").ok());
  EXPECT_EQ(manager.Receive(), "READY=1\nSTATUS=running, k=6");
  ASSERT_TRUE((*notifier)->Watchdog().ok());
  EXPECT_EQ(manager.Receive(), "WATCHDOG=1");
  ASSERT_TRUE((*notifier)->Stopping("checkpointing").ok());
  EXPECT_EQ(manager.Receive(), "STOPPING=1\nSTATUS=checkpointing");
  EXPECT_TRUE(manager.Quiet());
}

TEST(SystemdNotifier, ReachesAnAbstractSocketNamedWithAnAt) {
  std::string name = "@seston-notify-test-" + std::to_string(::getpid());
  FakeServiceManager manager(name);
  ASSERT_TRUE(manager.bound());
  Result<std::unique_ptr<SystemdNotifier>> notifier = SystemdNotifier::Create(name, 0);
  ASSERT_TRUE(notifier.ok());
  ASSERT_TRUE((*notifier)->SetStatus("warming up: 120 of 5000 particles").ok());
  EXPECT_EQ(manager.Receive(), "STATUS=warming up: 120 of 5000 particles");
}

TEST(SystemdNotifier, KeepsAStatusToOneAssignment) {
  testing::ScratchDirectory scratch;
  std::string path = (scratch.path() / "notify").string();
  FakeServiceManager manager(path);
  auto notifier = SystemdNotifier::Create(path, 0);
  ASSERT_TRUE(notifier.ok());
  ASSERT_TRUE((*notifier)->SetStatus("degraded:\ncheckpoint failed\r\nREADY=1").ok());
  EXPECT_EQ(manager.Receive(), "STATUS=degraded: checkpoint failed  READY=1");
}

TEST(SystemdNotifier, IsANoOpWithoutASocket) {
  auto notifier = SystemdNotifier::Create("", 30000000);
  ASSERT_TRUE(notifier.ok());
  EXPECT_FALSE((*notifier)->enabled());
  EXPECT_TRUE((*notifier)->Ready("x").ok());
  EXPECT_FALSE((*notifier)->watchdog_interval_seconds().has_value());
}

TEST(SystemdNotifier, ReportsASocketThatIsGone) {
  testing::ScratchDirectory scratch;
  auto notifier = SystemdNotifier::Create((scratch.path() / "nobody").string(), 0);
  ASSERT_TRUE(notifier.ok());
  Status status = (*notifier)->Ready("x");
  EXPECT_EQ(status.code(), StatusCode::kIoError);
  EXPECT_NE(status.message().find("nobody"), std::string::npos);
}

TEST(SystemdNotifier, RefusesAPathLongerThanASocketAddress) {
  auto notifier = SystemdNotifier::Create("/" + std::string(200, 'x'), 0);
  EXPECT_EQ(notifier.status().code(), StatusCode::kInvalidArgument);
}

TEST(SystemdNotifier, PingsAtHalfTheWatchdogTimeoutFromTheEnvironment) {
  testing::ScratchDirectory scratch;
  std::string path = (scratch.path() / "notify").string();
  FakeServiceManager manager(path);
  ::setenv("NOTIFY_SOCKET", path.c_str(), 1);
  ::setenv("WATCHDOG_USEC", "30000000", 1);
  ::setenv("WATCHDOG_PID", std::to_string(::getpid()).c_str(), 1);
  auto notifier = SystemdNotifier::FromEnvironment();
  ASSERT_TRUE(notifier.ok());
  ASSERT_TRUE((*notifier)->watchdog_interval_seconds().has_value());
  EXPECT_DOUBLE_EQ(*(*notifier)->watchdog_interval_seconds(), 15.0);
  ASSERT_TRUE((*notifier)->Watchdog().ok());
  EXPECT_EQ(manager.Receive(), "WATCHDOG=1");

  // A watchdog meant for another process (WATCHDOG_PID) is not ours to feed.
  ::setenv("WATCHDOG_PID", std::to_string(::getpid() + 1).c_str(), 1);
  auto other = SystemdNotifier::FromEnvironment();
  ASSERT_TRUE(other.ok());
  EXPECT_TRUE((*other)->enabled());
  EXPECT_FALSE((*other)->watchdog_interval_seconds().has_value());
  ::unsetenv("NOTIFY_SOCKET");
  ::unsetenv("WATCHDOG_USEC");
  ::unsetenv("WATCHDOG_PID");
}

}  // namespace
}  // namespace seston
