// Replay: the same pipeline as the live daemon, run over archived files as fast as the
// machine allows, with time taken from the records, so its output is deterministic.
//
// Input order: every path is a file or a directory (searched recursively for files
// ending in input.file_suffix); files are processed in order of their name, then of
// their full path — the instrument names files by acquisition time, so name order is
// time order. A file that cannot be used (unreadable, unusable header, too many bad rows)
// is skipped with its reason in the summary; it is never partly counted.
//
// Outputs: count files under counts.output_dir (as the daemon writes them), optional
// assignments CSV (`file,line,cluster_id,distance`, one row per accepted particle, in
// input order; cluster_id 0 = unclassified; distance in z units), optional summary JSON,
// and a human table of groups and counts.
//
// Speed: the next files are read (whole, one read per file) and parsed on worker
// threads (by default one per core but one, at least one) while the pipeline thread
// clusters the current one (ReplayRequest::read_ahead_files, read_workers); files are
// still taken strictly in order, so the outputs are the same byte for byte with or
// without read-ahead and with any number of workers. Memory stays bounded by a few
// files whatever the number of files. tools/reports/performance.md has the measured
// figures.
//
// Thread safety: one call at a time. With read-ahead, `fs` is used from several threads.
#pragma once

#include <cstddef>
#include <cstdio>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "base/clock.h"
#include "base/file_system.h"
#include "base/status.h"
#include "config/config.h"

namespace seston {

struct ReplayRequest {
  std::vector<std::filesystem::path> paths;              // files or directories
  std::optional<std::filesystem::path> assignments_csv;  // one row per accepted particle
  std::optional<std::filesystem::path> summary_json;
  bool quiet = false;  // no progress line
  // Parsed files read ahead on a second thread while the pipeline clusters (see
  // pipeline/file_prefetcher.h); 0 reads and parses in line. Outputs do not depend on it.
  std::size_t read_ahead_files = 2;
  // Threads reading and parsing ahead (0: one per core but one, at least 1). Outputs do
  // not depend on it.
  std::size_t read_workers = 0;
};

// The files a replay of `paths` processes, in processing order.
Result<std::vector<std::filesystem::path>> ListReplayFiles(
    FileSystem& fs, const std::vector<std::filesystem::path>& paths, const std::string& suffix);

// Runs the replay; returns the summary (also written to summary_json when given).
// `progress` receives the progress line and the closing summary line (may be null).
Result<nlohmann::json> RunReplay(const Config& config, const ReplayRequest& request, FileSystem& fs,
                                 const Clock& clock, std::FILE* progress);

// The human table printed after a replay: one line per group with count, share (%) and
// concentration (particles per mL), then unclassified and rejected.
std::string FormatSummaryTable(const nlohmann::json& summary);

}  // namespace seston
