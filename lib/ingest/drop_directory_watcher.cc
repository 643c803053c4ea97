#include "ingest/drop_directory_watcher.h"

#include <spdlog/spdlog.h>
#include <sys/inotify.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <chrono>
#include <cstring>
#include <system_error>
#include <utility>

#include "ingest/drop_file_name.h"

namespace seston {
namespace {

constexpr std::uint32_t kWatchMask =
    IN_CLOSE_WRITE | IN_MOVED_TO | IN_CREATE | IN_DELETE | IN_MOVED_FROM | IN_ONLYDIR;
constexpr double kLongestPollSeconds = 2.0;

std::chrono::steady_clock::duration ToDuration(double seconds) {
  return std::chrono::duration_cast<std::chrono::steady_clock::duration>(
      std::chrono::duration<double>(std::max(seconds, 0.0)));
}

// One raw inotify record turned into our event; nullopt for records we do not act on
// (directories, and the watch going away, reported through `watch_lost`).
std::optional<WatchEvent> Decode(std::uint32_t mask, std::string name, bool& watch_lost) {
  if (mask & IN_Q_OVERFLOW) return WatchEvent{WatchEventKind::kOverflow, {}};
  if (mask & (IN_IGNORED | IN_UNMOUNT)) {
    watch_lost = true;
    return std::nullopt;
  }
  if (mask & IN_ISDIR) return std::nullopt;
  if (mask & IN_MOVED_TO) return WatchEvent{WatchEventKind::kMovedIn, std::move(name)};
  if (mask & (IN_CLOSE_WRITE | IN_CREATE)) {
    return WatchEvent{WatchEventKind::kWritten, std::move(name)};
  }
  if (mask & (IN_DELETE | IN_MOVED_FROM)) {
    return WatchEvent{WatchEventKind::kRemoved, std::move(name)};
  }
  return std::nullopt;
}

}  // namespace

Result<std::unique_ptr<DropDirectoryWatcher>> DropDirectoryWatcher::Create(
    boost::asio::io_context& io, const InputOptions& options, FileSystem& fs, const Clock& clock,
    std::function<void()> on_ready) {
  if (!(options.settle_seconds >= 0)) {
    return Status::InvalidArgument("input settle time must be 0 or more seconds, got " +
                                   std::to_string(options.settle_seconds));
  }
  if (!(options.rescan_seconds > 0)) {
    return Status::InvalidArgument("input rescan interval must be more than 0 seconds, got " +
                                   std::to_string(options.rescan_seconds));
  }
  if (options.file_suffix.empty()) {
    return Status::InvalidArgument(
        "input file suffix is empty; give the ending of sample files, e.g. \".csv\"");
  }
  if (options.max_tracked_files == 0) {
    return Status::InvalidArgument("input max_tracked_files must be at least 1");
  }
  auto info = fs.Stat(options.drop_dir);
  if (!info.ok()) return info.status().WithContext("drop directory");
  if (!info->is_directory) {
    return Status::InvalidArgument("drop directory " + options.drop_dir +
                                   " is not a directory; give an existing directory");
  }
  std::unique_ptr<DropDirectoryWatcher> watcher(
      new DropDirectoryWatcher(io, options, fs, clock, std::move(on_ready)));
  if (options.watch == WatchMode::kInotify) SESTON_RETURN_IF_ERROR(watcher->OpenInotify());
  return watcher;
}

DropDirectoryWatcher::DropDirectoryWatcher(boost::asio::io_context& io, const InputOptions& options,
                                           FileSystem& fs, const Clock& clock,
                                           std::function<void()> on_ready)
    : options_(options),
      drop_dir_(options.drop_dir),
      fs_(fs),
      clock_(clock),
      on_ready_(std::move(on_ready)),
      listing_interval_seconds_(options.watch == WatchMode::kPoll
                                    ? std::min(options.rescan_seconds, kLongestPollSeconds)
                                    : options.rescan_seconds),
      rescan_timer_(io),
      settle_timer_(io),
      inotify_(io) {}

DropDirectoryWatcher::~DropDirectoryWatcher() { Stop(); }

Status DropDirectoryWatcher::OpenInotify() {
  int fd = ::inotify_init1(IN_NONBLOCK | IN_CLOEXEC);
  if (fd < 0) {
    return Status::IoError(std::string("cannot open inotify for drop directory ") +
                           options_.drop_dir + ": " + std::strerror(errno) +
                           "; set the input watch mode to poll to use listings only");
  }
  if (::inotify_add_watch(fd, drop_dir_.c_str(), kWatchMask) < 0) {
    int error = errno;
    ::close(fd);
    return Status::IoError(std::string("cannot watch drop directory ") + options_.drop_dir +
                           " with inotify: " + std::strerror(error) +
                           (error == ENOSPC ? " (raise fs.inotify.max_user_watches)" : "") +
                           "; set the input watch mode to poll to use listings only");
  }
  boost::system::error_code error;
  inotify_.assign(fd, error);
  if (error) {
    ::close(fd);
    return Status::IoError("cannot register inotify descriptor: " + error.message());
  }
  watch_lost_ = false;
  return Status::Ok();
}

Status DropDirectoryWatcher::Start() {
  if (running_) return Status::Ok();
  if (options_.watch == WatchMode::kInotify && !inotify_.is_open()) {
    SESTON_RETURN_IF_ERROR(OpenInotify());
  }
  running_ = true;
  ArmRescanTimer(0);
  if (inotify_.is_open()) ReadEvents();
  return Status::Ok();
}

void DropDirectoryWatcher::Stop() {
  running_ = false;
  rescan_timer_.cancel();
  settle_timer_.cancel();
  boost::system::error_code ignored;
  inotify_.close(ignored);
}

void DropDirectoryWatcher::ArmRescanTimer(double delay_seconds) {
  rescan_timer_.expires_after(ToDuration(delay_seconds));
  rescan_timer_.async_wait(
      [this, alive = std::weak_ptr<int>(alive_)](const boost::system::error_code& error) {
        if (error || alive.expired() || !running_) return;
        Rescan();
        RestoreWatchIfLost();
        ArmRescanTimer(listing_interval_seconds_);
      });
}

void DropDirectoryWatcher::RestoreWatchIfLost() {
  if (!watch_lost_ || options_.watch != WatchMode::kInotify || !last_rescan_status().ok()) {
    return;
  }
  boost::system::error_code ignored;
  inotify_.close(ignored);
  if (OpenInotify().ok()) {
    spdlog::info("drop directory watch set again on {}", options_.drop_dir);
    ReadEvents();
  }
}

void DropDirectoryWatcher::ArmSettleTimer() {
  if (!running_) return;
  std::optional<double> earliest;
  {
    std::lock_guard lock(mutex_);
    for (const auto& [name, file] : files_) {
      if (file.state != FileState::kWaiting) continue;
      double due = file.unchanged_since + options_.settle_seconds;
      if (!earliest || due < *earliest) earliest = due;
    }
  }
  if (!earliest) {
    settle_timer_.cancel();
    return;
  }
  settle_timer_.expires_after(ToDuration(*earliest - clock_.MonotonicSeconds()));
  settle_timer_.async_wait(
      [this, alive = std::weak_ptr<int>(alive_)](const boost::system::error_code& error) {
        if (error || alive.expired() || !running_) return;
        CheckSettling();
      });
}

void DropDirectoryWatcher::CheckSettling() {
  double now = clock_.MonotonicSeconds();
  std::vector<std::string> due;
  {
    std::lock_guard lock(mutex_);
    for (const auto& [name, file] : files_) {
      if (file.state == FileState::kWaiting &&
          now - file.unchanged_since >= options_.settle_seconds) {
        due.push_back(name);
      }
    }
  }
  bool became_ready = false;
  for (const std::string& name : due) {
    std::optional<FileInfo> info = StatEntry(name);
    std::lock_guard lock(mutex_);
    if (!info) {
      files_.erase(name);
    } else {
      became_ready |= UpdateLocked(name, *info, /*moved_in=*/false, now);
    }
  }
  ArmSettleTimer();
  NotifyIfReady(became_ready);
}

std::optional<FileInfo> DropDirectoryWatcher::StatEntry(const std::string& name) {
  std::filesystem::path path = drop_dir_ / name;
  // FileSystem::Stat follows symbolic links; a link must not let a file outside drop_dir
  // be read, so the entry itself is checked first.
  std::error_code error;
  if (std::filesystem::is_symlink(std::filesystem::symlink_status(path, error))) {
    return std::nullopt;
  }
  auto info = fs_.Stat(path);
  if (!info.ok() || !info->is_regular) return std::nullopt;
  return *info;
}

bool DropDirectoryWatcher::UpdateLocked(const std::string& name, const FileInfo& info,
                                        bool moved_in, double now) {
  auto it = files_.find(name);
  if (it == files_.end()) {
    if (files_.size() >= options_.max_tracked_files) return false;
    it = files_
             .emplace(name,
                      TrackedFile{FileState::kWaiting, info.size_bytes, info.modified_seconds, now})
             .first;
  }
  TrackedFile& file = it->second;
  if (moved_in && (file.state == FileState::kWaiting || file.state == FileState::kHandled)) {
    file = TrackedFile{FileState::kReady, info.size_bytes, info.modified_seconds, now};
    return true;
  }
  if (file.state != FileState::kWaiting) return false;
  if (file.size_bytes != info.size_bytes || file.modified_seconds != info.modified_seconds) {
    file.size_bytes = info.size_bytes;
    file.modified_seconds = info.modified_seconds;
    file.unchanged_since = now;
  }
  if (now - file.unchanged_since >= options_.settle_seconds) {
    file.state = FileState::kReady;
    return true;
  }
  return false;
}

void DropDirectoryWatcher::Rescan() {
  rescans_.fetch_add(1);
  auto listing = fs_.ListDirectory(drop_dir_);
  if (!listing.ok()) {
    std::lock_guard lock(mutex_);
    if (last_rescan_status_.ok()) {
      spdlog::warn("drop directory listing failed, will retry every {} s: {}",
                   listing_interval_seconds_, listing.status().ToString());
    }
    last_rescan_status_ = listing.status();
    return;
  }
  std::sort(listing->begin(), listing->end(),
            [](const DirectoryEntry& a, const DirectoryEntry& b) { return a.name < b.name; });

  std::vector<std::pair<const std::string*, FileInfo>> accepted;
  std::uint64_t ignored = 0;
  for (const DirectoryEntry& entry : *listing) {
    if (entry.info.is_directory) continue;
    std::optional<FileInfo> info;
    if (entry.info.is_regular && IsDropFileName(entry.name, options_.file_suffix)) {
      info = StatEntry(entry.name);
    }
    if (!info) {
      ++ignored;
      continue;
    }
    accepted.emplace_back(&entry.name, *info);
  }
  ignored_names_.store(ignored);

  double now = clock_.MonotonicSeconds();
  bool became_ready = false;
  {
    std::lock_guard lock(mutex_);
    if (!last_rescan_status_.ok()) {
      spdlog::info("drop directory listing works again");
      last_rescan_status_ = Status::Ok();
    }
    // Both sequences are in name order: walk them together to drop the vanished names.
    auto next = accepted.begin();
    for (auto it = files_.begin(); it != files_.end();) {
      while (next != accepted.end() && *next->first < it->first) ++next;
      if (next == accepted.end() || *next->first != it->first) {
        it = files_.erase(it);
      } else {
        ++it;
      }
    }
    for (const auto& [name, info] : accepted) {
      became_ready |= UpdateLocked(*name, info, /*moved_in=*/false, now);
    }
  }
  ArmSettleTimer();
  NotifyIfReady(became_ready);
}

void DropDirectoryWatcher::Observe(const WatchEvent& event) {
  watch_events_.fetch_add(1);
  if (event.kind == WatchEventKind::kOverflow) {
    inotify_overflows_.fetch_add(1);
    spdlog::warn("drop directory events overflowed; listing {} now", options_.drop_dir);
    Rescan();
    return;
  }
  if (event.kind == WatchEventKind::kRemoved) {
    std::lock_guard lock(mutex_);
    files_.erase(event.name);
    return;
  }
  if (!IsDropFileName(event.name, options_.file_suffix)) return;
  std::optional<FileInfo> info = StatEntry(event.name);
  bool became_ready = false;
  {
    std::lock_guard lock(mutex_);
    if (!info) {
      files_.erase(event.name);
    } else {
      became_ready = UpdateLocked(event.name, *info, event.kind == WatchEventKind::kMovedIn,
                                  clock_.MonotonicSeconds());
    }
  }
  ArmSettleTimer();
  NotifyIfReady(became_ready);
}

void DropDirectoryWatcher::ReadEvents() {
  inotify_.async_read_some(
      boost::asio::buffer(event_buffer_),
      [this, alive = std::weak_ptr<int>(alive_)](const boost::system::error_code& error,
                                                 std::size_t bytes) {
        if (alive.expired() || !running_ || error == boost::asio::error::operation_aborted) {
          return;
        }
        if (error) {
          // The descriptor failed; listings carry on alone and reopen it later.
          spdlog::warn("drop directory inotify read failed: {}", error.message());
          watch_lost_ = true;
          return;
        }
        std::size_t offset = 0;
        while (offset + sizeof(inotify_event) <= bytes) {
          inotify_event header;
          std::memcpy(&header, event_buffer_.data() + offset, sizeof header);
          const char* name_start = event_buffer_.data() + offset + sizeof header;
          std::string name(name_start, ::strnlen(name_start, header.len));
          offset += sizeof header + header.len;
          bool lost = false;
          std::optional<WatchEvent> event = Decode(header.mask, std::move(name), lost);
          if (lost && !watch_lost_) {
            spdlog::warn("drop directory watch on {} ended; listings carry on", options_.drop_dir);
            watch_lost_ = true;
          }
          if (event) Observe(*event);
          if (!running_) return;
        }
        if (!watch_lost_) ReadEvents();
      });
}

void DropDirectoryWatcher::NotifyIfReady(bool became_ready) {
  if (became_ready && on_ready_) on_ready_();
}

std::vector<std::string> DropDirectoryWatcher::ReadyFiles() {
  std::vector<std::string> ready;
  std::lock_guard lock(mutex_);
  for (auto& [name, file] : files_) {
    if (file.state != FileState::kReady) continue;
    file.state = FileState::kHandedOut;
    ready.push_back(name);
  }
  return ready;
}

void DropDirectoryWatcher::MarkHandled(const std::string& name) {
  std::lock_guard lock(mutex_);
  auto it = files_.find(name);
  if (it != files_.end()) it->second.state = FileState::kHandled;
}

void DropDirectoryWatcher::Forget(const std::string& name) {
  std::lock_guard lock(mutex_);
  files_.erase(name);
}

std::size_t DropDirectoryWatcher::tracked_files() const {
  std::lock_guard lock(mutex_);
  return files_.size();
}

Status DropDirectoryWatcher::last_rescan_status() const {
  std::lock_guard lock(mutex_);
  return last_rescan_status_;
}

}  // namespace seston
