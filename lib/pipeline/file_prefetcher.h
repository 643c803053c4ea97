// FilePrefetcher: reads and parses a fixed list of input files ahead of their use, on
// worker threads of its own, so that replay clusters one file while the next ones are
// read and parsed (on two cores parsing and clustering overlap instead of taking turns;
// with more cores, more workers parse several files at once when parsing is the slower
// stage).
//
// Order: Next() hands the files out in exactly the order given, each once, whatever the
// timing of the threads, so the consumer's results do not depend on the read-ahead or
// on the number of workers. With `depth` 0 there is no thread at all: Next() reads and
// parses on the caller's thread — the same work in the same order, only not overlapped.
//
// Memory: at most `depth` + `workers` files are taken up (by the workers, or by the
// caller while it waits) and not yet handed out (being read or parsed, or waiting
// ready), plus the one the caller holds; a file's bytes are freed as soon as it is
// parsed. Nothing grows with the number of files.
//
// Ownership and threads: `fs` and `reader` must outlive the prefetcher. The workers call
// fs.ReadFile and reader.Parse (const, safe to run concurrently) while the caller may use
// `fs` too, so with depth > 0 the FileSystem must be safe to use from several threads
// (PosixFileSystem is). Next() and the destructor belong to one thread; the destructor
// stops the workers after the files they are on and joins them.
//
// Units: byte counts in bytes.
#pragma once

#include <condition_variable>
#include <cstdint>
#include <filesystem>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <thread>
#include <vector>

#include "base/file_system.h"
#include "base/status.h"
#include "features/feature_pipeline.h"
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
  // features->Transformed(parsed.batch) when the prefetcher was given `features` and the
  // parse succeeded: the model-free step of a file's work, done on the worker too.
  std::optional<TransformedBatch> transformed;
};

class FilePrefetcher {
 public:
  // `depth`: parsed files that may wait ready (0: no thread, read in Next()); a depth of
  // 2 keeps the workers a file ahead while the caller works on a file. `workers`: threads
  // reading and parsing (0: one per core but one, at least 1; ignored with depth 0).
  // `features` (optional, must outlive the prefetcher): also transform each parsed file.
  // Files larger than `max_file_bytes` fail to read. Error: Internal when no thread can start.
  static Result<std::unique_ptr<FilePrefetcher>> Create(FileSystem& fs, const CsvReader& reader,
                                                        std::vector<std::filesystem::path> files,
                                                        std::uint64_t max_file_bytes,
                                                        std::size_t depth, std::size_t workers = 1,
                                                        const FeaturePipeline* features = nullptr);
  ~FilePrefetcher();
  FilePrefetcher(const FilePrefetcher&) = delete;
  FilePrefetcher& operator=(const FilePrefetcher&) = delete;

  // The next file in list order; nullopt after the last one. When it is not ready yet,
  // loads it (or, when a worker has it in hand, a later one) on the caller's thread
  // rather than wait idle, and waits only when the limit leaves nothing to take up.
  std::optional<PrefetchedFile> Next();

 private:
  FilePrefetcher(FileSystem& fs, const CsvReader& reader, std::vector<std::filesystem::path> files,
                 std::uint64_t max_file_bytes, std::size_t depth, const FeaturePipeline* features);
  PrefetchedFile Load(const std::filesystem::path& path) const;
  void Work();
  void Stop();

  FileSystem& fs_;
  const CsvReader& reader_;
  const FeaturePipeline* const features_;
  const std::vector<std::filesystem::path> files_;
  const std::uint64_t max_file_bytes_;
  const std::size_t depth_;
  std::size_t limit_ = 0;  // files that may be taken up and not handed out: depth + workers

  std::mutex mutex_;
  std::condition_variable changed_;              // a file was loaded or handed out, or the run ends
  std::size_t claimed_ = 0;                      // files taken up by a worker or the caller
  std::size_t handed_out_ = 0;                   // files returned by Next()
  std::map<std::size_t, PrefetchedFile> ready_;  // loaded, by list index
  std::size_t workers_running_ = 0;
  bool stopping_ = false;
  std::vector<std::thread> workers_;
};

}  // namespace seston
