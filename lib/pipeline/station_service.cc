#include "pipeline/station_service.h"

#include <spdlog/spdlog.h>

#include <algorithm>
#include <cstdio>
#include <variant>

#include "features/feature_transform.h"
#include "ingest/drop_file_name.h"

namespace seston {
namespace {

constexpr int kServiceStateFormat = 1;
// Every socket particle is filed under this source, whatever its connection, so that a
// sample can be continued on a new connection (see the header).
constexpr const char* kSocketSource = "socket";
// Samples of the socket path when input.sample_column is empty.
constexpr const char* kUnnamedSocketSample = "socket";
constexpr double kMaxBackoffSeconds = 60;
constexpr double kPublishEverySeconds = 0.2;
constexpr std::size_t kRejectionsLoggedPerFile = 5;

// File names are bytes, not text; the checkpoint (JSON, UTF-8 only) keeps them in hex.
std::string ToHex(std::string_view bytes) {
  static constexpr char kDigits[] = "0123456789abcdef";
  std::string hex;
  hex.reserve(bytes.size() * 2);
  for (unsigned char byte : bytes) {
    hex.push_back(kDigits[byte >> 4]);
    hex.push_back(kDigits[byte & 0xf]);
  }
  return hex;
}

Result<std::string> FromHex(std::string_view hex) {
  auto digit = [](char c) -> int {
    if (c >= '0' && c <= '9') return c - '0';
    if (c >= 'a' && c <= 'f') return c - 'a' + 10;
    return -1;
  };
  if (hex.size() % 2 != 0)
    return Status::Corruption("file name \"" + std::string(hex) + "\" is not hex");
  std::string bytes;
  for (std::size_t i = 0; i < hex.size(); i += 2) {
    int high = digit(hex[i]);
    int low = digit(hex[i + 1]);
    if (high < 0 || low < 0) {
      return Status::Corruption("file name \"" + std::string(hex) + "\" is not hex");
    }
    bytes.push_back(static_cast<char>(high * 16 + low));
  }
  return bytes;
}

void Send(const std::weak_ptr<ReplyChannel>& reply_to, Reply reply) {
  if (auto channel = reply_to.lock()) channel->Send(std::move(reply));
}

// True when something other than white space follows the first line.
bool HasDataAfterHeader(std::string_view bytes) {
  const std::size_t end_of_header = bytes.find('\n');
  if (end_of_header == std::string_view::npos) return false;
  const std::string_view rest = bytes.substr(end_of_header + 1);
  return std::any_of(rest.begin(), rest.end(),
                     [](char c) { return c != ' ' && c != '\t' && c != '\r' && c != '\n'; });
}

double Milliseconds(double from_seconds, double to_seconds) {
  return (to_seconds - from_seconds) * 1000.0;
}

}  // namespace

nlohmann::json StationService::ServiceState::ToJson() const {
  nlohmann::json files = nlohmann::json::array();
  for (const CommittedFile& file : committed_files) {
    if (file.moved) continue;  // dropped lazily: this checkpoint no longer needs it
    files.push_back({{"name_hex", ToHex(file.name)},
                     {"name", EscapeNameForText(file.name)},
                     {"size_bytes", file.size_bytes},
                     {"event_seconds", file.event_seconds}});
  }
  nlohmann::json open = nlohmann::json::array();
  for (const auto& [sample, held] : open_samples) {
    open.push_back({sample, held.records, held.particles});
  }
  nlohmann::json commits = nlohmann::json::array();
  for (const auto& [sample, particles] : recent_commits) commits.push_back({sample, particles});
  return {{"format", kServiceStateFormat}, {"committed_files", files},
          {"files_done", files_done},      {"files_quarantined", files_quarantined},
          {"socket_open_samples", open},   {"socket_recent_commits", commits}};
}

Result<StationService::ServiceState> StationService::ServiceState::FromJson(
    const nlohmann::json& json) {
  ServiceState state;
  try {
    if (json.at("format").get<int>() != kServiceStateFormat) {
      return Status::Corruption("service state format " + json.at("format").dump() +
                                " is not the supported " + std::to_string(kServiceStateFormat));
    }
    for (const auto& entry : json.at("committed_files")) {
      CommittedFile file;
      SESTON_ASSIGN_OR_RETURN(file.name, FromHex(entry.at("name_hex").get<std::string>()));
      file.size_bytes = entry.at("size_bytes").get<std::uint64_t>();
      file.event_seconds = entry.at("event_seconds").get<double>();
      state.committed_files.push_back(std::move(file));
    }
    state.files_done = json.at("files_done").get<std::uint64_t>();
    state.files_quarantined = json.at("files_quarantined").get<std::uint64_t>();
    for (const auto& entry : json.at("socket_open_samples")) {
      state.open_samples[entry.at(0).get<std::string>()] = {entry.at(1).get<std::uint64_t>(),
                                                            entry.at(2).get<std::uint64_t>()};
    }
    for (const auto& entry : json.at("socket_recent_commits")) {
      state.recent_commits.emplace_back(entry.at(0).get<std::string>(),
                                        entry.at(1).get<std::uint64_t>());
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("service state is malformed: ") + error.what());
  }
  return state;
}

const std::pair<std::string, std::uint64_t>* StationService::ServiceState::FindCommit(
    const std::string& sample) const {
  for (auto it = recent_commits.rbegin(); it != recent_commits.rend(); ++it) {
    if (it->first == sample) return &*it;
  }
  return nullptr;
}

Result<std::unique_ptr<StationService>> StationService::Create(const Config& config, FileSystem& fs,
                                                               const Clock& clock,
                                                               std::string version) {
  SESTON_RETURN_IF_ERROR(fs.CreateDirectories(config.input.drop_dir));
  SESTON_ASSIGN_OR_RETURN(auto store, CheckpointStore::Create(fs, config.state));
  SESTON_ASSIGN_OR_RETURN(auto mover, FileMover::Create(fs, clock, config.input));
  std::vector<std::string> columns;
  for (const auto& feature : config.features.features) columns.push_back(feature.column);
  SESTON_ASSIGN_OR_RETURN(auto parser, NdjsonParser::Create(config.input, columns));
  std::unique_ptr<StationService> service(new StationService(config, fs, clock, std::move(version),
                                                             std::move(store), std::move(mover),
                                                             std::move(parser)));
  SESTON_RETURN_IF_ERROR(service->RestoreDurableState(/*at_start=*/true));
  if (!service->restored_) {
    // No checkpoint yet (or none that loaded): one now, before the first count row, so
    // that a crash before the next one is rolled back too (see count_file_writer.h).
    // A failure here is kept and retried like any other; no work is taken until then.
    (void)service->Checkpoint("first checkpoint of a new state");
  }
  service->Publish();
  return service;
}

StationService::StationService(const Config& config, FileSystem& fs, const Clock& clock,
                               std::string version, CheckpointStore store, FileMover mover,
                               NdjsonParser parser)
    : config_(config),
      fs_(fs),
      clock_(clock),
      version_(std::move(version)),
      store_(std::move(store)),
      mover_(std::move(mover)),
      parser_(std::move(parser)),
      started_wall_(clock.WallSeconds()),
      last_checkpoint_monotonic_(clock.MonotonicSeconds()) {}

Status StationService::RestoreDurableState(bool at_start) {
  SESTON_ASSIGN_OR_RETURN(LoadedCheckpoint loaded, store_.Load());
  SESTON_ASSIGN_OR_RETURN(auto pipeline, Pipeline::Create(config_, fs_));
  ServiceState state;
  if (loaded.state) {
    const nlohmann::json& document = *loaded.state;
    if (!document.is_object() || !document.contains("pipeline") || !document.contains("service")) {
      return Status::Corruption("the checkpoint in " + config_.state.dir +
                                " has no \"pipeline\" and \"service\" parts; it was not written "
                                "by sestond run");
    }
    SESTON_RETURN_IF_ERROR(pipeline->RestoreFromJson(document.at("pipeline")));
    SESTON_ASSIGN_OR_RETURN(state, ServiceState::FromJson(document.at("service")));
    if (loaded.used_fallback) {
      fell_back_ = true;
      std::string problem = "checkpoint.current in " + config_.state.dir + " was refused (" +
                            loaded.problem +
                            "); continued from checkpoint.previous, so work done after it is "
                            "done again";
      if (problem_.empty()) problem_ = problem;
      spdlog::error("ALERT state: {}", problem);
    }
  } else if (!loaded.problem.empty()) {
    fell_back_ = true;
    std::string problem = "both checkpoints in " + config_.state.dir + " were unreadable (" +
                          loaded.problem +
                          "); started a new state (state.start_fresh_if_unreadable)";
    if (problem_.empty()) problem_ = problem;
    spdlog::error("ALERT state: {}", problem);
  }
  restored_ = loaded.state.has_value();
  pipeline_ = std::move(pipeline);
  state_ = std::move(state);
  if (at_start) {
    spdlog::info("state: {} (model {}, {} particles counted, {} files done)",
                 loaded.state ? "restored from the checkpoint" : "new",
                 pipeline_->warming_up() ? "warming up" : "fitted", pipeline_->counters().accepted,
                 state_.files_done);
  }
  for (SocketStep& step : journal_) SESTON_RETURN_IF_ERROR(Apply(step));
  if (!journal_.empty()) dirty_ = true;
  MoveCommittedFiles();
  return Status::Ok();
}

FileDisposition StationService::ProcessReadyFile(const std::string& name) {
  if (!accepting_work()) return FileDisposition::kRetryLater;
  const std::string shown = EscapeNameForText(name);
  for (const CommittedFile& file : state_.committed_files) {
    if (file.name == name && !file.moved) {
      // Counted already (the move failed, or the checkpoint is still to be written).
      MoveCommittedFiles();
      return file.moved ? FileDisposition::kDone : FileDisposition::kCommitted;
    }
  }
  const std::filesystem::path path = std::filesystem::path(config_.input.drop_dir) / name;
  const double start = clock_.MonotonicSeconds();
  auto bytes = fs_.ReadFile(path, config_.input.max_file_bytes);
  if (!bytes.ok()) {
    if (bytes.status().code() == StatusCode::kNotFound) return FileDisposition::kGone;
    if (bytes.status().code() == StatusCode::kResourceExhausted) {
      return Quarantine(name, "the file is larger than input.max_file_bytes (" +
                                  std::to_string(config_.input.max_file_bytes) + " bytes)");
    }
    return Quarantine(name, "the file could not be read: " + bytes.status().message());
  }
  spdlog::debug("file {} taken ({} bytes)", shown, bytes->size());
  if (!HasDataAfterHeader(*bytes)) {
    // The pipeline would take it as a sample without particles; from an instrument it is
    // far more likely a write that stopped after the header.
    return Quarantine(
        name, bytes->empty() ? "the file is empty" : "the file has a header line but no data rows");
  }

  const std::uint64_t rows_before = pipeline_->counters().rows;
  auto outcome = pipeline_->ProcessFile(shown, *bytes, nullptr);
  if (!outcome.ok()) {
    // ProcessFile judges the whole file before counting anything; an InvalidArgument that
    // came after counting began would be a failure of ours, not of the file.
    if (outcome.status().code() == StatusCode::kInvalidArgument &&
        pipeline_->counters().rows == rows_before) {
      return Quarantine(name, outcome.status().message());
    }
    PipelineFailed(outcome.status(), "counting a file");
    return FileDisposition::kRetryLater;
  }
  for (std::size_t i = 0; i < outcome->rejections.size() && i < kRejectionsLoggedPerFile; ++i) {
    const RowRejection& rejection = outcome->rejections[i];
    spdlog::info("file {} line {}: row rejected, {}{}{}", shown, rejection.line,
                 RejectReasonName(rejection.reason), rejection.detail.empty() ? "" : ": ",
                 EscapeNameForText(rejection.detail));
  }
  if (outcome->rejections.size() > kRejectionsLoggedPerFile) {
    spdlog::info("file {}: {} more rows rejected", shown,
                 outcome->rejections.size() - kRejectionsLoggedPerFile);
  }
  state_.committed_files.push_back(
      {name, bytes->size(), outcome->first_seconds.value_or(clock_.WallSeconds()), false});
  dirty_ = true;
  Status checkpoint = Checkpoint("file committed");
  if (!checkpoint.ok()) {
    spdlog::warn(
        "file {}: counted {} particles, {} rows rejected; not yet committed, it stays in "
        "the drop directory",
        shown, outcome->accepted, outcome->rejected);
    return FileDisposition::kCommitted;
  }
  spdlog::info("file {}: counted {} particles, {} rows rejected, in {:.0f} ms; committed{}", shown,
               outcome->accepted, outcome->rejected, Milliseconds(start, clock_.MonotonicSeconds()),
               pipeline_->warming_up() ? " (particles held for the warm-up fit)" : "");
  for (const CommittedFile& file : state_.committed_files) {
    if (file.name == name) return file.moved ? FileDisposition::kDone : FileDisposition::kCommitted;
  }
  return FileDisposition::kDone;  // moved and already dropped from the list
}

FileDisposition StationService::Quarantine(const std::string& name, std::string problem) {
  auto moved = mover_.MoveToQuarantine(name, QuarantineNote{problem, 0, ""});
  if (!moved.ok()) {
    if (moved.status().code() == StatusCode::kNotFound) return FileDisposition::kGone;
    WriteFailed(moved.status(), "moving a file to quarantine");
    return FileDisposition::kRetryLater;
  }
  ++state_.files_quarantined;
  dirty_ = true;
  spdlog::warn("file {} quarantined because {} (now {}, note beside it)", EscapeNameForText(name),
               EscapeNameForText(problem), EscapeNameForText(moved->string()));
  Publish();
  return FileDisposition::kQuarantined;
}

void StationService::MoveCommittedFiles() {
  const std::filesystem::path drop_dir(config_.input.drop_dir);
  for (CommittedFile& file : state_.committed_files) {
    if (file.moved) continue;
    const std::string shown = EscapeNameForText(file.name);
    auto info = fs_.Stat(drop_dir / file.name);
    if (!info.ok() && info.status().code() == StatusCode::kNotFound) {
      // Moved after the checkpoint that recorded it, before a crash or a return to it.
      file.moved = true;
      ++state_.files_done;
      continue;
    }
    if (info.ok() && info->size_bytes != file.size_bytes) {
      spdlog::warn(
          "file {}: the drop directory holds another file of this name ({} bytes, the "
          "committed one had {}); the committed one was moved before, this one is new",
          shown, info->size_bytes, file.size_bytes);
      file.moved = true;
      ++state_.files_done;
      continue;
    }
    auto moved = mover_.MoveToDone(file.name, file.event_seconds);
    if (!moved.ok()) {
      WriteFailed(moved.status(), "moving a committed file to done");
      return;
    }
    file.moved = true;
    ++state_.files_done;
    spdlog::debug("file {} done: {}", shown, EscapeNameForText(moved->string()));
  }
}

bool StationService::InDomain(const NdjsonParticle& particle) const {
  const auto& transforms = pipeline_->features().transforms();
  for (std::size_t d = 0; d < transforms.size() && d < particle.values.size(); ++d) {
    if (!InTransformDomain(transforms[d], particle.values[d])) return false;
  }
  return true;
}

std::uint64_t StationService::RecordsHeld(const std::string& sample,
                                          const SocketStep& pending) const {
  std::uint64_t held = 0;
  if (auto it = state_.open_samples.find(sample); it != state_.open_samples.end()) {
    held += it->second.records;
  }
  if (auto it = pending.added.find(sample); it != pending.added.end()) held += it->second.records;
  return held;
}

void StationService::ProcessLines(std::vector<QueuedLine>& lines, bool more_waiting) {
  if (!deferred_lines_.empty()) {
    // Lines taken before a return to the last checkpoint go first, in order.
    std::vector<QueuedLine> earlier = std::move(deferred_lines_);
    deferred_lines_.clear();
    earlier.insert(earlier.end(), std::make_move_iterator(lines.begin()),
                   std::make_move_iterator(lines.end()));
    lines = std::move(earlier);
  }
  SocketStep pending;
  pending.batch.source = kSocketSource;
  pending.batch.dims = parser_.feature_columns().size();
  std::map<std::string, std::uint32_t> sample_index;  // pending.batch.samples by id
  for (std::size_t i = 0; i < lines.size(); ++i) {
    if (needs_rollback_) {
      deferred_lines_.assign(std::make_move_iterator(lines.begin() + static_cast<long>(i)),
                             std::make_move_iterator(lines.end()));
      break;
    }
    QueuedLine& item = lines[i];
    ParsedLine parsed = parser_.Parse(item.line, item.line_number);
    if (auto* rejection = std::get_if<RowRejection>(&parsed)) {
      pending.rejected.push_back(rejection->reason);
      Send(item.reply_to, Reply::Rejected(item.line_number, RejectReasonName(rejection->reason),
                                          rejection->detail));
      continue;
    }
    if (auto* close = std::get_if<NdjsonSampleClose>(&parsed)) {
      FlushPending(pending);
      sample_index.clear();
      if (needs_rollback_) {
        deferred_lines_.assign(std::make_move_iterator(lines.begin() + static_cast<long>(i)),
                               std::make_move_iterator(lines.end()));
        break;
      }
      owner_.erase(close->sample);
      skip_.erase({item.connection, close->sample});
      SocketStep step;
      step.sample = close->sample;
      step.reply_to = item.reply_to;
      const auto* commit = state_.FindCommit(close->sample);
      if (commit != nullptr && !state_.open_samples.contains(close->sample)) {
        step.kind = SocketStep::Kind::kRepeatCommit;
        step.particles = commit->second;
      } else {
        step.kind = SocketStep::Kind::kClose;
        step.volume_ml = close->volume_ml;
      }
      Status applied = Apply(step);
      journal_.push_back(std::move(step));
      if (!applied.ok()) PipelineFailed(applied, "closing a socket sample");
      continue;
    }
    NdjsonParticle& particle = std::get<NdjsonParticle>(parsed);
    std::string sample = particle.sample.empty() ? kUnnamedSocketSample : particle.sample;
    const bool open = state_.open_samples.contains(sample) || pending.added.contains(sample);
    if (!open && state_.FindCommit(sample) != nullptr) {
      ++records_skipped_;  // a re-sent record of a sample committed already
      continue;
    }
    if (!open && state_.open_samples.size() + pending.added.size() >= kMaxOpenSocketSamples) {
      Send(item.reply_to,
           Reply::Error("line " + std::to_string(item.line_number) + ": " +
                        std::to_string(kMaxOpenSocketSamples) +
                        " socket samples are open; close some with {\"close_sample\":ID,"
                        "\"volume_ml\":V} before starting another; the record was not taken"));
      continue;
    }
    // Records of a sample arriving on a connection other than the one sending it are a
    // re-send from its start: skip what is held already.
    auto [owner, inserted] = owner_.try_emplace(sample, item.connection);
    if (inserted || owner->second != item.connection) {
      owner->second = item.connection;
      if (std::uint64_t held = RecordsHeld(sample, pending); held > 0) {
        skip_[{item.connection, sample}] = held;
      }
    }
    if (auto skip = skip_.find({item.connection, sample}); skip != skip_.end()) {
      if (--skip->second == 0) skip_.erase(skip);
      ++records_skipped_;
      continue;
    }
    SocketSample& added = pending.added[sample];
    ++added.records;
    if (!InDomain(particle)) {
      pending.rejected.push_back(RejectReason::kOutOfDomain);
      Send(item.reply_to,
           Reply::Rejected(item.line_number, RejectReasonName(RejectReason::kOutOfDomain),
                           "a feature is outside its transform's domain"));
      continue;
    }
    ++added.particles;
    ParticleBatch& batch = pending.batch;
    auto [index, is_new] =
        sample_index.try_emplace(sample, static_cast<std::uint32_t>(batch.samples.size()));
    if (is_new) batch.samples.push_back({sample, particle.volume_ml});
    batch.line.push_back(item.line_number);
    batch.time_seconds.push_back(particle.time_seconds);
    batch.sample_index.push_back(index->second);
    batch.values.insert(batch.values.end(), particle.values.begin(), particle.values.end());
  }
  FlushPending(pending);

  if (!needs_rollback_ && !write_failure_) {
    const double now = clock_.MonotonicSeconds();
    if (journal_particles_ >= kMaxJournalParticles) {
      (void)Checkpoint("socket particles since the last checkpoint reached the bound");
    } else if (first_unacked_close_ &&
               (!more_waiting || now - *first_unacked_close_ >= kAckDelaySeconds)) {
      (void)Checkpoint("socket samples closed");
    }
  }
  if (clock_.MonotonicSeconds() - last_publish_monotonic_ >= kPublishEverySeconds) Publish();
}

void StationService::FlushPending(SocketStep& pending) {
  if (pending.rejected.empty() && pending.added.empty()) return;
  SocketStep step = std::move(pending);
  pending = SocketStep{};
  pending.batch.source = step.batch.source;
  pending.batch.dims = step.batch.dims;
  journal_particles_ += step.batch.size();
  Status applied = Apply(step);
  journal_.push_back(std::move(step));
  if (!applied.ok()) PipelineFailed(applied, "counting socket records");
}

Status StationService::Apply(SocketStep& step) {
  dirty_ = true;
  switch (step.kind) {
    case SocketStep::Kind::kRecords:
      for (RejectReason reason : step.rejected) pipeline_->CountRejected(reason);
      if (step.batch.size() > 0)
        SESTON_RETURN_IF_ERROR(pipeline_->ProcessRecords(step.batch, nullptr));
      for (const auto& [sample, added] : step.added) {
        SocketSample& held = state_.open_samples[sample];
        held.records += added.records;
        held.particles += added.particles;
      }
      return Status::Ok();
    case SocketStep::Kind::kClose: {
      SESTON_RETURN_IF_ERROR(pipeline_->CloseSample(kSocketSource, step.sample, step.volume_ml));
      auto it = state_.open_samples.find(step.sample);
      step.particles = it == state_.open_samples.end() ? 0 : it->second.particles;
      if (it != state_.open_samples.end()) state_.open_samples.erase(it);
      state_.recent_commits.emplace_back(step.sample, step.particles);
      while (state_.recent_commits.size() > kRememberedCommits) state_.recent_commits.pop_front();
      break;
    }
    case SocketStep::Kind::kRepeatCommit:
      break;
  }
  if (!first_unacked_close_) first_unacked_close_ = clock_.MonotonicSeconds();
  return Status::Ok();
}

nlohmann::json StationService::BuildCheckpoint() const {
  return {{"pipeline", pipeline_->ToJson()}, {"service", state_.ToJson()}};
}

Status StationService::Checkpoint(const char* why) {
  if (needs_rollback_)
    return Status::Unavailable("the service is returning to its last checkpoint");
  const double start = clock_.MonotonicSeconds();
  Status rows = pipeline_->WriteCountFiles(false);
  if (!rows.ok()) {
    PipelineFailed(rows, "writing count files");
    return rows;
  }
  Status written = store_.Write(BuildCheckpoint());
  if (!written.ok()) {
    ++checkpoint_failures_;
    WriteFailed(written, "writing the checkpoint");
    return written;
  }
  ++checkpoints_written_;
  dirty_ = false;
  last_checkpoint_monotonic_ = clock_.MonotonicSeconds();
  last_checkpoint_wall_ = clock_.WallSeconds();
  std::erase_if(state_.committed_files, [](const CommittedFile& file) { return file.moved; });
  std::vector<SocketStep> answered = std::move(journal_);
  journal_.clear();
  journal_particles_ = 0;
  first_unacked_close_.reset();
  for (auto& file : pipeline_->TakeNewAlertFiles()) alert_files_.push_back(std::move(file));
  // One per file would flood the log; the file's own line says it is committed.
  spdlog::log(
      std::string_view(why) == "file committed" ? spdlog::level::debug : spdlog::level::info,
      "checkpoint written ({}) in {:.1f} ms", why, Milliseconds(start, clock_.MonotonicSeconds()));
  if (write_failure_) WritesRecovered();
  MoveCommittedFiles();
  Publish();
  // Answered only once published, so a client that queries right after its commit
  // answer sees its sample in the counts.
  for (const SocketStep& step : answered) {
    if (step.kind != SocketStep::Kind::kRecords) {
      Send(step.reply_to, Reply::Committed(step.sample, step.particles));
    }
  }
  return Status::Ok();
}

Status StationService::SetLabel(std::uint32_t id, std::string label) {
  if (!accepting_work()) {
    return Status::Unavailable("state cannot be written now (" + problem_ + "); try again later");
  }
  SESTON_RETURN_IF_ERROR(pipeline_->SetLabel(id, label));
  dirty_ = true;
  spdlog::info("cluster {} labelled \"{}\"", id, EscapeNameForText(label));
  Status checkpoint = Checkpoint("label set");
  if (!checkpoint.ok()) {
    return Status::Unavailable("label set, but it could not be saved yet (" + checkpoint.message() +
                               "); it is saved when writing works again");
  }
  return Status::Ok();
}

Status StationService::ApplyLiveConfig(const Config& config) {
  SESTON_RETURN_IF_ERROR(pipeline_->ApplyLiveConfig(config));
  const Config& applied = pipeline_->config();
  config_.input = applied.input;
  config_.drift = applied.drift;
  config_.alerts = applied.alerts;
  config_.logging = applied.logging;
  Publish();
  return Status::Ok();
}

Status StationService::AcceptBaseline() {
  if (!accepting_work()) {
    return Status::Unavailable("state cannot be written now (" + problem_ + "); try again later");
  }
  SESTON_RETURN_IF_ERROR(pipeline_->AcceptBaseline());
  dirty_ = true;
  spdlog::info("baseline accepted: the present state is the new normal");
  Status checkpoint = Checkpoint("baseline accepted");
  if (!checkpoint.ok()) {
    return Status::Unavailable("baseline accepted, but it could not be saved yet (" +
                               checkpoint.message() + "); it is saved when writing works again");
  }
  return Status::Ok();
}

void StationService::Tick() {
  const double now = clock_.MonotonicSeconds();
  if (needs_rollback_ || write_failure_) {
    if (now < retry_at_) return;
    if (needs_rollback_) {
      Status restored = RestoreDurableState(/*at_start=*/false);
      if (!restored.ok()) {
        WriteFailed(restored, "returning to the last checkpoint");
        return;
      }
      needs_rollback_ = false;
      spdlog::info(
          "returned to the last checkpoint; {} socket steps taken since were applied again",
          journal_.size());
    }
    if (Checkpoint("retry after a failed write").ok() && !deferred_lines_.empty()) {
      std::vector<QueuedLine> none;
      ProcessLines(none, false);
    }
    return;
  }
  if (first_unacked_close_ && now - *first_unacked_close_ >= kAckDelaySeconds) {
    (void)Checkpoint("socket samples closed");
  } else if (dirty_ && now - last_checkpoint_monotonic_ >= config_.state.checkpoint_seconds) {
    (void)Checkpoint("periodic");
  }
}

Status StationService::Shutdown() {
  if (needs_rollback_) {
    retry_at_ = 0;
    Tick();
    if (needs_rollback_) return write_failure_.value_or(Status::Unavailable("state not restored"));
  }
  return Checkpoint("shutdown");
}

std::vector<std::filesystem::path> StationService::TakeNewAlertFiles() {
  std::vector<std::filesystem::path> files;
  files.swap(alert_files_);
  return files;
}

void StationService::WriteFailed(const Status& status, const char* what) {
  const double now = clock_.MonotonicSeconds();
  if (!write_failure_) {
    spdlog::error(
        "{} failed: {}; taking no more work until writing works again (retry in {:.0f} s)", what,
        status.message(), backoff_seconds_);
  } else {
    spdlog::warn("{} failed again: {} (retry in {:.0f} s)", what, status.message(),
                 backoff_seconds_);
  }
  write_failure_ = status;
  if (problem_.empty()) problem_ = std::string(what) + ": " + status.message();
  retry_at_ = now + backoff_seconds_;
  backoff_seconds_ = std::min(backoff_seconds_ * 2, kMaxBackoffSeconds);
  Publish();
}

void StationService::PipelineFailed(const Status& status, const char* what) {
  needs_rollback_ = true;
  WriteFailed(status, what);
}

void StationService::WritesRecovered() {
  spdlog::info("writing works again; taking work again (first problem was: {})", problem_);
  write_failure_.reset();
  backoff_seconds_ = 1;
}

void StationService::Publish() {
  auto snapshot = std::make_shared<ServiceSnapshot>();
  const Pipeline& pipeline = *pipeline_;
  snapshot->station = config_.station;
  snapshot->version = version_;
  snapshot->started_wall_seconds = started_wall_;
  snapshot->warming_up = pipeline.warming_up();
  snapshot->warmup_held = pipeline.warmup_held();
  snapshot->warmup_needed = config_.model.warmup_particles;
  snapshot->degraded = write_failure_.has_value() || needs_rollback_ || fell_back_;
  snapshot->problem = problem_;
  snapshot->last_particle_seconds = pipeline.latest_event_seconds();
  snapshot->counters = pipeline.counters();
  snapshot->files_done = state_.files_done;
  snapshot->files_quarantined = state_.files_quarantined;
  snapshot->files_waiting_to_move = static_cast<std::uint64_t>(
      std::count_if(state_.committed_files.begin(), state_.committed_files.end(),
                    [](const CommittedFile& file) { return !file.moved; }));
  snapshot->k = pipeline.model() ? pipeline.model()->active_count() : 0;
  snapshot->last_checkpoint_wall_seconds = last_checkpoint_wall_;
  snapshot->checkpoints_written = checkpoints_written_;
  snapshot->checkpoint_failures = checkpoint_failures_;
  snapshot->socket_open_samples = state_.open_samples.size();
  snapshot->socket_records_skipped = records_skipped_;
  snapshot->socket_commits_pending = static_cast<std::uint64_t>(std::count_if(
      journal_.begin(), journal_.end(),
      [](const SocketStep& step) { return step.kind != SocketStep::Kind::kRecords; }));
  snapshot->bin_seconds = config_.counts.bin_seconds;
  snapshot->counts = pipeline.counts().Snapshot();
  if (const MiniBatchKMeans* model = pipeline.model()) {
    for (const auto& cluster : model->clusters()) {
      ClusterView view;
      view.id = cluster.id;
      if (auto it = pipeline.labels().find(cluster.id); it != pipeline.labels().end()) {
        view.label = it->second;
      }
      if (auto it = pipeline.cluster_totals().find(cluster.id);
          it != pipeline.cluster_totals().end()) {
        view.count = it->second;
      }
      view.centre = pipeline.CentreInInputUnits(cluster.id);
      view.spread = cluster.spread;
      view.born_seconds = cluster.born_seconds;
      view.retired = cluster.retired;
      snapshot->clusters.push_back(std::move(view));
    }
    std::sort(snapshot->clusters.begin(), snapshot->clusters.end(),
              [](const ClusterView& a, const ClusterView& b) { return a.id < b.id; });
  }
  nlohmann::json active = nlohmann::json::array();
  for (const AlertEvent& event : pipeline.drift().active_alerts()) active.push_back(ToJson(event));
  nlohmann::json recent = nlohmann::json::array();
  for (const AlertEvent& event : pipeline.drift().recent_alerts()) recent.push_back(ToJson(event));
  snapshot->alerts = {{"active", std::move(active)}, {"recent", std::move(recent)}};
  for (const auto& [kind, reading] : pipeline.drift().latest_readings()) {
    snapshot->detector_readings.push_back(reading);
  }
  snapshot->recent_particles = pipeline.recent_particles().Latest(RecentParticles::kDefaultCapacity);
  board_->Publish(std::move(snapshot));
  last_publish_monotonic_ = clock_.MonotonicSeconds();
}

}  // namespace seston
