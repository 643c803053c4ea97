#include "pipeline/service_loop.h"

#include <utility>

namespace seston {

ServiceLoop::ServiceLoop(StationService& service, Inputs inputs)
    : service_(service), inputs_(std::move(inputs)) {}

bool ServiceLoop::Post(Task task) {
  {
    std::lock_guard<std::mutex> lock(mutex_);
    if (stop_.load() || tasks_.size() >= kMaxQueuedTasks) return false;
    tasks_.push_back(std::move(task));
    woken_ = true;
  }
  wake_.notify_one();
  return true;
}

void ServiceLoop::NotifyFilesReady() {
  {
    std::lock_guard<std::mutex> lock(mutex_);
    woken_ = true;
  }
  wake_.notify_one();
}

void ServiceLoop::RequestStop() {
  {
    std::lock_guard<std::mutex> lock(mutex_);
    stop_.store(true);
    woken_ = true;
  }
  wake_.notify_one();
}

void ServiceLoop::RunTasks() {
  std::deque<Task> tasks;
  {
    std::lock_guard<std::mutex> lock(mutex_);
    tasks.swap(tasks_);
  }
  for (Task& task : tasks) task(service_);
}

void ServiceLoop::DeliverAlertFiles() {
  auto files = service_.TakeNewAlertFiles();
  if (!files.empty() && inputs_.alert_files) inputs_.alert_files(std::move(files));
}

void ServiceLoop::Wait() {
  std::unique_lock<std::mutex> lock(mutex_);
  wake_.wait_for(lock, kIdleWait, [this] { return woken_; });
  woken_ = false;
}

Status ServiceLoop::Run() {
  std::deque<std::string> files;
  std::vector<QueuedLine> lines;
  while (!stop_.load()) {
    RunTasks();
    service_.Tick();
    DeliverAlertFiles();
    bool waited = false;
    bool worked = false;
    if (service_.accepting_work()) {
      if (files.empty() && inputs_.ready_files) {
        for (std::string& name : inputs_.ready_files()) files.push_back(std::move(name));
      }
      if (!files.empty()) {
        std::string name = std::move(files.front());
        files.pop_front();
        switch (service_.ProcessReadyFile(name)) {
          case FileDisposition::kDone:
          case FileDisposition::kQuarantined:
          case FileDisposition::kCommitted:
            if (inputs_.mark_handled) inputs_.mark_handled(name);
            break;
          case FileDisposition::kRetryLater:
          case FileDisposition::kGone:
            if (inputs_.forget) inputs_.forget(name);
            break;
        }
        DeliverAlertFiles();
        worked = true;
      }
      if (inputs_.records != nullptr && !stop_.load()) {
        lines.clear();
        const bool idle = files.empty();
        if (inputs_.records->PopBatch(lines, kMaxBatchLines,
                                      idle ? kIdleWait : std::chrono::milliseconds(0)) > 0) {
          service_.ProcessLines(lines, inputs_.records->size() > 0);
          DeliverAlertFiles();
          worked = true;
        } else {
          waited = idle;
        }
      }
    } else if (!files.empty()) {
      // Writing fails: give the names back, the watcher hands them out again later.
      for (const std::string& name : files) {
        if (inputs_.forget) inputs_.forget(name);
      }
      files.clear();
    }
    files_in_hand_.store(files.size());
    if (!worked && !waited && !stop_.load()) Wait();
  }
  for (const std::string& name : files) {
    if (inputs_.forget) inputs_.forget(name);
  }
  files_in_hand_.store(0);
  RunTasks();
  Status shutdown = service_.Shutdown();
  DeliverAlertFiles();
  return shutdown;
}

}  // namespace seston
