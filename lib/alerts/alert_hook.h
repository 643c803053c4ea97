// AlertHook: runs the configured command on each new alert file.
//
// The command (AlertOptions::hook_command) is split on spaces into a program and its
// arguments — no shell, no quoting, no variables; a hook that needs them is a script —
// and the alert file's path is appended as the last argument. The program is found on
// PATH when its name has no "/". It runs in its own process group with stdin from
// /dev/null and the daemon's stdout and stderr; if it has not exited after
// hook_timeout_seconds, the whole group is killed (SIGKILL) and reaped. Run therefore
// never blocks its caller much longer than the timeout; callers that must not block at
// all run it off their strand.
//
// The daemon must not set SIGCHLD to SIG_IGN (the exit status would be lost).
// Thread safety: Run may be called from any thread; each call waits for its own child.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include "base/clock.h"
#include "base/status.h"

namespace seston {

class AlertHook {
 public:
  // An empty (or all-space) command means no hook: Run does nothing. Fails when
  // timeout_seconds is not finite and > 0. `clock` (its monotonic time) must outlive the
  // hook and advance by itself (SystemClock in production).
  static Result<AlertHook> Create(const std::string& command, double timeout_seconds,
                                  const Clock& clock);

  bool enabled() const { return !argv_.empty(); }

  // Runs the command with `alert_file` as its last argument and waits for it. Ok when it
  // exited with status 0; kIoError when it could not start or failed; kUnavailable when
  // it was killed at the timeout.
  Status Run(const std::filesystem::path& alert_file) const;

 private:
  AlertHook(std::vector<std::string> argv, double timeout_seconds, const Clock& clock)
      : argv_(std::move(argv)), timeout_seconds_(timeout_seconds), clock_(&clock) {}

  std::vector<std::string> argv_;
  double timeout_seconds_;
  const Clock* clock_;
};

}  // namespace seston
