// ServiceLoop: the pipeline thread of `sestond run`. It owns the order in which the one
// StationService does its work, and the bounded queue through which other threads ask
// it for something.
//
// Each turn of Run(): posted tasks (label and baseline writes from the HTTP threads) run
// first; then StationService::Tick (due checkpoints, retries); then, while the service
// takes work, one ready drop file (names come from `ready_files`, in the watcher's name
// order) and one batch of socket lines (at most kMaxBatchLines) — one of each per turn,
// so that a long file backlog does not stall the socket, and neither stalls a write.
// Alert files the service reports as durable go to `alert_files` (the daemon runs the
// hook on its own thread). With nothing to do the loop waits at most kIdleWait for a
// post, a NotifyFilesReady() or a socket line.
//
// Stop: RequestStop() (any thread, e.g. the signal handler) ends the loop after the file
// or batch in hand; files handed out but not read are given back (`forget`), the tasks
// still queued are run, and StationService::Shutdown writes the closed bins and a last
// checkpoint (answering socket commits). Run returns that status.
//
// Threading: Run on the pipeline thread only; Post, NotifyFilesReady, RequestStop and the
// counters from any thread. The callbacks are called on the pipeline thread.
#pragma once

#include <atomic>
#include <chrono>
#include <condition_variable>
#include <cstddef>
#include <deque>
#include <filesystem>
#include <functional>
#include <mutex>
#include <string>
#include <vector>

#include "ingest/record_queue.h"
#include "pipeline/station_service.h"

namespace seston {

class ServiceLoop {
 public:
  static constexpr std::size_t kMaxBatchLines = 4096;
  static constexpr std::size_t kMaxQueuedTasks = 64;
  static constexpr std::chrono::milliseconds kIdleWait{20};

  using Task = std::function<void(StationService&)>;

  struct Inputs {
    // Ready drop-file names, each handed out once (DropDirectoryWatcher::ReadyFiles);
    // empty function: no drop directory.
    std::function<std::vector<std::string>()> ready_files;
    // The service is done with a name (DropDirectoryWatcher::MarkHandled) ...
    std::function<void(const std::string&)> mark_handled;
    // ... or it should be handed out again later (DropDirectoryWatcher::Forget).
    std::function<void(const std::string&)> forget;
    RecordQueue* records = nullptr;  // null: no socket
    std::function<void(std::vector<std::filesystem::path>)> alert_files;
  };

  ServiceLoop(StationService& service, Inputs inputs);

  // Queues `task` for the pipeline thread. False (task dropped) when kMaxQueuedTasks are
  // waiting or the loop is stopping.
  bool Post(Task task);
  void NotifyFilesReady();
  void RequestStop();

  Status Run();

  // Files handed out and not yet read, for the backlog.
  std::size_t files_in_hand() const { return files_in_hand_.load(); }

 private:
  void RunTasks();
  void DeliverAlertFiles();
  void Wait();

  StationService& service_;
  Inputs inputs_;
  std::mutex mutex_;
  std::condition_variable wake_;
  std::deque<Task> tasks_;
  bool woken_ = false;
  std::atomic<bool> stop_{false};
  std::atomic<std::size_t> files_in_hand_{0};
};

}  // namespace seston
