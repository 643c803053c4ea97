// AlertHookRunner: runs the alert hook (alerts/alert_hook.h) on its own thread, so that a
// slow hook never holds up the pipeline. Alert files arrive from the pipeline thread once
// they are durable; each is handed to the hook once, in order. At most kMaxWaiting files
// wait; beyond that a file is logged and skipped (the alert file itself is on disk, the
// hook is only a messenger). Destruction lets the hook in progress finish (it is bounded
// by alerts.hook_timeout_seconds) and drops the rest with a log line.
#pragma once

#include <condition_variable>
#include <deque>
#include <filesystem>
#include <memory>
#include <mutex>
#include <thread>
#include <vector>

#include "alerts/alert_hook.h"
#include "alerts/alert_options.h"
#include "base/clock.h"
#include "base/status.h"

namespace seston::daemon {

class AlertHookRunner {
 public:
  static constexpr std::size_t kMaxWaiting = 256;

  static Result<std::unique_ptr<AlertHookRunner>> Create(const AlertOptions& options,
                                                         const Clock& clock);
  ~AlertHookRunner();

  // Any thread.
  void Enqueue(std::vector<std::filesystem::path> files);

 private:
  explicit AlertHookRunner(AlertHook hook);
  void Work(std::stop_token stop);

  AlertHook hook_;
  std::mutex mutex_;
  std::condition_variable_any wake_;
  std::deque<std::filesystem::path> waiting_;
  std::jthread thread_;
};

}  // namespace seston::daemon
