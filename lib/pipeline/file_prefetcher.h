// FilePrefetcher: reads and parses a fixed list of input files ahead of their use, on a
// thread of its own, so that replay clusters one file while the next ones are read and
// parsed (on two cores the two stages overlap instead of taking turns).
//
// Order: Next() hands the files out in exactly the order given, each once, whatever the
// timing of the two threads, so the consumer's results do not depend on the read-ahead.
// With `depth` 0 there is no thread at all: Next() reads and parses on the caller's
// thread — the same work in the same order, only not overlapped.
//
// Memory: at most `depth` parsed files wait in the queue, plus the one the worker is
// reading (its bytes and its parse) and the one the caller holds; a file's bytes are
// freed as soon as it is parsed. Nothing grows with the number of files.
//
// Ownership and threads: `fs` and `reader` must outlive the prefetcher. The worker calls
// fs.ReadFile and reader.Parse (const, safe to run concurrently) while the caller may use
// `fs` too, so with depth > 0 the FileSystem must be safe to use from two threads
// (PosixFileSystem is). Next() and the destructor belong to one thread; the destructor
// stops the worker after the file it is on and joins it.
//
// Units: byte counts in bytes.
#pragma once

#include <condition_variable>
#include <cstdint>
#include <deque>
#include <filesystem>
#include <memory>
#include <mutex>
#include <optional>
#include <thread>
#include <vector>

#include "base/file_system.h"
#include "base/status.h"
#include "ingest/csv_reader.h"

namespace seston {

// One file as the prefetcher delivers it.
struct PrefetchedFile {
  enum class Failure {
    kNone,   // read and parsed: `parsed` holds it
    kRead,   // could not be read (missing, unreadable, over max_file_bytes): `status`
    kParse,  // read but not parsed (unusable header, ...): `status`, as CsvReader::Parse
  };
  std::filesystem::path path;
  std::uint64_t bytes = 0;  // bytes read; 0 when the read failed
  Failure failure = Failure::kNone;
  Status status;      // the failure; ok when failure is kNone
  ParsedFile parsed;  // source name path.string(), as ProcessFile would parse it
};

class FilePrefetcher {
 public:
  // `depth`: parsed files that may wait ready (0: no thread, read in Next()); a depth of
  // 2 keeps the worker one file ahead while the caller works on a file. Files larger
  // than `max_file_bytes` fail to read. Error: Internal when the thread cannot start.
  static Result<std::unique_ptr<FilePrefetcher>> Create(FileSystem& fs, const CsvReader& reader,
                                                        std::vector<std::filesystem::path> files,
                                                        std::uint64_t max_file_bytes,
                                                        std::size_t depth);
  ~FilePrefetcher();
  FilePrefetcher(const FilePrefetcher&) = delete;
  FilePrefetcher& operator=(const FilePrefetcher&) = delete;

  // The next file in list order, waiting for the worker when it is not ready yet;
  // nullopt after the last one.
  std::optional<PrefetchedFile> Next();

 private:
  FilePrefetcher(FileSystem& fs, const CsvReader& reader, std::vector<std::filesystem::path> files,
                 std::uint64_t max_file_bytes, std::size_t depth);
  PrefetchedFile Load(const std::filesystem::path& path) const;
  void Work();

  FileSystem& fs_;
  const CsvReader& reader_;
  const std::vector<std::filesystem::path> files_;
  const std::uint64_t max_file_bytes_;
  const std::size_t depth_;
  std::size_t next_ = 0;  // next file Next() loads itself (depth 0 only)

  std::mutex mutex_;
  std::condition_variable changed_;  // a file was queued or taken, or the run ends
  std::deque<PrefetchedFile> ready_;
  bool worker_finished_ = false;
  bool stopping_ = false;
  std::thread worker_;
};

}  // namespace seston
