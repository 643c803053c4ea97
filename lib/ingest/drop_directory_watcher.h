// DropDirectoryWatcher: decides which sample files in the drop directory are ready to read.
//
// The instrument writes sample files into InputOptions::drop_dir. A file is *ready* when
//   - it was renamed into the directory (inotify IN_MOVED_TO): ready at once, as a rename
//     is how a careful writer says "complete"; or
//   - its size and mtime were seen unchanged for settle_seconds (written in place).
// Only regular files with a name accepted by IsDropFileName (drop_file_name.h) are
// considered; symbolic links, directories and temporary names are skipped, and counted
// in ignored_names(). A file that shrinks, grows or is touched starts its settle time
// again.
//
// Two halves in one object:
//   Decisions - fed observations: directory listings (Rescan(), through FileSystem) and
//     single events (Observe()). They keep, per name, the last size/mtime seen and
//     since when (Clock::MonotonicSeconds), and the file's state:
//       waiting -> ready -> handed out -> handled.
//     Tests drive this half directly with a ManualClock and never call Start().
//   OS part - Start() opens an inotify watch on drop_dir (IN_CLOSE_WRITE | IN_MOVED_TO |
//     IN_CREATE | IN_DELETE | IN_MOVED_FROM; overflow is always reported) read through
//     a boost::asio::posix::stream_descriptor, and arms timers:
//       rescan timer - a full listing every rescan_seconds (inotify is only a hint: a
//         listing repairs anything it missed); in WatchMode::kPoll (network mounts,
//         where inotify sees no remote writes) there is no inotify and the listing runs
//         every poll_interval_seconds() = min(rescan_seconds, 2 s);
//       settle timer - wakes when the earliest waiting file could have settled and
//         stats it again, so a file written slowly and then left alone becomes ready
//         without waiting for the next rescan.
//     An inotify queue overflow (IN_Q_OVERFLOW) is counted and triggers a listing at
//     once. If the watch is lost (drop_dir removed or unmounted), listings go on and the
//     watch is set again after the next listing that succeeds.
//
// Order: ReadyFiles() returns names in byte-wise name order. The instrument writes names
// that sort by acquisition time, so this is time order; names are unique in a directory,
// so no second key is needed (mtime is not used: copies and restores change it). Order
// holds among files ready at the same call; a file still being written does not hold
// back later ones that are ready.
//
// Bounded memory: at most InputOptions::max_tracked_files names are remembered; further
// files stay in the directory until a later listing has room, lowest names first.
//
// Threading: Start(), Stop(), Rescan() and Observe() run on the thread that runs the
// io_context (or, before it runs, on the thread that owns it); `on_ready` is called on
// that thread after new files became ready. ReadyFiles(), MarkHandled(), Forget() and
// the counters may be called from any thread (the pipeline's): the name table sits
// behind a mutex, taken once per observation batch and per call, never on a per-record
// path. Destroy the watcher on the io thread or after the io_context has stopped.
//
// Timers take their waits from the Clock's monotonic reading; with a ManualClock the
// timers would still wait in real time, so tests of the decisions call Rescan() after
// moving the clock instead of relying on timers.
#pragma once

#include <array>
#include <atomic>
#include <boost/asio/io_context.hpp>
#include <boost/asio/posix/stream_descriptor.hpp>
#include <boost/asio/steady_timer.hpp>
#include <cstdint>
#include <filesystem>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <vector>

#include "base/clock.h"
#include "base/file_system.h"
#include "base/status.h"
#include "ingest/input_options.h"

namespace seston {

enum class WatchEventKind {
  kMovedIn,   // renamed into the directory: complete
  kWritten,   // closed after writing, or created: may still change
  kRemoved,   // deleted or renamed away
  kOverflow,  // the event queue overflowed: events were lost
};

struct WatchEvent {
  WatchEventKind kind = WatchEventKind::kWritten;
  std::string name;  // entry name inside drop_dir; empty for kOverflow
};

class DropDirectoryWatcher {
 public:
  // Checks that drop_dir is a directory, that settle_seconds >= 0, rescan_seconds > 0
  // and file_suffix is not empty, and in WatchMode::kInotify opens the inotify watch
  // (failing with advice to use poll mode when the system refuses one). Nothing runs
  // until Start().
  static Result<std::unique_ptr<DropDirectoryWatcher>> Create(boost::asio::io_context& io,
                                                              const InputOptions& options,
                                                              FileSystem& fs, const Clock& clock,
                                                              std::function<void()> on_ready);

  ~DropDirectoryWatcher();
  DropDirectoryWatcher(const DropDirectoryWatcher&) = delete;
  DropDirectoryWatcher& operator=(const DropDirectoryWatcher&) = delete;

  // Begins watching: a first listing at once (on the io thread), then the timers and
  // inotify reads. Fails only when inotify cannot be opened again after a Stop().
  Status Start();
  // Cancels timers and closes the inotify watch; what was learnt is kept, and files
  // that arrive while stopped are found by the first listing after Start().
  void Stop();

  // Lists drop_dir and updates every name from it; names no longer listed are dropped.
  void Rescan();
  // Applies one event; kMovedIn and kWritten stat the file first, kOverflow rescans.
  void Observe(const WatchEvent& event);

  // Ready names not handed out before, in name order; they are now "handed out".
  std::vector<std::string> ReadyFiles();
  // The caller is done with `name`; it is not handed out again while it stays in the
  // directory (a file that could not be moved away is not read twice).
  void MarkHandled(const std::string& name);
  // Drops all memory of `name`: if the file is still there it is treated as new and
  // handed out again once it settles (the way to retry after a transient read error).
  void Forget(const std::string& name);

  // Counters for metrics; any thread.
  std::uint64_t rescans() const { return rescans_.load(); }
  std::uint64_t inotify_overflows() const { return inotify_overflows_.load(); }
  std::uint64_t watch_events() const { return watch_events_.load(); }
  // Entries in the last listing that will not be read: temporary or foreign names,
  // symbolic links, special files (directories such as done/ are not counted).
  std::uint64_t ignored_names() const { return ignored_names_.load(); }
  std::size_t tracked_files() const;
  // Ok, or why the last listing failed (e.g. drop_dir vanished).
  Status last_rescan_status() const;
  // Seconds between listings: rescan_seconds, or min(rescan_seconds, 2) in poll mode.
  double poll_interval_seconds() const { return listing_interval_seconds_; }

 private:
  enum class FileState { kWaiting, kReady, kHandedOut, kHandled };
  struct TrackedFile {
    FileState state = FileState::kWaiting;
    std::uint64_t size_bytes = 0;
    double modified_seconds = 0;
    double unchanged_since = 0;  // monotonic s when this size/mtime was first seen
  };

  DropDirectoryWatcher(boost::asio::io_context& io, const InputOptions& options, FileSystem& fs,
                       const Clock& clock, std::function<void()> on_ready);

  // Stats one entry without following a symbolic link; nullopt when it is gone or is
  // not a regular file.
  std::optional<FileInfo> StatEntry(const std::string& name);
  // Under mutex_: records a sighting of a regular, accepted file; true if it became ready.
  bool UpdateLocked(const std::string& name, const FileInfo& info, bool moved_in, double now);
  // Re-stats waiting files whose settle time has passed.
  void CheckSettling();
  void ArmRescanTimer(double delay_seconds);
  void ArmSettleTimer();
  // After a listing that worked, sets the inotify watch again if it was lost.
  void RestoreWatchIfLost();
  Status OpenInotify();
  void ReadEvents();
  void NotifyIfReady(bool became_ready);

  InputOptions options_;
  std::filesystem::path drop_dir_;
  FileSystem& fs_;
  const Clock& clock_;
  std::function<void()> on_ready_;
  double listing_interval_seconds_;

  boost::asio::steady_timer rescan_timer_;
  boost::asio::steady_timer settle_timer_;
  boost::asio::posix::stream_descriptor inotify_;
  bool watch_lost_ = false;
  bool running_ = false;
  alignas(8) std::array<char, 16384> event_buffer_{};
  // Handlers hold a weak_ptr to this token and do nothing once it is gone, so a handler
  // already queued when the watcher is destroyed never touches it.
  std::shared_ptr<int> alive_ = std::make_shared<int>(0);

  mutable std::mutex mutex_;
  std::map<std::string, TrackedFile> files_;  // ordered by name: the processing order
  Status last_rescan_status_;

  std::atomic<std::uint64_t> rescans_{0};
  std::atomic<std::uint64_t> inotify_overflows_{0};
  std::atomic<std::uint64_t> watch_events_{0};
  std::atomic<std::uint64_t> ignored_names_{0};
};

}  // namespace seston
