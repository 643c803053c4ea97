// SystemdNotifier: tells systemd how the daemon is doing (the sd_notify protocol).
//
// A service with Type=notify is started by systemd with $NOTIFY_SOCKET naming a Unix
// datagram socket; the service sends newline-separated KEY=VALUE assignments to it, one
// datagram per message: READY=1 once it serves, WATCHDOG=1 as a keep-alive when the unit
// has WatchdogSec= (systemd then sets $WATCHDOG_USEC, and kills a service whose pings
// stop), STOPPING=1 when it begins to shut down, STATUS=free text for `systemctl status`.
// A path beginning with '@' names a socket in the abstract namespace (the '@' stands for
// a leading NUL byte).
//
// Written by hand rather than linked from libsystemd: libsystemd is not among the
// project's dependencies, the protocol is one sendto() of a short datagram, and the
// daemon must also run where systemd is absent (then every call is a no-op).
//
// Environment: FromEnvironment reads NOTIFY_SOCKET, WATCHDOG_USEC and WATCHDOG_PID (the
// watchdog applies only when WATCHDOG_PID is unset or our pid). It does not unset them.
//
// Thread safety: Notify may be called from any thread (one datagram per call, the socket
// is connectionless); Create/destruction on one thread.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <utility>

#include "base/status.h"

namespace seston {

class SystemdNotifier {
 public:
  // A notifier for `socket_path` ("" = disabled, every call succeeds without sending);
  // `watchdog_usec` > 0 when the service manager expects WATCHDOG=1 pings, in µs.
  // InvalidArgument for a path too long for a Unix socket address.
  static Result<std::unique_ptr<SystemdNotifier>> Create(std::string socket_path,
                                                         std::uint64_t watchdog_usec);
  // From $NOTIFY_SOCKET and $WATCHDOG_USEC / $WATCHDOG_PID.
  static Result<std::unique_ptr<SystemdNotifier>> FromEnvironment();
  ~SystemdNotifier();
  SystemdNotifier(const SystemdNotifier&) = delete;
  SystemdNotifier& operator=(const SystemdNotifier&) = delete;

  bool enabled() const { return fd_ >= 0; }
  // Interval at which the main loop should send WATCHDOG=1: half the watchdog timeout,
  // s; nullopt when no watchdog is configured (or notification is disabled).
  std::optional<double> watchdog_interval_seconds() const;

  // Sends `message` (e.g. "READY=1\nSTATUS=running") as one datagram. IoError when the
  // socket refuses it (systemd gone); a disabled notifier returns Ok.
  Status Notify(std::string_view message);
  // The helpers below pass their status text through OneLine.
  Status Ready(std::string_view status) { return Notify("READY=1\nSTATUS=" + OneLine(status)); }
  Status Watchdog() { return Notify("WATCHDOG=1"); }
  Status Stopping(std::string_view status) {
    return Notify("STOPPING=1\nSTATUS=" + OneLine(status));
  }
  Status SetStatus(std::string_view status) { return Notify("STATUS=" + OneLine(status)); }

  // A STATUS= value made safe for the protocol: a line feed would start a new
  // assignment, so line breaks become spaces.
  static std::string OneLine(std::string_view text);

 private:
  SystemdNotifier(int fd, std::string path, std::uint64_t watchdog_usec)
      : fd_(fd), path_(std::move(path)), watchdog_usec_(watchdog_usec) {}

  int fd_ = -1;
  std::string path_;
  std::uint64_t watchdog_usec_ = 0;
};

}  // namespace seston
