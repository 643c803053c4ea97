#include "base/systemd_notify.h"

#include <sys/socket.h>
#include <sys/un.h>
#include <unistd.h>

#include <cerrno>
#include <charconv>
#include <cstdlib>
#include <cstring>

namespace seston {
namespace {

// Fills `address` for `path`; the length to pass to sendto, or 0 when it does not fit.
socklen_t FillAddress(const std::string& path, sockaddr_un& address) {
  std::memset(&address, 0, sizeof address);
  address.sun_family = AF_UNIX;
  if (path.empty() || path.size() >= sizeof address.sun_path) return 0;
  std::memcpy(address.sun_path, path.data(), path.size());
  // Abstract namespace: the name starts with a NUL byte and is not NUL-terminated, so
  // the address length counts exactly the name's bytes.
  if (path.front() == '@') address.sun_path[0] = '\0';
  std::size_t used = path.size() + (path.front() == '@' ? 0 : 1);
  return static_cast<socklen_t>(offsetof(sockaddr_un, sun_path) + used);
}

std::optional<std::uint64_t> ParseUnsigned(const char* text) {
  if (text == nullptr || *text == '\0') return std::nullopt;
  std::uint64_t value = 0;
  const char* end = text + std::strlen(text);
  auto [parsed_to, error] = std::from_chars(text, end, value);
  if (error != std::errc() || parsed_to != end) return std::nullopt;
  return value;
}

}  // namespace

Result<std::unique_ptr<SystemdNotifier>> SystemdNotifier::Create(std::string socket_path,
                                                                 std::uint64_t watchdog_usec) {
  if (socket_path.empty()) {
    return std::unique_ptr<SystemdNotifier>(new SystemdNotifier(-1, "", 0));
  }
  sockaddr_un address;
  if (FillAddress(socket_path, address) == 0) {
    return Status::InvalidArgument("NOTIFY_SOCKET \"" + socket_path +
                                   "\" is not a Unix socket path of at most " +
                                   std::to_string(sizeof address.sun_path - 1) + " bytes");
  }
  int fd = ::socket(AF_UNIX, SOCK_DGRAM | SOCK_CLOEXEC, 0);
  if (fd < 0) {
    return Status::IoError(std::string("cannot open a datagram socket to notify systemd: ") +
                           std::strerror(errno));
  }
  return std::unique_ptr<SystemdNotifier>(
      new SystemdNotifier(fd, std::move(socket_path), watchdog_usec));
}

Result<std::unique_ptr<SystemdNotifier>> SystemdNotifier::FromEnvironment() {
  const char* socket_path = std::getenv("NOTIFY_SOCKET");
  std::uint64_t watchdog_usec = ParseUnsigned(std::getenv("WATCHDOG_USEC")).value_or(0);
  std::optional<std::uint64_t> watchdog_pid = ParseUnsigned(std::getenv("WATCHDOG_PID"));
  if (watchdog_pid && *watchdog_pid != static_cast<std::uint64_t>(::getpid())) watchdog_usec = 0;
  return Create(socket_path == nullptr ? "" : socket_path, watchdog_usec);
}

SystemdNotifier::~SystemdNotifier() {
  if (fd_ >= 0) ::close(fd_);
}

std::optional<double> SystemdNotifier::watchdog_interval_seconds() const {
  if (!enabled() || watchdog_usec_ == 0) return std::nullopt;
  return static_cast<double>(watchdog_usec_) / 1e6 / 2.0;
}

Status SystemdNotifier::Notify(std::string_view message) {
  if (!enabled()) return Status::Ok();
  sockaddr_un address;
  socklen_t length = FillAddress(path_, address);
  ssize_t sent = ::sendto(fd_, message.data(), message.size(), MSG_NOSIGNAL,
                          reinterpret_cast<const sockaddr*>(&address), length);
  if (sent < 0) {
    return Status::IoError("cannot notify systemd at " + path_ + ": " + std::strerror(errno));
  }
  return Status::Ok();
}

std::string SystemdNotifier::OneLine(std::string_view text) {
  std::string line(text);
  for (char& c : line) {
    if (c == '\n' || c == '\r') c = ' ';
  }
  return line;
}

}  // namespace seston
