#include "pipeline/file_prefetcher.h"

#include <system_error>

namespace seston {

Result<std::unique_ptr<FilePrefetcher>> FilePrefetcher::Create(
    FileSystem& fs, const CsvReader& reader, std::vector<std::filesystem::path> files,
    std::uint64_t max_file_bytes, std::size_t depth) {
  std::unique_ptr<FilePrefetcher> prefetcher(
      new FilePrefetcher(fs, reader, std::move(files), max_file_bytes, depth));
  if (depth > 0) {
    try {
      prefetcher->worker_ = std::thread([raw = prefetcher.get()] { raw->Work(); });
    } catch (const std::system_error& error) {
      return Status::Internal(std::string("cannot start the file read-ahead thread: ") +
                              error.what() + "; a read-ahead depth of 0 needs no thread");
    }
  }
  return prefetcher;
}

FilePrefetcher::FilePrefetcher(FileSystem& fs, const CsvReader& reader,
                               std::vector<std::filesystem::path> files,
                               std::uint64_t max_file_bytes, std::size_t depth)
    : fs_(fs),
      reader_(reader),
      files_(std::move(files)),
      max_file_bytes_(max_file_bytes),
      depth_(depth) {}

FilePrefetcher::~FilePrefetcher() {
  if (!worker_.joinable()) return;
  {
    std::lock_guard lock(mutex_);
    stopping_ = true;
  }
  changed_.notify_all();
  worker_.join();
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
  return file;
}

void FilePrefetcher::Work() {
  for (const auto& path : files_) {
    PrefetchedFile file = Load(path);
    std::unique_lock lock(mutex_);
    changed_.wait(lock, [this] { return stopping_ || ready_.size() < depth_; });
    if (stopping_) break;
    ready_.push_back(std::move(file));
    lock.unlock();
    changed_.notify_all();
  }
  {
    std::lock_guard lock(mutex_);
    worker_finished_ = true;
  }
  changed_.notify_all();
}

std::optional<PrefetchedFile> FilePrefetcher::Next() {
  if (depth_ == 0) {
    if (next_ == files_.size()) return std::nullopt;
    return Load(files_[next_++]);
  }
  std::unique_lock lock(mutex_);
  changed_.wait(lock, [this] { return !ready_.empty() || worker_finished_; });
  if (ready_.empty()) return std::nullopt;
  PrefetchedFile file = std::move(ready_.front());
  ready_.pop_front();
  lock.unlock();
  changed_.notify_all();
  return file;
}

}  // namespace seston
