#include "pipeline/file_prefetcher.h"

#include <algorithm>
#include <system_error>

namespace seston {

Result<std::unique_ptr<FilePrefetcher>> FilePrefetcher::Create(
    FileSystem& fs, const CsvReader& reader, std::vector<std::filesystem::path> files,
    std::uint64_t max_file_bytes, std::size_t depth, std::size_t workers,
    const FeaturePipeline* features) {
  std::unique_ptr<FilePrefetcher> prefetcher(
      new FilePrefetcher(fs, reader, std::move(files), max_file_bytes, depth, features));
  if (depth == 0) return prefetcher;
  // One core is left to the caller's thread, which clusters: on 2 cores one worker
  // keeps up with clustering, and a second only competes with it for the cores (measured
  // about 5 % slower, and a file more held in memory; tools/reports/performance.md).
  if (workers == 0) workers = std::max(1U, std::thread::hardware_concurrency()) - 1;
  workers = std::max<std::size_t>(workers, 1);
  workers = std::min(workers, std::max<std::size_t>(1, prefetcher->files_.size()));
  prefetcher->limit_ = depth + workers;
  for (std::size_t w = 0; w < workers; ++w) {
    try {
      std::lock_guard lock(prefetcher->mutex_);
      prefetcher->workers_.emplace_back([raw = prefetcher.get()] { raw->Work(); });
      ++prefetcher->workers_running_;
    } catch (const std::system_error& error) {
      if (w > 0) break;  // fewer workers only make it slower
      return Status::Internal(std::string("cannot start the file read-ahead thread: ") +
                              error.what() + "; a read-ahead depth of 0 needs no thread");
    }
  }
  return prefetcher;
}

FilePrefetcher::FilePrefetcher(FileSystem& fs, const CsvReader& reader,
                               std::vector<std::filesystem::path> files,
                               std::uint64_t max_file_bytes, std::size_t depth,
                               const FeaturePipeline* features)
    : fs_(fs),
      reader_(reader),
      features_(features),
      files_(std::move(files)),
      max_file_bytes_(max_file_bytes),
      depth_(depth) {}

FilePrefetcher::~FilePrefetcher() { Stop(); }

void FilePrefetcher::Stop() {
  {
    std::lock_guard lock(mutex_);
    stopping_ = true;
  }
  changed_.notify_all();
  for (std::thread& worker : workers_) worker.join();
  workers_.clear();
}

PrefetchedFile FilePrefetcher::Load(const std::filesystem::path& path) const {
  PrefetchedFile file;
  file.path = path;
  auto bytes = fs_.ReadFile(path, max_file_bytes_);
  if (!bytes.ok()) {
    file.failure = PrefetchedFile::Failure::kRead;
    file.status = bytes.status();
    return file;
  }
  file.bytes = bytes->size();
  auto parsed = reader_.Parse(path.string(), *bytes);
  if (!parsed.ok()) {
    file.failure = PrefetchedFile::Failure::kParse;
    file.status = parsed.status();
    return file;
  }
  file.parsed = std::move(*parsed);
  if (features_ != nullptr) file.transformed = features_->Transformed(file.parsed.batch);
  return file;
}

void FilePrefetcher::Work() {
  std::unique_lock lock(mutex_);
  while (true) {
    changed_.wait(lock, [this] {
      return stopping_ || claimed_ == files_.size() || claimed_ < handed_out_ + limit_;
    });
    if (stopping_ || claimed_ == files_.size()) break;
    const std::size_t index = claimed_++;
    lock.unlock();
    PrefetchedFile file = Load(files_[index]);
    lock.lock();
    ready_.emplace(index, std::move(file));
    changed_.notify_all();
  }
  --workers_running_;
  changed_.notify_all();
}

std::optional<PrefetchedFile> FilePrefetcher::Next() {
  if (depth_ == 0) {
    if (handed_out_ == files_.size()) return std::nullopt;
    return Load(files_[handed_out_++]);
  }
  std::unique_lock lock(mutex_);
  if (handed_out_ == files_.size()) return std::nullopt;
  // Rather than wait idle for the file due next, the caller loads one itself: that file
  // when no worker has taken it up yet, else the next free one within the limit. When
  // parsing is the slower stage, both cores then parse in the caller's idle time, with
  // no thread more than there are cores. A file is always loaded by the thread that
  // claimed it, and the workers only stop early when the prefetcher is being destroyed,
  // so the file handed out next arrives.
  while (!ready_.contains(handed_out_)) {
    const bool free_file = claimed_ < files_.size() && claimed_ < handed_out_ + limit_;
    if (free_file) {
      const std::size_t index = claimed_++;
      lock.unlock();
      PrefetchedFile file = Load(files_[index]);
      lock.lock();
      if (index == handed_out_) {  // only this thread hands files out: it is still due
        ++handed_out_;
        lock.unlock();
        changed_.notify_all();
        return file;
      }
      ready_.emplace(index, std::move(file));
      continue;  // the due file may have arrived meanwhile, its notice unheard
    }
    if (workers_running_ == 0) return std::nullopt;  // unreachable unless every worker stopped
    changed_.wait(lock);
  }
  const auto it = ready_.find(handed_out_);
  PrefetchedFile file = std::move(it->second);
  ready_.erase(it);
  ++handed_out_;
  lock.unlock();
  changed_.notify_all();
  return file;
}

}  // namespace seston
