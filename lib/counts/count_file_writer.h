// CountFileWriter: the count files, append-only CSV in CountsOptions::output_dir.
//
// Files (UTC days of event time, "YYYY-MM-DD"):
//   bins_<day>.csv     one row per time bin, written when the bin closes (CountBook's
//                      TakeClosedBins) or at flush; the day is the bin start's.
//   samples_<day>.csv  one row per sample, written when the sample is added; the day is
//                      first_seconds'.
// Each file starts with one header row. Every number's unit is in its column name:
//   bins:    bin_start_utc,bin_end_utc,volume_ml,total_count,unclassified_count,
//            unclassified_per_ml,rejected_count,c<ID>_count,c<ID>_per_ml,...
//   samples: sample_id,source,first_utc,last_utc,volume_ml,total_count,
//            unclassified_count,unclassified_per_ml,rejected_count,c<ID>_count,c<ID>_per_ml,...
// Times are ISO 8601 UTC (bin times with milliseconds only when bin_seconds is not a
// whole number; sample times always with milliseconds). total_count is accepted
// particles (classified + unclassified); rejected rows are apart and in no
// concentration. *_per_ml = count / volume_ml, empty when volume_ml is 0. Numbers are
// written in the shortest form that reads back to the same double. sample_id and source
// are quoted as in RFC 4180 when they hold a comma, quote or line break.
//
// Rows of one bin add up. A bin normally has one row. A sample arriving after its bins
// were written (late data, or a bin flushed at shutdown and continued after restart)
// gives another row for the same bin_start_utc holding only the late part; a reader
// sums counts and volume_ml over rows of the same bin and divides.
//
// Cluster columns. Clusters are born and retire, so the columns are chosen per file:
// a new file lists the living clusters (SetClusters) and every cluster in the rows
// going into it, ascending by id; a cluster with no particles in a row reads 0. When a
// row names a cluster that its day's file has no column for, the writer starts the next
// part of that day, bins_<day>.part2.csv, .part3.csv, ... with a wider header (the old
// columns, the living clusters and the new ones); old rows are never rewritten. A reader
// takes all parts of a day in part order. Labels are not in the files (they change).
//
// Durability. A write appends whole lines to each file with one append call followed by
// fsync (and an fsync of the directory after a file is created), so a reader never sees
// half a row. A call either commits all its rows or none: after a failure the files it
// touched are cut back to their size before the call (at the next write, or by
// RestoreTo), so the same rows may simply be written again.
//
// Exactly once with checkpoints. Offsets() gives the committed size of every file the
// writer is using, plus the size of its journal, count_files.journal, in which the
// writer records (and fsyncs) every file it creates ("created <file>") and the size of
// every existing file before it first appends to it ("opened <file> <bytes>"). Store
// Offsets() in the checkpoint with the counts. After a restart, RestoreTo(offsets)
// brings the directory back to that instant: files created after it are deleted, files
// that grew are truncated to their size then, the journal is cut back. The pipeline then
// re-writes those rows from the re-read input. Files seston did not write, and files
// unknown to the journal after the checkpoint, are never touched. Call RestoreTo only
// with offsets from a checkpoint that was actually loaded: with no checkpoint at all,
// write one (with these Offsets) before the first count is written, so that a crash
// before the first regular checkpoint is rolled back too.
//
// Thread safety: owned by one thread (the pipeline's).
#pragma once

#include <cstdint>
#include <filesystem>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "base/file_system.h"
#include "base/status.h"
#include "counts/count_types.h"
#include "counts/counts_options.h"

namespace seston {

// File name in output_dir -> committed size in bytes; includes the journal.
struct CountFileOffsets {
  std::map<std::string, std::uint64_t> bytes_by_file;

  nlohmann::json ToJson() const;  // {"<file>": bytes, ...}
  static Result<CountFileOffsets> FromJson(const nlohmann::json& state);
  bool operator==(const CountFileOffsets&) const = default;
};

class CountFileWriter {
 public:
  static constexpr std::string_view kJournalName = "count_files.journal";

  // Creates output_dir if needed and reads the journal (cutting a torn last record, which
  // no file action followed). Fails on bad options (bin_seconds > 0, open_count_files >= 2)
  // or when the directory cannot be made or read.
  static Result<CountFileWriter> Create(FileSystem& fs, const CountsOptions& options);

  CountFileWriter(CountFileWriter&&) = default;
  CountFileWriter& operator=(CountFileWriter&&) = default;

  // The ids of the clusters alive now (>= 1), for the columns of the next new files.
  void SetClusters(std::vector<std::uint32_t> living_cluster_ids);

  // One row in samples_<day of first_seconds>.csv.
  Status WriteSample(const SampleTally& sample);
  // One row per bin in bins_<day of start>.csv; one append and fsync per file touched.
  Status WriteBins(const std::vector<BinCounts>& bins);

  CountFileOffsets Offsets() const;
  // See the header comment. Also forgets which files it was using, so Offsets() lists only
  // the journal until the next write (any file touched later is journaled first, so this
  // loses nothing). Fails (kCorruption)
  // when the journal is shorter than recorded or holds a line it cannot read, and
  // (kInvalidArgument) when offsets name something other than a count file.
  Status RestoreTo(const CountFileOffsets& offsets);

 private:
  enum class Kind { kBins, kSamples };
  // A row before its cluster columns are known.
  struct Row {
    std::string day;
    std::string leading;  // the fixed columns, without a trailing comma
    double volume_ml = 0;
    std::map<std::uint32_t, std::uint64_t> clusters;  // ids >= 1 with count > 0
  };
  // The latest part file of one kind and day, as this writer knows it.
  struct Series {
    std::string name;
    int part = 1;
    std::vector<std::uint32_t> clusters;  // cluster columns of its header, ascending
    std::uint64_t bytes = 0;              // committed size; 0: the header is still to write
    bool needs_cut = false;               // may be longer than `bytes` after a failed write
    bool needs_directory_sync = false;    // created; its directory entry is not yet durable
    std::uint64_t last_use = 0;
  };

  CountFileWriter(FileSystem& fs, const CountsOptions& options)
      : fs_(&fs), options_(options), directory_(options.output_dir) {}

  Status WriteRows(Kind kind, const std::vector<Row>& rows);
  // The series of (kind, day); looked up on disk when not known (the latest part whose
  // header is ours and which ends with a whole line is continued, else a new part starts).
  Result<Series*> SeriesFor(Kind kind, const std::string& day);
  Status StartPart(Kind kind, const std::string& day, int part, Series& series);
  Status AppendToSeries(Series& series, std::string_view text);
  Status AppendToJournal(std::string_view line);
  void ForgetLeastRecentlyUsed();
  std::string FileName(Kind kind, const std::string& day, int part) const;

  FileSystem* fs_;
  CountsOptions options_;
  std::filesystem::path directory_;
  std::vector<std::uint32_t> living_;     // ascending
  std::map<std::string, Series> series_;  // by "<kind>_<day>"
  std::uint64_t use_counter_ = 0;
  std::uint64_t journal_bytes_ = 0;  // committed journal size
  bool journal_needs_cut_ = false;
  bool journal_exists_ = false;
};

}  // namespace seston
