#include "pipeline/pipeline.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <span>

#include "base/time_format.h"
#include "features/feature_transform.h"

namespace seston {
namespace {

std::string RejectionText(const RowRejection& rejection) {
  return "line " + std::to_string(rejection.line) + ": " + RejectReasonName(rejection.reason) +
         (rejection.detail.empty() ? "" : ": " + rejection.detail);
}

}  // namespace

Result<std::unique_ptr<Pipeline>> Pipeline::Create(const Config& config, FileSystem& fs) {
  SESTON_ASSIGN_OR_RETURN(auto features, FeaturePipeline::Create(config.features));
  std::vector<std::string> columns;
  for (const auto& feature : config.features.features) columns.push_back(feature.column);
  SESTON_ASSIGN_OR_RETURN(auto csv, CsvReader::Create(config.input, columns));
  SESTON_ASSIGN_OR_RETURN(auto counts, CountBook::Create(config.counts));
  SESTON_ASSIGN_OR_RETURN(auto writer, CountFileWriter::Create(fs, config.counts));
  SESTON_ASSIGN_OR_RETURN(auto drift,
                          DriftMonitor::Create(config.drift, config.alerts, config.station));
  SESTON_ASSIGN_OR_RETURN(auto alert_writer, AlertWriter::Create(fs, config.alerts.dir));
  return std::unique_ptr<Pipeline>(new Pipeline(config, fs, std::move(features), std::move(csv),
                                                std::move(counts), std::move(writer),
                                                std::move(drift), std::move(alert_writer)));
}

Pipeline::Pipeline(const Config& config, FileSystem& fs, FeaturePipeline features, CsvReader csv,
                   CountBook counts, CountFileWriter writer, DriftMonitor drift,
                   AlertWriter alert_writer)
    : config_(config),
      fs_(fs),
      features_(std::move(features)),
      recent_(features_.columns()),
      csv_(std::move(csv)),
      counts_(std::move(counts)),
      writer_(std::move(writer)),
      drift_(std::move(drift)),
      alert_writer_(std::move(alert_writer)) {}

Result<FileOutcome> Pipeline::ProcessFile(std::string_view source, std::string_view bytes,
                                          AssignmentSink* sink) {
  SESTON_ASSIGN_OR_RETURN(ParsedFile parsed, csv_.Parse(source, bytes));
  return ProcessParsed(source, std::move(parsed), sink);
}

Result<FileOutcome> Pipeline::ProcessParsed(std::string_view source, ParsedFile parsed,
                                            AssignmentSink* sink) {
  TransformedBatch transformed = features_.Transformed(parsed.batch);
  return ProcessParsed(source, std::move(parsed), std::move(transformed), sink);
}

Result<FileOutcome> Pipeline::ProcessParsed(std::string_view source, ParsedFile parsed,
                                            TransformedBatch transformed_batch,
                                            AssignmentSink* sink) {
  RowMatrix& transformed = transformed_batch.rows;
  const std::vector<std::size_t>& kept = transformed_batch.kept_rows;
  const std::vector<RowRejection>& domain_rejections = transformed_batch.rejections;

  FileOutcome outcome;
  outcome.source = std::string(source);
  outcome.data_rows = parsed.data_rows;
  outcome.rejections = std::move(parsed.rejections);
  outcome.rejections.insert(outcome.rejections.end(), domain_rejections.begin(),
                            domain_rejections.end());
  std::stable_sort(outcome.rejections.begin(), outcome.rejections.end(),
                   [](const RowRejection& a, const RowRejection& b) { return a.line < b.line; });
  outcome.rejected = outcome.rejections.size();
  outcome.accepted = kept.size();

  // The whole file is judged before anything is counted, so a quarantined file leaves
  // no trace in the counts.
  double limit = config_.input.max_bad_row_fraction * static_cast<double>(parsed.data_rows);
  if (outcome.rejected > 0 && static_cast<double>(outcome.rejected) > limit) {
    std::string message = std::string(source) + ": " + std::to_string(outcome.rejected) +
                          " of " + std::to_string(parsed.data_rows) +
                          " rows rejected, more than input.max_bad_row_fraction (" +
                          std::to_string(config_.input.max_bad_row_fraction) + ")";
    for (std::size_t i = 0; i < outcome.rejections.size() && i < 5; ++i) {
      message += "; " + RejectionText(outcome.rejections[i]);
    }
    return Status::InvalidArgument(message);
  }

  const ParticleBatch& batch = parsed.batch;
  std::vector<std::uint64_t> sample_slots(batch.samples.size());
  for (std::size_t j = 0; j < batch.samples.size(); ++j) {
    std::uint64_t slot = next_slot_++;
    OpenSample& sample = samples_[slot];
    sample.source = std::string(source);
    sample.sample_id = batch.samples[j].id;
    sample.volume_ml = batch.samples[j].volume_ml;
    sample_slots[j] = slot;
  }
  std::vector<std::uint64_t> slots(kept.size());
  for (std::size_t i = 0; i < kept.size(); ++i) {
    slots[i] = sample_slots[batch.sample_index[kept[i]]];
  }
  if (!kept.empty()) {
    outcome.first_seconds = batch.time_seconds[kept.front()];
    outcome.last_seconds = batch.time_seconds[kept.back()];
  }

  counters_.rows += parsed.data_rows;
  counters_.rejected += outcome.rejected;
  for (const auto& rejection : outcome.rejections) {
    ++counters_.rejected_by_reason[static_cast<std::size_t>(rejection.reason)];
  }
  // Rejected rows have no trustworthy time of their own; they are counted with the
  // file's first sample, in the bin of its first particle.
  if (!sample_slots.empty()) samples_[sample_slots.front()].tally.rejected += outcome.rejected;

  SESTON_RETURN_IF_ERROR(Accept(batch, kept, std::move(transformed), slots, sink));
  for (std::uint64_t slot : sample_slots) samples_[slot].closed = true;
  ++counters_.files;
  SESTON_RETURN_IF_ERROR(FinalizeReadySamples());
  return outcome;
}

std::uint64_t Pipeline::SlotFor(const std::string& source, const std::string& sample_id) {
  auto key = std::make_pair(source, sample_id);
  if (auto it = open_slot_by_name_.find(key); it != open_slot_by_name_.end()) return it->second;
  std::uint64_t slot = next_slot_++;
  OpenSample& sample = samples_[slot];
  sample.source = source;
  sample.sample_id = sample_id;
  open_slot_by_name_.emplace(std::move(key), slot);
  return slot;
}

Status Pipeline::ProcessRecords(const ParticleBatch& batch, AssignmentSink* sink) {
  RowMatrix transformed;
  std::vector<std::size_t> kept;
  std::vector<RowRejection> rejections;
  features_.TransformBatch(batch, &transformed, &kept, &rejections);
  for (const auto& rejection : rejections) CountRejected(rejection.reason);
  counters_.rows += kept.size();
  std::vector<std::uint64_t> slots(kept.size());
  for (std::size_t i = 0; i < kept.size(); ++i) {
    const SampleInfo& info = batch.samples[batch.sample_index[kept[i]]];
    slots[i] = SlotFor(batch.source, info.id);
    if (info.volume_ml && !samples_[slots[i]].volume_ml) samples_[slots[i]].volume_ml = info.volume_ml;
  }
  return Accept(batch, kept, std::move(transformed), slots, sink);
}

void Pipeline::CountRejected(RejectReason reason) {
  ++counters_.rows;
  ++counters_.rejected;
  ++counters_.rejected_by_reason[static_cast<std::size_t>(reason)];
}

Status Pipeline::CloseSample(const std::string& source, const std::string& sample_id,
                             double volume_ml) {
  std::uint64_t slot = SlotFor(source, sample_id);
  OpenSample& sample = samples_[slot];
  sample.volume_ml = volume_ml;
  sample.closed = true;
  open_slot_by_name_.erase({source, sample_id});
  return FinalizeReadySamples();
}

Status Pipeline::Accept(const ParticleBatch& batch, const std::vector<std::size_t>& kept_rows,
                        RowMatrix transformed, const std::vector<std::uint64_t>& slots,
                        AssignmentSink* sink) {
  const std::size_t n = kept_rows.size();
  if (n == 0) return Status::Ok();
  std::vector<double> times(n);
  for (std::size_t i = 0; i < n; ++i) {
    times[i] = batch.time_seconds[kept_rows[i]];
    if (!latest_seconds_ || times[i] > *latest_seconds_) latest_seconds_ = times[i];
    if (!earliest_seconds_ || times[i] < *earliest_seconds_) earliest_seconds_ = times[i];
    samples_[slots[i]].has_particles = true;
  }
  counters_.accepted += n;

  if (warming_up()) {
    std::uint32_t source_index;
    if (!warmup_.source_names.empty() && warmup_.source_names.back() == batch.source) {
      source_index = static_cast<std::uint32_t>(warmup_.source_names.size() - 1);
    } else {
      source_index = static_cast<std::uint32_t>(warmup_.source_names.size());
      warmup_.source_names.push_back(batch.source);
    }
    const auto dims = static_cast<std::size_t>(transformed.cols());
    warmup_.values.insert(warmup_.values.end(), transformed.data(),
                          transformed.data() + n * dims);
    for (std::size_t i = 0; i < n; ++i) {
      warmup_.times.push_back(times[i]);
      warmup_.slots.push_back(slots[i]);
      warmup_.lines.push_back(batch.line[kept_rows[i]]);
      warmup_.sources.push_back(source_index);
      ++samples_[slots[i]].held;
    }
    if (warmup_.times.size() >= config_.model.warmup_particles) return EndWarmup(sink);
    return Status::Ok();
  }

  features_.Standardize(&transformed);
  const std::size_t batch_size = std::max<std::size_t>(1, config_.model.batch_size);
  std::vector<std::uint32_t> ids;
  std::vector<double> distances;
  for (std::size_t start = 0; start < n; start += batch_size) {
    const std::size_t m = std::min(batch_size, n - start);
    RowMatrix chunk = transformed.middleRows(static_cast<Eigen::Index>(start),
                                             static_cast<Eigen::Index>(m));
    std::span<const double> chunk_times(times.data() + start, m);
    model_->ProcessBatch(chunk, chunk_times.front(), chunk_times.back(), &ids, &distances,
                         chunk_times);
    for (std::size_t i = 0; i < m; ++i) {
      Tally(slots[start + i], chunk_times[i], ids[i]);
      recent_.Add(chunk_times[i], ids[i], batch.row(kept_rows[start + i]));
      if (sink != nullptr) {
        sink->Assigned(batch.source, batch.line[kept_rows[start + i]], ids[i], distances[i]);
      }
    }
    SESTON_RETURN_IF_ERROR(ObserveDrift(ids, distances, chunk_times));
  }
  return Status::Ok();
}

Status Pipeline::ObserveDrift(std::span<const std::uint32_t> ids,
                              std::span<const double> distances,
                              std::span<const double> seconds) {
  if (!config_.drift.enabled) return Status::Ok();
  // A birth raises next_id and a retirement lowers active_count, so together they show
  // any change of the living set, even a birth and a retirement at once.
  const int clusters_before = model_->active_count();
  const std::uint32_t next_id_before = model_->next_id();
  auto centre_text = [this](std::uint32_t id) {
    std::string text;
    for (const auto& [column, value] : CentreInInputUnits(id)) {
      text += (text.empty() ? "" : ", ") + column + " = " + std::to_string(value);
    }
    return text;
  };
  auto events = drift_.Observe(*model_, ids, distances, seconds,
                               [this](std::uint32_t id) { return LabelOf(id); }, centre_text);
  for (const AlertEvent& event : events) {
    SESTON_ASSIGN_OR_RETURN(auto path, alert_writer_.Write(event));
    new_alert_files_.push_back(std::move(path));
  }
  if (model_->active_count() != clusters_before || model_->next_id() != next_id_before) {
    UpdateCountFileClusters();
  }
  return Status::Ok();
}

void Pipeline::UpdateCountFileClusters() {
  std::vector<std::uint32_t> living;
  for (const auto& cluster : model_->clusters()) {
    if (!cluster.retired) living.push_back(cluster.id);
  }
  writer_.SetClusters(std::move(living));
}

Status Pipeline::ApplyLiveConfig(const Config& config) {
  std::vector<std::string> columns;
  for (const auto& feature : config_.features.features) columns.push_back(feature.column);
  InputOptions input = config_.input;
  input.max_bad_row_fraction = config.input.max_bad_row_fraction;
  input.max_line_bytes = config.input.max_line_bytes;
  SESTON_ASSIGN_OR_RETURN(CsvReader csv, CsvReader::Create(input, columns));
  AlertOptions alerts = config_.alerts;
  alerts.raise_after = config.alerts.raise_after;
  alerts.resolve_after = config.alerts.resolve_after;
  alerts.cooldown_seconds = config.alerts.cooldown_seconds;
  alerts.recent_kept = config.alerts.recent_kept;
  alerts.hook_command = config.alerts.hook_command;
  alerts.hook_timeout_seconds = config.alerts.hook_timeout_seconds;
  alerts.alertmanager = config.alerts.alertmanager;
  DriftOptions drift = config.drift;
  drift.enabled = config_.drift.enabled;  // restart-only: the baseline depends on it
  SESTON_ASSIGN_OR_RETURN(DriftMonitor monitor,
                          DriftMonitor::FromJson(drift_.ToJson(), drift, alerts, config_.station));
  drift_ = std::move(monitor);
  csv_ = std::move(csv);
  config_.input = input;
  config_.alerts = alerts;
  config_.drift = drift;
  config_.logging = config.logging;
  return Status::Ok();
}

Status Pipeline::AcceptBaseline() {
  if (warming_up()) {
    return Status::FailedPrecondition("still warming up: the first baseline is set when warm-up ends");
  }
  return drift_.AcceptCurrentAsBaseline(*model_, latest_seconds_.value_or(0));
}

std::vector<std::filesystem::path> Pipeline::TakeNewAlertFiles() {
  std::vector<std::filesystem::path> files;
  files.swap(new_alert_files_);
  return files;
}

Status Pipeline::EndWarmup(AssignmentSink* sink) {
  const std::size_t n = warmup_.times.size();
  const auto dims = static_cast<Eigen::Index>(features_.dims());
  RowMatrix rows = ConstRowMatrixMap(warmup_.values.data(), static_cast<Eigen::Index>(n), dims);
  features_.FitScaler(rows);
  features_.Standardize(&rows);
  SESTON_ASSIGN_OR_RETURN(auto model,
                          MiniBatchKMeans::Create(config_.model, rows, warmup_.times.back()));
  model_ = std::move(model);
  // Warm-up particles shaped the fit already, so they are classified without moving the
  // centres a second time.
  std::vector<std::uint32_t> ids;
  std::vector<double> distances;
  model_->Classify(rows, &ids, &distances);
  UpdateCountFileClusters();
  std::map<std::uint32_t, std::uint64_t> baseline_counts;
  for (std::uint32_t id : ids) ++baseline_counts[id];
  SESTON_RETURN_IF_ERROR(drift_.SetBaseline(*model_, baseline_counts, warmup_.times.back()));
  for (std::size_t i = 0; i < n; ++i) {
    Tally(warmup_.slots[i], warmup_.times[i], ids[i]);
    --samples_[warmup_.slots[i]].held;
    if (sink != nullptr) {
      sink->Assigned(warmup_.source_names[warmup_.sources[i]], warmup_.lines[i], ids[i],
                     distances[i]);
    }
  }
  warmup_ = WarmupBuffer{};
  return FinalizeReadySamples();
}

Status Pipeline::FinishWarmup(AssignmentSink* sink) {
  if (!warming_up()) return Status::Ok();
  std::size_t needed = static_cast<std::size_t>(
      std::max(config_.model.k == 0 ? config_.model.k_max : config_.model.k, 1));
  if (warmup_.times.size() < needed) {
    return Status::FailedPrecondition(
        "only " + std::to_string(warmup_.times.size()) +
        " particles were accepted; the model needs at least " + std::to_string(needed) +
        " to fit (model.warmup_particles is " + std::to_string(config_.model.warmup_particles) +
        ")");
  }
  return EndWarmup(sink);
}

void Pipeline::Tally(std::uint64_t slot, double seconds, std::uint32_t cluster_id) {
  SampleTally& tally = samples_[slot].tally;
  if (tally.by_cluster.empty() && tally.by_bin.empty()) {
    tally.first_seconds = seconds;
    tally.last_seconds = seconds;
  } else {
    tally.first_seconds = std::min(tally.first_seconds, seconds);
    tally.last_seconds = std::max(tally.last_seconds, seconds);
  }
  ++tally.by_cluster[cluster_id];
  ++tally.by_bin[counts_.BinStart(seconds)].by_cluster[cluster_id];
  ++totals_[cluster_id];
  if (cluster_id == 0) ++counters_.unclassified;
}

Status Pipeline::FinalizeReadySamples() {
  for (auto it = samples_.begin(); it != samples_.end();) {
    OpenSample& sample = it->second;
    if (!sample.closed || sample.held > 0) {
      ++it;
      continue;
    }
    SampleTally& tally = sample.tally;
    tally.sample_id = sample.sample_id;
    tally.source = sample.source;
    tally.volume_ml = sample.volume_ml.value_or(config_.input.default_volume_ml);
    if (!sample.has_particles) {
      // A sample of clean water still analysed its volume; it sits at the latest time.
      if (!latest_seconds_) {
        it = samples_.erase(it);
        continue;
      }
      tally.first_seconds = tally.last_seconds = *latest_seconds_;
    }
    if (tally.rejected > 0) tally.by_bin[counts_.BinStart(tally.first_seconds)].rejected += tally.rejected;
    SESTON_RETURN_IF_ERROR(counts_.AddSample(tally));
    ++counters_.samples;
    counters_.volume_ml += tally.volume_ml;
    SESTON_RETURN_IF_ERROR(writer_.WriteSample(tally));
    if (config_.drift.enabled) {
      for (const AlertEvent& event : drift_.ObserveSample(tally.volume_ml, tally.last_seconds)) {
        SESTON_ASSIGN_OR_RETURN(auto path, alert_writer_.Write(event));
        new_alert_files_.push_back(std::move(path));
      }
    }
    it = samples_.erase(it);
  }
  return Status::Ok();
}

Status Pipeline::WriteCountFiles(bool all) {
  std::vector<BinCounts> bins = all ? counts_.TakeAllPendingBins() : counts_.TakeClosedBins();
  return writer_.WriteBins(bins);
}

std::string Pipeline::LabelOf(std::uint32_t id) const {
  if (id == 0) return "unclassified";
  if (auto it = labels_.find(id); it != labels_.end()) return it->second;
  return "group " + std::to_string(id);
}

Status Pipeline::SetLabel(std::uint32_t id, std::string label) {
  if (!model_ || model_->FindCluster(id) == nullptr) {
    return Status::NotFound("no cluster with id " + std::to_string(id));
  }
  labels_[id] = std::move(label);
  return Status::Ok();
}

std::vector<std::pair<std::string, double>> Pipeline::CentreInInputUnits(
    std::uint32_t id) const {
  std::vector<std::pair<std::string, double>> centre;
  const MiniBatchKMeans::Cluster* cluster = model_ ? model_->FindCluster(id) : nullptr;
  if (cluster == nullptr) return centre;
  std::vector<double> values = features_.ToInputUnits(cluster->centre.data());
  for (std::size_t d = 0; d < values.size(); ++d) {
    centre.emplace_back(features_.columns()[d], values[d]);
  }
  return centre;
}

nlohmann::json Pipeline::SummaryJson() const {
  nlohmann::json summary;
  summary["particles"] = {{"read", counters_.rows},
                          {"accepted", counters_.accepted},
                          {"rejected", counters_.rejected},
                          {"unclassified", counters_.unclassified}};
  nlohmann::json by_reason = nlohmann::json::object();
  for (int r = 0; r < kRejectReasonCount; ++r) {
    by_reason[RejectReasonName(static_cast<RejectReason>(r))] =
        counters_.rejected_by_reason[static_cast<std::size_t>(r)];
  }
  summary["rejected_by_reason"] = by_reason;
  summary["files"] = counters_.files;
  summary["warming_up"] = warming_up();
  auto time_or_null = [](const std::optional<double>& seconds) {
    return seconds ? nlohmann::json(FormatIso8601(*seconds)) : nlohmann::json(nullptr);
  };
  summary["first_time"] = time_or_null(earliest_seconds_);
  summary["last_time"] = time_or_null(latest_seconds_);
  summary["samples"] = counters_.samples;
  summary["volume_ml"] = counters_.volume_ml;
  auto per_ml = [this](std::uint64_t count) {
    return counters_.volume_ml > 0
               ? nlohmann::json(static_cast<double>(count) / counters_.volume_ml)
               : nlohmann::json(nullptr);
  };
  summary["unclassified_per_ml"] = per_ml(counters_.unclassified);
  nlohmann::json clusters = nlohmann::json::array();
  if (model_) {
    summary["k"] = model_->active_count();
    if (const auto& selection = model_->k_selection()) {
      nlohmann::json scores = nlohmann::json::array();
      for (const auto& score : selection->scores) {
        scores.push_back({{"k", score.k},
                          {"sse", score.sse},
                          {"silhouette", std::isfinite(score.silhouette)
                                             ? nlohmann::json(score.silhouette)
                                             : nlohmann::json(nullptr)}});
      }
      summary["k_selection"] = {
          {"rule", selection->rule}, {"chosen_k", selection->chosen_k}, {"scores", scores}};
    }
    for (const auto& cluster : model_->clusters()) {
      nlohmann::json centroid = nlohmann::json::object();
      for (const auto& [column, value] : CentreInInputUnits(cluster.id)) centroid[column] = value;
      auto total = totals_.find(cluster.id);
      clusters.push_back({{"id", cluster.id},
                          {"label", LabelOf(cluster.id)},
                          {"count", total == totals_.end() ? 0 : total->second},
                          {"concentration_per_ml",
                           per_ml(total == totals_.end() ? 0 : total->second)},
                          {"centroid", centroid},
                          {"spread_z", cluster.spread},
                          {"retired", cluster.retired}});
    }
  } else {
    summary["k"] = 0;
  }
  summary["clusters"] = clusters;
  return summary;
}

}  // namespace seston

namespace seston {
namespace {

constexpr int kStateFormat = 1;

nlohmann::json OptionalToJson(const std::optional<double>& value) {
  return value ? nlohmann::json(*value) : nlohmann::json(nullptr);
}

std::optional<double> OptionalFromJson(const nlohmann::json& value) {
  if (value.is_null()) return std::nullopt;
  return value.get<double>();
}

// What the model's meaning depends on: a checkpoint made under other features cannot be
// continued, only replaced.
nlohmann::json ModelShape(const Config& config) {
  nlohmann::json features = nlohmann::json::array();
  for (const auto& feature : config.features.features) {
    features.push_back({feature.column, TransformName(feature.transform)});
  }
  return {{"features", features}, {"standardize", config.features.standardize}};
}

}  // namespace

nlohmann::json Pipeline::ToJson() const {
  nlohmann::json state;
  state["format"] = kStateFormat;
  state["shape"] = ModelShape(config_);
  state["features"] = features_.ToJson();
  state["model"] = model_ ? model_->ToJson() : nlohmann::json(nullptr);
  state["counts"] = counts_.ToJson();
  state["count_files"] = writer_.Offsets().ToJson();
  state["drift"] = drift_.ToJson();
  state["warmup"] = {{"values", warmup_.values},   {"times", warmup_.times},
                     {"slots", warmup_.slots},     {"lines", warmup_.lines},
                     {"sources", warmup_.sources}, {"source_names", warmup_.source_names}};
  nlohmann::json samples = nlohmann::json::array();
  for (const auto& [slot, sample] : samples_) {
    samples.push_back({{"slot", slot},
                       {"source", sample.source},
                       {"sample_id", sample.sample_id},
                       {"volume_ml", OptionalToJson(sample.volume_ml)},
                       {"tally", SampleTallyToJson(sample.tally)},
                       {"held", sample.held},
                       {"closed", sample.closed},
                       {"has_particles", sample.has_particles}});
  }
  state["samples"] = samples;
  nlohmann::json open = nlohmann::json::array();
  for (const auto& [key, slot] : open_slot_by_name_) open.push_back({key.first, key.second, slot});
  state["open_samples"] = open;
  state["next_slot"] = next_slot_;
  state["counters"] = {{"rows", counters_.rows},
                       {"accepted", counters_.accepted},
                       {"rejected", counters_.rejected},
                       {"unclassified", counters_.unclassified},
                       {"rejected_by_reason", counters_.rejected_by_reason},
                       {"files", counters_.files},
                       {"samples", counters_.samples},
                       {"volume_ml", counters_.volume_ml}};
  nlohmann::json totals = nlohmann::json::array();
  for (const auto& [id, count] : totals_) totals.push_back({id, count});
  state["totals"] = totals;
  nlohmann::json labels = nlohmann::json::array();
  for (const auto& [id, label] : labels_) labels.push_back({id, label});
  state["labels"] = labels;
  state["earliest_seconds"] = OptionalToJson(earliest_seconds_);
  state["latest_seconds"] = OptionalToJson(latest_seconds_);
  return state;
}

Status Pipeline::RestoreFromJson(const nlohmann::json& state) {
  try {
    if (state.at("format").get<int>() != kStateFormat) {
      return Status::Corruption("pipeline state format " + state.at("format").dump() +
                                " is not the supported " + std::to_string(kStateFormat));
    }
    if (state.at("shape") != ModelShape(config_)) {
      return Status::FailedPrecondition(
          "the checkpoint was made with features " + state.at("shape").dump() +
          " but the config now says " + ModelShape(config_).dump() +
          "; features cannot change under a running model: move the state directory aside to "
          "start a new model");
    }
    SESTON_ASSIGN_OR_RETURN(features_, FeaturePipeline::FromJson(state.at("features")));
    if (state.at("model").is_null()) {
      model_.reset();
    } else {
      SESTON_ASSIGN_OR_RETURN(auto model, MiniBatchKMeans::FromJson(state.at("model")));
      model_ = std::move(model);
    }
    SESTON_ASSIGN_OR_RETURN(counts_, CountBook::FromJson(state.at("counts"), config_.counts));
    SESTON_ASSIGN_OR_RETURN(auto offsets, CountFileOffsets::FromJson(state.at("count_files")));
    SESTON_RETURN_IF_ERROR(writer_.RestoreTo(offsets));
    SESTON_ASSIGN_OR_RETURN(drift_, DriftMonitor::FromJson(state.at("drift"), config_.drift,
                                                           config_.alerts, config_.station));
    const auto& warmup = state.at("warmup");
    warmup_.values = warmup.at("values").get<std::vector<double>>();
    warmup_.times = warmup.at("times").get<std::vector<double>>();
    warmup_.slots = warmup.at("slots").get<std::vector<std::uint64_t>>();
    warmup_.lines = warmup.at("lines").get<std::vector<std::uint64_t>>();
    warmup_.sources = warmup.at("sources").get<std::vector<std::uint32_t>>();
    warmup_.source_names = warmup.at("source_names").get<std::vector<std::string>>();
    if (warmup_.values.size() != warmup_.times.size() * features_.dims()) {
      return Status::Corruption("pipeline state: warm-up buffer sizes disagree");
    }
    samples_.clear();
    for (const auto& entry : state.at("samples")) {
      OpenSample& sample = samples_[entry.at("slot").get<std::uint64_t>()];
      sample.source = entry.at("source").get<std::string>();
      sample.sample_id = entry.at("sample_id").get<std::string>();
      sample.volume_ml = OptionalFromJson(entry.at("volume_ml"));
      sample.tally = SampleTallyFromJson(entry.at("tally"));
      sample.held = entry.at("held").get<std::uint64_t>();
      sample.closed = entry.at("closed").get<bool>();
      sample.has_particles = entry.at("has_particles").get<bool>();
    }
    open_slot_by_name_.clear();
    for (const auto& entry : state.at("open_samples")) {
      open_slot_by_name_[{entry.at(0).get<std::string>(), entry.at(1).get<std::string>()}] =
          entry.at(2).get<std::uint64_t>();
    }
    next_slot_ = state.at("next_slot").get<std::uint64_t>();
    const auto& counters = state.at("counters");
    counters_.rows = counters.at("rows").get<std::uint64_t>();
    counters_.accepted = counters.at("accepted").get<std::uint64_t>();
    counters_.rejected = counters.at("rejected").get<std::uint64_t>();
    counters_.unclassified = counters.at("unclassified").get<std::uint64_t>();
    counters_.rejected_by_reason =
        counters.at("rejected_by_reason").get<std::array<std::uint64_t, kRejectReasonCount>>();
    counters_.files = counters.at("files").get<std::uint64_t>();
    counters_.samples = counters.at("samples").get<std::uint64_t>();
    counters_.volume_ml = counters.at("volume_ml").get<double>();
    totals_.clear();
    for (const auto& entry : state.at("totals")) {
      totals_[entry.at(0).get<std::uint32_t>()] = entry.at(1).get<std::uint64_t>();
    }
    labels_.clear();
    for (const auto& entry : state.at("labels")) {
      labels_[entry.at(0).get<std::uint32_t>()] = entry.at(1).get<std::string>();
    }
    earliest_seconds_ = OptionalFromJson(state.at("earliest_seconds"));
    latest_seconds_ = OptionalFromJson(state.at("latest_seconds"));
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("pipeline state is malformed: ") + error.what());
  }
  if (model_) UpdateCountFileClusters();
  return Status::Ok();
}

}  // namespace seston
