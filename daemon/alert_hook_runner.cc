#include "daemon/alert_hook_runner.h"

#include <spdlog/spdlog.h>

namespace seston::daemon {

Result<std::unique_ptr<AlertHookRunner>> AlertHookRunner::Create(const AlertOptions& options,
                                                                 const Clock& clock) {
  SESTON_ASSIGN_OR_RETURN(
      auto hook, AlertHook::Create(options.hook_command, options.hook_timeout_seconds, clock));
  return std::unique_ptr<AlertHookRunner>(new AlertHookRunner(std::move(hook)));
}

AlertHookRunner::AlertHookRunner(AlertHook hook)
    : hook_(std::move(hook)), thread_([this](std::stop_token stop) { Work(stop); }) {}

AlertHookRunner::~AlertHookRunner() {
  thread_.request_stop();
  wake_.notify_all();
  thread_.join();
  if (!waiting_.empty()) {
    spdlog::warn("alert hook: stopping with {} alert files not handed to the hook",
                 waiting_.size());
  }
}

void AlertHookRunner::Enqueue(std::vector<std::filesystem::path> files) {
  for (auto& file : files) spdlog::info("alert written: {}", file.string());
  if (!hook_.enabled()) return;
  {
    std::lock_guard<std::mutex> lock(mutex_);
    for (auto& file : files) {
      if (waiting_.size() >= kMaxWaiting) {
        spdlog::warn("alert hook: {} files already wait; {} is not handed to the hook", kMaxWaiting,
                     file.string());
        continue;
      }
      waiting_.push_back(std::move(file));
    }
  }
  wake_.notify_one();
}

void AlertHookRunner::Work(std::stop_token stop) {
  while (true) {
    std::filesystem::path file;
    {
      std::unique_lock<std::mutex> lock(mutex_);
      if (!wake_.wait(lock, stop, [this] { return !waiting_.empty(); })) return;
      file = std::move(waiting_.front());
      waiting_.pop_front();
    }
    Status ran = hook_.Run(file);
    if (ran.ok()) {
      spdlog::info("alert hook ran for {}", file.string());
    } else {
      spdlog::warn("alert hook for {} failed: {}", file.string(), ran.message());
    }
  }
}

}  // namespace seston::daemon
