#include "counts/count_file_writer.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <set>

#include "base/time_format.h"

namespace seston {
namespace {

constexpr std::string_view kBinColumns =
    "bin_start_utc,bin_end_utc,volume_ml,total_count,unclassified_count,unclassified_per_ml,"
    "rejected_count";
constexpr std::string_view kSampleColumns =
    "sample_id,source,first_utc,last_utc,volume_ml,total_count,unclassified_count,"
    "unclassified_per_ml,rejected_count";
constexpr std::uint64_t kMaxCountFileBytes = 1ull << 30;  // read only to find a header
constexpr std::uint64_t kMaxJournalBytes = 64ull << 20;
constexpr int kMaxParts = 10000;

// Shortest text that reads back to the same double; nothing for NaN (an empty field).
void AppendNumber(std::string& out, double value) {
  if (std::isnan(value)) return;
  char buffer[32];
  auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value);
  out.append(buffer, end);
}

void AppendCount(std::string& out, std::uint64_t value) { out += std::to_string(value); }

// RFC 4180 quoting, written out because it is these few lines and no more: the files are
// only ever written here, never parsed by seston.
void AppendText(std::string& out, std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos) {
    out += text;
    return;
  }
  out += '"';
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  out += '"';
}

std::string Header(std::string_view leading, const std::vector<std::uint32_t>& clusters) {
  std::string header(leading);
  for (std::uint32_t id : clusters) {
    std::string c = "c" + std::to_string(id);
    header += "," + c + "_count," + c + "_per_ml";
  }
  header += '\n';
  return header;
}

// The cluster columns of a header line of ours; nullopt when it is not one.
std::optional<std::vector<std::uint32_t>> ParseHeader(std::string_view line,
                                                      std::string_view leading) {
  if (line.substr(0, leading.size()) != leading) return std::nullopt;
  line.remove_prefix(leading.size());
  std::vector<std::uint32_t> clusters;
  while (!line.empty()) {
    if (line.front() != ',' || line.size() < 2 || line[1] != 'c') return std::nullopt;
    line.remove_prefix(2);
    std::uint32_t id = 0;
    auto [end, error] = std::from_chars(line.data(), line.data() + line.size(), id);
    if (error != std::errc()) return std::nullopt;
    std::string rest = "_count,c" + std::to_string(id) + "_per_ml";
    line.remove_prefix(static_cast<std::size_t>(end - line.data()));
    if (line.substr(0, rest.size()) != rest) return std::nullopt;
    line.remove_prefix(rest.size());
    if (!clusters.empty() && id <= clusters.back()) return std::nullopt;
    clusters.push_back(id);
  }
  return clusters;
}

std::vector<std::uint32_t> Union(const std::vector<std::uint32_t>& a,
                                 const std::vector<std::uint32_t>& b) {
  std::vector<std::uint32_t> out;
  std::set_union(a.begin(), a.end(), b.begin(), b.end(), std::back_inserter(out));
  return out;
}

// bins_<day>[.part<n>].csv, samples_<day>[.part<n>].csv or the journal: the only names
// RestoreTo will touch.
bool IsCountFileName(std::string_view name) {
  if (name == CountFileWriter::kJournalName) return true;
  for (std::string_view prefix : {std::string_view("bins_"), std::string_view("samples_")}) {
    if (name.substr(0, prefix.size()) != prefix) continue;
    std::string_view rest = name.substr(prefix.size());
    if (rest.size() < 14 || rest.substr(rest.size() - 4) != ".csv") return false;
    for (std::size_t i = 0; i < 10; ++i) {
      bool dash = i == 4 || i == 7;
      if (dash ? rest[i] != '-' : (rest[i] < '0' || rest[i] > '9')) return false;
    }
    std::string_view part = rest.substr(10, rest.size() - 14);
    if (part.empty()) return true;
    if (part.substr(0, 5) != ".part" || part.size() == 5) return false;
    return part.substr(5).find_first_not_of("0123456789") == std::string_view::npos;
  }
  return false;
}

// Durably cuts `path` to `bytes` (truncate, then fdatasync through a handle).
Status CutFile(FileSystem& fs, const std::filesystem::path& path, std::uint64_t bytes) {
  SESTON_RETURN_IF_ERROR(fs.Truncate(path, bytes));
  SESTON_ASSIGN_OR_RETURN(auto file, fs.OpenForWrite(path, /*append=*/true));
  Status status = file->Sync();
  Status closed = file->Close();
  return status.ok() ? closed : status;
}

}  // namespace

nlohmann::json CountFileOffsets::ToJson() const {
  nlohmann::json out = nlohmann::json::object();
  for (const auto& [name, bytes] : bytes_by_file) out[name] = bytes;
  return out;
}

Result<CountFileOffsets> CountFileOffsets::FromJson(const nlohmann::json& state) {
  if (!state.is_object()) {
    return Status::Corruption("count file offsets must be a JSON object, got " +
                              std::string(state.type_name()));
  }
  CountFileOffsets offsets;
  for (const auto& [name, bytes] : state.items()) {
    if (!bytes.is_number_unsigned()) {
      return Status::Corruption("count file offsets: \"" + name +
                                "\" must map to a byte count, got " + bytes.dump());
    }
    offsets.bytes_by_file[name] = bytes.get<std::uint64_t>();
  }
  return offsets;
}

Result<CountFileWriter> CountFileWriter::Create(FileSystem& fs, const CountsOptions& options) {
  if (!std::isfinite(options.bin_seconds) || !(options.bin_seconds > 0)) {
    return Status::InvalidArgument("counts.bin_seconds must be a finite number of seconds > 0");
  }
  if (options.open_count_files < 2) {
    return Status::InvalidArgument("counts.open_count_files must be at least 2, got " +
                                   std::to_string(options.open_count_files));
  }
  CountFileWriter writer(fs, options);
  SESTON_RETURN_IF_ERROR(fs.CreateDirectories(writer.directory_));
  const std::filesystem::path journal = writer.directory_ / kJournalName;
  Result<std::string> content = fs.ReadFile(journal, kMaxJournalBytes);
  if (content.ok()) {
    writer.journal_exists_ = true;
    // A torn last record was never acted on: a file is touched only after its record is
    // durable.
    std::size_t last_newline = content->rfind('\n');
    std::size_t whole = last_newline == std::string::npos ? 0 : last_newline + 1;
    writer.journal_bytes_ = whole;
    if (whole != content->size()) SESTON_RETURN_IF_ERROR(CutFile(fs, journal, whole));
  } else if (content.status().code() != StatusCode::kNotFound) {
    return content.status();
  }
  return writer;
}

void CountFileWriter::SetClusters(std::vector<std::uint32_t> living_cluster_ids) {
  std::sort(living_cluster_ids.begin(), living_cluster_ids.end());
  living_cluster_ids.erase(std::unique(living_cluster_ids.begin(), living_cluster_ids.end()),
                           living_cluster_ids.end());
  std::erase(living_cluster_ids, 0u);
  living_ = std::move(living_cluster_ids);
}

Status CountFileWriter::WriteSample(const SampleTally& sample) {
  Row row;
  row.day = FormatDay(sample.first_seconds);
  row.volume_ml = sample.volume_ml;
  std::uint64_t total = 0;
  std::uint64_t unclassified = 0;
  for (const auto& [id, count] : sample.by_cluster) {
    total += count;
    if (id == 0) {
      unclassified = count;
    } else if (count > 0) {
      row.clusters[id] = count;
    }
  }
  AppendText(row.leading, sample.sample_id);
  row.leading += ',';
  AppendText(row.leading, sample.source);
  row.leading += ',' + FormatIso8601(sample.first_seconds, /*millis=*/true) + ',' +
                 FormatIso8601(sample.last_seconds, /*millis=*/true) + ',';
  AppendNumber(row.leading, sample.volume_ml);
  row.leading += ',';
  AppendCount(row.leading, total);
  row.leading += ',';
  AppendCount(row.leading, unclassified);
  row.leading += ',';
  AppendNumber(row.leading, PerMl(unclassified, sample.volume_ml));
  row.leading += ',';
  AppendCount(row.leading, sample.rejected);
  return WriteRows(Kind::kSamples, {std::move(row)});
}

Status CountFileWriter::WriteBins(const std::vector<BinCounts>& bins) {
  const bool millis = std::floor(options_.bin_seconds) != options_.bin_seconds;
  std::vector<Row> rows;
  rows.reserve(bins.size());
  for (const BinCounts& bin : bins) {
    Row row;
    row.day = FormatDay(bin.start_seconds);
    row.volume_ml = bin.volume_ml;
    for (const ClusterCount& cluster : bin.clusters) {
      if (cluster.count > 0) row.clusters[cluster.cluster_id] = cluster.count;
    }
    row.leading = FormatIso8601(bin.start_seconds, millis) + ',' +
                  FormatIso8601(bin.start_seconds + options_.bin_seconds, millis) + ',';
    AppendNumber(row.leading, bin.volume_ml);
    row.leading += ',';
    AppendCount(row.leading, bin.accepted());
    row.leading += ',';
    AppendCount(row.leading, bin.unclassified);
    row.leading += ',';
    AppendNumber(row.leading, PerMl(bin.unclassified, bin.volume_ml));
    row.leading += ',';
    AppendCount(row.leading, bin.rejected);
    rows.push_back(std::move(row));
  }
  return WriteRows(Kind::kBins, rows);
}

Status CountFileWriter::WriteRows(Kind kind, const std::vector<Row>& rows) {
  std::map<std::string, std::vector<const Row*>> by_day;
  for (const Row& row : rows) by_day[row.day].push_back(&row);

  // Committed sizes before this call, to go back to if any file fails.
  std::vector<std::pair<Series*, std::uint64_t>> touched;
  Status status;
  for (const auto& [day, day_rows] : by_day) {
    Result<Series*> found = SeriesFor(kind, day);
    if (!found.ok()) {
      status = found.status();
      break;
    }
    Series* series = *found;
    std::vector<std::uint32_t> needed;
    for (const Row* row : day_rows) {
      for (const auto& [id, count] : row->clusters) needed.push_back(id);
    }
    std::sort(needed.begin(), needed.end());
    needed.erase(std::unique(needed.begin(), needed.end()), needed.end());
    if (series->bytes == 0) {
      series->clusters = Union(living_, needed);
    } else if (!std::includes(series->clusters.begin(), series->clusters.end(), needed.begin(),
                              needed.end())) {
      std::vector<std::uint32_t> columns = Union(Union(series->clusters, living_), needed);
      status = StartPart(kind, day, series->part + 1, *series);
      if (!status.ok()) break;
      series->clusters = std::move(columns);
    }
    touched.emplace_back(series, series->bytes);

    std::string text;
    if (series->bytes == 0) {
      text = Header(kind == Kind::kBins ? kBinColumns : kSampleColumns, series->clusters);
    }
    for (const Row* row : day_rows) {
      text += row->leading;
      for (std::uint32_t id : series->clusters) {
        auto it = row->clusters.find(id);
        std::uint64_t count = it == row->clusters.end() ? 0 : it->second;
        text += ',';
        AppendCount(text, count);
        text += ',';
        AppendNumber(text, PerMl(count, row->volume_ml));
      }
      text += '\n';
    }
    status = AppendToSeries(*series, text);
    if (!status.ok()) break;
  }
  if (!status.ok()) {
    for (auto& [series, bytes] : touched) {
      series->bytes = bytes;
      series->needs_cut = true;
    }
  }
  ForgetLeastRecentlyUsed();
  return status;
}

std::string CountFileWriter::FileName(Kind kind, const std::string& day, int part) const {
  std::string name = (kind == Kind::kBins ? "bins_" : "samples_") + day;
  if (part > 1) name += ".part" + std::to_string(part);
  return name + ".csv";
}

Result<CountFileWriter::Series*> CountFileWriter::SeriesFor(Kind kind, const std::string& day) {
  const std::string key = FileName(kind, day, 1);
  auto found = series_.find(key);
  if (found != series_.end()) {
    found->second.last_use = ++use_counter_;
    return &found->second;
  }
  Series series;
  int part = 1;
  while (fs_->Exists(directory_ / FileName(kind, day, part + 1))) {
    if (++part > kMaxParts) {
      return Status::ResourceExhausted(directory_.string() + ": more than " +
                                       std::to_string(kMaxParts) + " parts of " + key);
    }
  }
  const std::string latest = FileName(kind, day, part);
  Result<std::string> content = fs_->ReadFile(directory_ / latest, kMaxCountFileBytes);
  if (!content.ok() && content.status().code() != StatusCode::kNotFound) return content.status();
  bool continue_latest = false;
  if (content.ok()) {
    std::size_t line_end = content->find('\n');
    std::optional<std::vector<std::uint32_t>> columns;
    if (line_end != std::string::npos) {
      columns = ParseHeader(std::string_view(*content).substr(0, line_end),
                            kind == Kind::kBins ? kBinColumns : kSampleColumns);
    }
    if (content->empty() || (columns && content->back() == '\n')) {
      continue_latest = true;
      series.name = latest;
      series.part = part;
      series.bytes = content->size();
      if (columns) series.clusters = std::move(*columns);
      SESTON_RETURN_IF_ERROR(
          AppendToJournal("opened " + latest + " " + std::to_string(series.bytes) + "\n"));
    }
  }
  if (!continue_latest) {
    // Missing (part 1 of a new day) or not ours to continue: start a part of our own.
    SESTON_RETURN_IF_ERROR(StartPart(kind, day, content.ok() ? part + 1 : part, series));
  }
  series.last_use = ++use_counter_;
  return &series_.insert_or_assign(key, std::move(series)).first->second;
}

Status CountFileWriter::StartPart(Kind kind, const std::string& day, int part, Series& series) {
  std::string name = FileName(kind, day, part);
  SESTON_RETURN_IF_ERROR(AppendToJournal("created " + name + "\n"));
  series.name = std::move(name);
  series.part = part;
  series.clusters.clear();
  series.bytes = 0;
  series.needs_cut = false;
  series.needs_directory_sync = true;
  return Status::Ok();
}

Status CountFileWriter::AppendToSeries(Series& series, std::string_view text) {
  const std::filesystem::path path = directory_ / series.name;
  if (series.bytes > 0 && series.needs_cut) {
    SESTON_RETURN_IF_ERROR(fs_->Truncate(path, series.bytes));
  }
  // An empty series gets a fresh file: whatever a failed attempt left there is cut away.
  SESTON_ASSIGN_OR_RETURN(auto file, fs_->OpenForWrite(path, /*append=*/series.bytes > 0));
  Status status = file->Append(text);
  if (status.ok()) status = file->Sync();
  Status closed = file->Close();
  if (status.ok()) status = closed;
  if (status.ok() && series.needs_directory_sync) status = fs_->SyncDirectory(directory_);
  if (!status.ok()) return status.WithContext("count file " + series.name);
  series.needs_directory_sync = false;
  series.needs_cut = false;
  series.bytes += text.size();
  return Status::Ok();
}

Status CountFileWriter::AppendToJournal(std::string_view line) {
  const std::filesystem::path path = directory_ / kJournalName;
  if (journal_needs_cut_ && journal_exists_) {
    SESTON_RETURN_IF_ERROR(fs_->Truncate(path, journal_bytes_));
  }
  SESTON_ASSIGN_OR_RETURN(auto file, fs_->OpenForWrite(path, /*append=*/true));
  journal_needs_cut_ = true;  // until this append is known to be whole and durable
  journal_exists_ = true;
  Status status = file->Append(line);
  if (status.ok()) status = file->Sync();
  Status closed = file->Close();
  if (status.ok()) status = closed;
  if (status.ok() && journal_bytes_ == 0) status = fs_->SyncDirectory(directory_);
  if (!status.ok()) return status.WithContext(std::string(kJournalName));
  journal_needs_cut_ = false;
  journal_bytes_ += line.size();
  return Status::Ok();
}

void CountFileWriter::ForgetLeastRecentlyUsed() {
  while (series_.size() > options_.open_count_files) {
    auto oldest = series_.end();
    for (auto it = series_.begin(); it != series_.end(); ++it) {
      // A series with a failed write stays until it is repaired.
      if (it->second.needs_cut || it->second.needs_directory_sync) continue;
      if (oldest == series_.end() || it->second.last_use < oldest->second.last_use) oldest = it;
    }
    if (oldest == series_.end()) return;
    series_.erase(oldest);
  }
}

CountFileOffsets CountFileWriter::Offsets() const {
  CountFileOffsets offsets;
  offsets.bytes_by_file[std::string(kJournalName)] = journal_bytes_;
  for (const auto& [key, series] : series_) offsets.bytes_by_file[series.name] = series.bytes;
  return offsets;
}

Status CountFileWriter::RestoreTo(const CountFileOffsets& offsets) {
  for (const auto& [name, bytes] : offsets.bytes_by_file) {
    if (!IsCountFileName(name)) {
      return Status::InvalidArgument("count file offsets name \"" + name +
                                     "\", which is not a count file of seston (bins_<day>.csv, "
                                     "samples_<day>.csv, their .part<n> or " +
                                     std::string(kJournalName) + ")");
    }
  }
  const std::filesystem::path journal = directory_ / kJournalName;
  const std::string journal_name(kJournalName);
  auto recorded = offsets.bytes_by_file.find(journal_name);
  const std::uint64_t journal_recorded =
      recorded == offsets.bytes_by_file.end() ? 0 : recorded->second;
  std::string content;
  Result<std::string> read = fs_->ReadFile(journal, kMaxJournalBytes);
  if (read.ok()) {
    content = std::move(*read);
  } else if (read.status().code() != StatusCode::kNotFound) {
    return read.status();
  }
  if (content.size() < journal_recorded) {
    return Status::Corruption(journal.string() + " is " + std::to_string(content.size()) +
                              " bytes, shorter than the " + std::to_string(journal_recorded) +
                              " bytes the checkpoint recorded; the count directory was changed "
                              "outside seston");
  }

  // What happened after the checkpoint, from the journal's tail.
  std::set<std::string> remove;
  std::map<std::string, std::uint64_t> cut_to;
  std::size_t position = journal_recorded;
  int line_number = 0;
  while (position < content.size()) {
    std::size_t end = content.find('\n', position);
    if (end == std::string::npos) break;  // torn last record: never acted on
    std::string_view line(content.data() + position, end - position);
    position = end + 1;
    ++line_number;
    std::string name;
    std::optional<std::uint64_t> bytes;
    if (line.substr(0, 8) == "created ") {
      name = line.substr(8);
    } else if (line.substr(0, 7) == "opened " && line.rfind(' ') > 7) {
      std::size_t space = line.rfind(' ');
      name = line.substr(7, space - 7);
      std::uint64_t value = 0;
      auto [ptr, error] =
          std::from_chars(line.data() + space + 1, line.data() + line.size(), value);
      if (error == std::errc() && ptr == line.data() + line.size()) bytes = value;
    }
    if (!IsCountFileName(name) || name == journal_name ||
        (line.substr(0, 7) == "opened " && !bytes)) {
      return Status::Corruption(journal.string() + ": record " + std::to_string(line_number) +
                                " after the checkpoint reads \"" + std::string(line) +
                                "\", expected \"created <file>\" or \"opened <file> <bytes>\"");
    }
    if (offsets.bytes_by_file.contains(name)) continue;  // the checkpoint's size wins
    if (!bytes) {
      remove.insert(name);
    } else if (!remove.contains(name)) {
      cut_to.try_emplace(name, *bytes);
    }
  }
  for (const auto& [name, bytes] : offsets.bytes_by_file) {
    if (name != journal_name) cut_to[name] = bytes;
  }

  for (const std::string& name : remove) {
    cut_to.erase(name);
    Status removed = fs_->Remove(directory_ / name);
    if (!removed.ok() && removed.code() != StatusCode::kNotFound) return removed;
  }
  for (const auto& [name, bytes] : cut_to) {
    Result<FileInfo> info = fs_->Stat(directory_ / name);
    if (!info.ok() && info.status().code() == StatusCode::kNotFound) continue;  // moved away
    if (!info.ok()) return info.status();
    // A file now shorter than recorded was cut by someone else; nothing of ours to undo.
    if (info->size_bytes > bytes) SESTON_RETURN_IF_ERROR(CutFile(*fs_, directory_ / name, bytes));
  }
  if (!remove.empty()) SESTON_RETURN_IF_ERROR(fs_->SyncDirectory(directory_));
  // The journal last, so that a crash in between repeats the same repair.
  if (content.size() > journal_recorded) {
    SESTON_RETURN_IF_ERROR(CutFile(*fs_, journal, journal_recorded));
  }
  series_.clear();
  journal_bytes_ = journal_recorded;
  journal_needs_cut_ = false;
  journal_exists_ = read.ok();
  return Status::Ok();
}

}  // namespace seston
