#include "pipeline/replay.h"

#include <algorithm>
#include <cinttypes>
#include <cmath>
#include <functional>
#include <set>

#include "pipeline/assignment_csv_writer.h"
#include "pipeline/file_prefetcher.h"
#include "pipeline/pipeline.h"
#include "pipeline/progress_meter.h"

namespace seston {
namespace {

bool HasSuffix(const std::string& name, const std::string& suffix) {
  return name.size() >= suffix.size() &&
         name.compare(name.size() - suffix.size(), suffix.size(), suffix) == 0;
}

Status CollectDirectory(FileSystem& fs, const std::filesystem::path& directory,
                        const std::string& suffix, int depth,
                        std::vector<std::filesystem::path>* out) {
  // Archives nest by year/month/day at most; the bound keeps a link loop harmless.
  if (depth > 16) return Status::OutOfRange(directory.string() + ": directories nest too deep");
  SESTON_ASSIGN_OR_RETURN(auto entries, fs.ListDirectory(directory));
  for (const auto& entry : entries) {
    if (entry.name.empty() || entry.name[0] == '.') continue;
    if (entry.info.is_directory) {
      SESTON_RETURN_IF_ERROR(CollectDirectory(fs, directory / entry.name, suffix, depth + 1, out));
    } else if (entry.info.is_regular && HasSuffix(entry.name, suffix)) {
      out->push_back(directory / entry.name);
    }
  }
  return Status::Ok();
}

}  // namespace

Result<std::vector<std::filesystem::path>> ListReplayFiles(
    FileSystem& fs, const std::vector<std::filesystem::path>& paths, const std::string& suffix) {
  std::vector<std::filesystem::path> files;
  for (const auto& path : paths) {
    auto info = fs.Stat(path);
    if (!info.ok()) return info.status();
    if (info->is_directory) {
      SESTON_RETURN_IF_ERROR(CollectDirectory(fs, path, suffix, 0, &files));
    } else {
      files.push_back(path);  // named explicitly: taken whatever its suffix
    }
  }
  std::sort(files.begin(), files.end(), [](const auto& a, const auto& b) {
    auto name_a = a.filename().string(), name_b = b.filename().string();
    return name_a != name_b ? name_a < name_b : a.string() < b.string();
  });
  files.erase(std::unique(files.begin(), files.end()), files.end());
  return files;
}

Result<nlohmann::json> RunReplay(const Config& config, const ReplayRequest& request, FileSystem& fs,
                                 const Clock& clock, std::FILE* progress) {
  SESTON_ASSIGN_OR_RETURN(auto files, ListReplayFiles(fs, request.paths, config.input.file_suffix));
  if (files.empty()) {
    return Status::NotFound("no input files ending in " + config.input.file_suffix +
                            " under the given paths");
  }
  SESTON_ASSIGN_OR_RETURN(auto pipeline, Pipeline::Create(config, fs));
  std::unique_ptr<AssignmentCsvWriter> assignments;
  if (request.assignments_csv) {
    SESTON_ASSIGN_OR_RETURN(assignments, AssignmentCsvWriter::Create(*request.assignments_csv));
  }

  std::uint64_t total_bytes = 0;
  for (const auto& file : files) {
    if (auto info = fs.Stat(file); info.ok()) total_bytes += info->size_bytes;
  }
  ProgressMeter meter(progress, clock, files.size(), total_bytes,
                      request.quiet || progress == nullptr);
  SESTON_ASSIGN_OR_RETURN(auto prefetcher, FilePrefetcher::Create(fs, pipeline->csv_reader(), files,
                                                                  config.input.max_file_bytes,
                                                                  request.read_ahead_files,
                                                                  request.read_workers,
                                                                  &pipeline->features()));
  nlohmann::json skipped = nlohmann::json::array();
  auto skip = [&](const PrefetchedFile& file, const Status& status) {
    skipped.push_back({{"file", file.path.string()}, {"reason", status.message()}});
    meter.FileSkipped(file.bytes);
  };
  while (auto file = prefetcher->Next()) {
    if (file->failure == PrefetchedFile::Failure::kRead) {
      skip(*file, file->status);
      continue;
    }
    auto outcome = file->failure == PrefetchedFile::Failure::kParse
                       ? Result<FileOutcome>(file->status)
                       : pipeline->ProcessParsed(file->path.string(), std::move(file->parsed),
                                                 std::move(*file->transformed), assignments.get());
    if (!outcome.ok()) {
      if (outcome.status().code() != StatusCode::kInvalidArgument) return outcome.status();
      skip(*file, outcome.status());
      continue;
    }
    SESTON_RETURN_IF_ERROR(pipeline->WriteCountFiles(/*all=*/false));
    meter.FileDone(file->bytes, outcome->data_rows);
  }
  SESTON_RETURN_IF_ERROR(pipeline->FinishWarmup(assignments.get()));
  SESTON_RETURN_IF_ERROR(pipeline->WriteCountFiles(/*all=*/true));
  meter.Finish();
  if (assignments) SESTON_RETURN_IF_ERROR(assignments->Close());

  nlohmann::json summary = pipeline->SummaryJson();
  summary["files_skipped"] = skipped;
  summary["files_total"] = files.size();
  if (request.summary_json) {
    SESTON_RETURN_IF_ERROR(WriteFileAtomically(fs, *request.summary_json, summary.dump(2) + "\n"));
  }
  return summary;
}

std::string FormatSummaryTable(const nlohmann::json& summary) {
  const auto& particles = summary["particles"];
  auto accepted = particles["accepted"].get<std::uint64_t>();
  std::string out;
  char line[256];
  std::snprintf(line, sizeof line, "%6s  %-28s %12s %8s %12s\n", "id", "group", "particles",
                "share %", "per mL");
  out += line;
  for (const auto& cluster : summary["clusters"]) {
    if (cluster.value("retired", false)) continue;
    auto count = cluster["count"].get<std::uint64_t>();
    double share =
        accepted > 0 ? 100.0 * static_cast<double>(count) / static_cast<double>(accepted) : 0.0;
    std::snprintf(
        line, sizeof line, "%6u  %-28.28s %12" PRIu64 " %8.2f %12.3f\n",
        cluster["id"].get<unsigned>(), cluster["label"].get<std::string>().c_str(), count, share,
        cluster["concentration_per_ml"].is_number() ? cluster["concentration_per_ml"].get<double>()
                                                    : 0.0);
    out += line;
  }
  auto unclassified = particles["unclassified"].get<std::uint64_t>();
  std::snprintf(
      line, sizeof line, "%6s  %-28s %12" PRIu64 " %8.2f\n", "0", "unclassified", unclassified,
      accepted > 0 ? 100.0 * static_cast<double>(unclassified) / static_cast<double>(accepted)
                   : 0.0);
  out += line;
  std::snprintf(line, sizeof line, "%6s  %-28s %12" PRIu64 "\n", "-", "rejected rows",
                particles["rejected"].get<std::uint64_t>());
  out += line;
  std::snprintf(
      line, sizeof line, "%u samples, %.1f mL analysed, %s to %s\n",
      summary["samples"].get<unsigned>(), summary["volume_ml"].get<double>(),
      summary["first_time"].is_string() ? summary["first_time"].get<std::string>().c_str() : "-",
      summary["last_time"].is_string() ? summary["last_time"].get<std::string>().c_str() : "-");
  out += line;
  return out;
}

}  // namespace seston
