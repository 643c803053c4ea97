// Pipeline: the pure core of seston — particle rows in; assignments, counts and events out.
//
// One Pipeline instance holds the whole chain of DESIGN.md after parsing: features
// (select, transform, standardise), the model (warm-up fit, then mini-batch updates and
// novelty), the per-sample tallies and the CountBook of time bins. It does no I/O of its
// own except through the CountFileWriter it owns (count CSV files) — the caller reads the
// input bytes, moves files and writes checkpoints.
//
// Life cycle: while *warming up*, accepted particles are held (transformed, with their
// event time and sample) until `model.warmup_particles` have arrived; then the scaler is
// fitted and frozen, the model is fitted, and every held particle is classified and
// counted. After that every batch of `model.batch_size` particles is classified and then
// used to update the centres. Nothing is counted twice and nothing is dropped: a held
// particle is counted when warm-up ends, and warm-up state is part of the checkpoint.
//
// Units: event time in s since the Unix epoch (UTC); volume in mL; distances in z units
// (standardised features) or transformed input units when standardisation is off.
//
// Thread safety: not thread-safe. The daemon calls it from its one pipeline thread;
// readers get immutable snapshots built by the caller from the accessors.
#pragma once

#include <array>
#include <cstdint>
#include <filesystem>
#include <map>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

#include "alerts/alert_writer.h"
#include "base/file_system.h"
#include "base/status.h"
#include "config/config.h"
#include "counts/count_book.h"
#include "counts/count_file_writer.h"
#include "features/feature_pipeline.h"
#include "ingest/csv_reader.h"
#include "ingest/particle_batch.h"
#include "model/mini_batch_kmeans.h"
#include "pipeline/drift_monitor.h"
#include "pipeline/recent_particles.h"

namespace seston {

// Receives one call per accepted particle, in input order, once its cluster is known.
class AssignmentSink {
 public:
  virtual ~AssignmentSink() = default;
  // cluster_id 0 = unclassified; distance to the nearest centre in z units.
  virtual void Assigned(std::string_view source, std::uint64_t line, std::uint32_t cluster_id,
                        double distance) = 0;
};

struct PipelineCounters {
  std::uint64_t rows = 0;          // data rows seen (accepted + rejected)
  std::uint64_t accepted = 0;
  std::uint64_t rejected = 0;
  std::uint64_t unclassified = 0;  // accepted but farther than every novelty threshold
  std::array<std::uint64_t, kRejectReasonCount> rejected_by_reason{};
  std::uint64_t files = 0;         // files whose rows were taken
  std::uint64_t samples = 0;       // samples closed and counted
  double volume_ml = 0;            // water analysed in those samples, mL
};

// What became of one input file.
struct FileOutcome {
  std::string source;
  std::uint64_t data_rows = 0;
  std::uint64_t accepted = 0;
  std::uint64_t rejected = 0;
  std::vector<RowRejection> rejections;  // every rejected row with its line and reason
  std::optional<double> first_seconds;   // event time of the first accepted particle
  std::optional<double> last_seconds;
};

class Pipeline {
 public:
  // `fs` must outlive the pipeline.
  static Result<std::unique_ptr<Pipeline>> Create(const Config& config, FileSystem& fs);

  // Parses and processes one whole input file. An unusable header, or more rejected rows
  // than input.max_bad_row_fraction, returns an error and counts nothing (the caller
  // quarantines the file); otherwise every row is accepted or rejected with its reason.
  Result<FileOutcome> ProcessFile(std::string_view source, std::string_view bytes,
                                  AssignmentSink* sink);
  // ProcessFile after its parse step, for a file parsed by csv_reader() elsewhere (replay
  // parses the next files on another thread while this one is clustered). `parsed` must
  // come from csv_reader().Parse(source, ...); results and errors are ProcessFile's.
  Result<FileOutcome> ProcessParsed(std::string_view source, ParsedFile parsed,
                                    AssignmentSink* sink);
  // ProcessParsed after the transform step too: `transformed` must be
  // features().Transformed(parsed.batch), which needs no model and may run on any thread.
  Result<FileOutcome> ProcessParsed(std::string_view source, ParsedFile parsed,
                                    TransformedBatch transformed, AssignmentSink* sink);
  // The reader ProcessFile parses with: immutable, its Parse may run on any thread.
  const CsvReader& csv_reader() const { return csv_; }

  // Processes accepted particles that belong to samples that stay open until
  // CloseSample (the socket path). Rejected records are only counted.
  Status ProcessRecords(const ParticleBatch& batch, AssignmentSink* sink);
  void CountRejected(RejectReason reason);
  // Closes a sample of the socket path; its volume (mL) is taken as given.
  Status CloseSample(const std::string& source, const std::string& sample_id,
                     double volume_ml);

  // Ends warm-up early on what is held (the end of a replay smaller than warm-up).
  // FailedPrecondition when fewer particles than the model needs are held.
  Status FinishWarmup(AssignmentSink* sink);
  // Writes the count rows of every bin whose time has passed (closed bins only unless
  // `all`), fsyncs the count files.
  Status WriteCountFiles(bool all);

  // A technician accepts the present state as the new normal (POST /v1/baseline).
  Status AcceptBaseline();
  // Alert files written since the last call, for the alert hook (run off this thread).
  std::vector<std::filesystem::path> TakeNewAlertFiles();

  bool warming_up() const { return !model_.has_value(); }
  std::size_t warmup_held() const { return warmup_.times.size(); }
  const PipelineCounters& counters() const { return counters_; }
  const MiniBatchKMeans* model() const { return model_ ? &*model_ : nullptr; }
  const FeaturePipeline& features() const { return features_; }
  const CountBook& counts() const { return counts_; }
  const DriftMonitor& drift() const { return drift_; }
  const Config& config() const { return config_; }
  // Particles counted per cluster since the start (id 0 = unclassified).
  const std::map<std::uint32_t, std::uint64_t>& cluster_totals() const { return totals_; }
  std::optional<double> earliest_event_seconds() const { return earliest_seconds_; }
  std::optional<double> latest_event_seconds() const { return latest_seconds_; }

  // Technician labels; ids never reused, so a label stays with its group.
  std::string LabelOf(std::uint32_t id) const;
  Status SetLabel(std::uint32_t id, std::string label);
  const std::map<std::uint32_t, std::string>& labels() const { return labels_; }
  // Centre of an active cluster in the input's own units, by column name.
  std::vector<std::pair<std::string, double>> CentreInInputUnits(std::uint32_t id) const;

  // The newest particles classified after warm-up, in input units (status page).
  const RecentParticles& recent_particles() const { return recent_; }

  // Takes the keys of `config` that a reload applies live (see config/config_diff.h):
  // drift thresholds and windows, the alert policy and the row limits. The drift
  // monitor is carried over through its own state with the new options, so nothing it
  // learnt is lost. On error (the new options do not fit the kept state) nothing
  // changes. The caller has checked with DiffConfigs that nothing refused changed.
  Status ApplyLiveConfig(const Config& config);

  // The run summary: particles, rejections by reason, k, clusters with centroids.
  nlohmann::json SummaryJson() const;

  // Everything needed to continue exactly where this pipeline is (checkpoint payload),
  // and the matching restore. Count-file offsets are included.
  nlohmann::json ToJson() const;
  Status RestoreFromJson(const nlohmann::json& state);

 private:
  struct OpenSample {
    std::string source;
    std::string sample_id;
    std::optional<double> volume_ml;
    SampleTally tally;
    std::uint64_t held = 0;  // particles still in the warm-up buffer
    bool closed = false;
    bool has_particles = false;
  };
  struct WarmupBuffer {
    std::vector<double> values;        // row-major, transformed (not standardised)
    std::vector<double> times;
    std::vector<std::uint64_t> slots;  // OpenSample key
    std::vector<std::uint64_t> lines;
    std::vector<std::uint32_t> sources;  // index into source_names
    std::vector<std::string> source_names;
  };

  Pipeline(const Config& config, FileSystem& fs, FeaturePipeline features, CsvReader csv,
           CountBook counts, CountFileWriter writer, DriftMonitor drift,
           AlertWriter alert_writer);

  // Shared by the file and socket paths: `transformed` has one row per kept row.
  Status Accept(const ParticleBatch& batch, const std::vector<std::size_t>& kept_rows,
                RowMatrix transformed, const std::vector<std::uint64_t>& slots,
                AssignmentSink* sink);
  Status EndWarmup(AssignmentSink* sink);
  // Feeds one classified chunk to the drift monitor and writes the alert events.
  Status ObserveDrift(std::span<const std::uint32_t> ids, std::span<const double> distances,
                      std::span<const double> seconds);
  void UpdateCountFileClusters();
  void Tally(std::uint64_t slot, double seconds, std::uint32_t cluster_id);
  Status FinalizeReadySamples();
  std::uint64_t SlotFor(const std::string& source, const std::string& sample_id);

  Config config_;
  FileSystem& fs_;
  FeaturePipeline features_;
  RecentParticles recent_;
  CsvReader csv_;
  CountBook counts_;
  CountFileWriter writer_;
  DriftMonitor drift_;
  AlertWriter alert_writer_;
  std::vector<std::filesystem::path> new_alert_files_;
  std::optional<MiniBatchKMeans> model_;
  WarmupBuffer warmup_;
  std::map<std::uint64_t, OpenSample> samples_;
  std::map<std::pair<std::string, std::string>, std::uint64_t> open_slot_by_name_;
  std::uint64_t next_slot_ = 1;
  PipelineCounters counters_;
  std::map<std::uint32_t, std::uint64_t> totals_;
  std::map<std::uint32_t, std::string> labels_;
  std::optional<double> earliest_seconds_;
  std::optional<double> latest_seconds_;
};

}  // namespace seston
