// StationService: the live core of `sestond run`, without sockets or threads of its own.
//
// It owns the Pipeline, the CheckpointStore, the FileMover and the NDJSON parser, and
// turns "this drop file is ready", "these socket lines arrived" and "name cluster 3" into
// pipeline calls, checkpoints and file moves, in the order that makes every valid particle
// count exactly once whatever is killed when. The daemon's pipeline thread (ServiceLoop)
// is its only caller; readers on other threads see it through the SnapshotBoard.
//
// ## Commit protocol for a drop file (DESIGN.md, "Reliability contract")
//
//   1. read drop_dir/<name> (at most input.max_file_bytes) and Pipeline::ProcessFile it;
//      an unusable file (InvalidArgument: bad header, too many bad rows, too large,
//      unreadable) goes to quarantine/ with a .reason note and nothing is counted;
//   2. Pipeline::WriteCountFiles(false): count rows of closed bins (sample rows were
//      appended during 1), each append fsynced;
//   3. ONE checkpoint (temp, fsync, rename, fsync dir; see state/checkpoint_store.h) holding
//      the pipeline state — model, counts, drift, labels and the count files' committed
//      sizes — and the record "file <name> (<size> bytes) committed, not yet moved";
//   4. move the file to done/<day of its first particle>/;
//   5. the record is left out of the next checkpoint (lazily: no extra write per file).
// A crash before 3 is durable leaves the old checkpoint: on restart the count files are
// cut back to the sizes it recorded (CountFileWriter::RestoreTo) and the file, still in
// the drop directory and not recorded, is read again from its start. A crash after 3
// and before 4 leaves the record: on restart the file is moved to done/ without being
// read. So the file's counts and its "committed" record become durable together, in the
// rename of step 3, and the file moves only after. When no checkpoint exists at all, one
// is written at Create, before the first count row, so that RestoreTo always has a base.
//
// ## What a socket client gets
//
// Lines are NDJSON records (ingest/ndjson_parser.h). Particles of all connections share
// one name space of sample ids (the instrument's own), so a sample may be continued on a
// new connection after a broken one. Per line:
//   - a line that cannot be used is answered {"rejected":LINE,"reason":...,"detail":...}
//     at once and counted among rejected rows (each time it is sent);
//   - a particle whose feature lies outside its transform's domain is answered the same
//     way (reason "out_of_domain") and counted among rejected rows, once;
//   - a close record {"close_sample":ID,"volume_ml":V} is answered
//     {"committed":ID,"particles":N} (N = particles of ID accepted, all connections and
//     restarts together) only after a checkpoint holding the closed sample is durable:
//     within about kAckDelaySeconds when the daemon is healthy.
// The guarantee: once a client has read {"committed":ID,...}, every particle of sample
// ID that it sent before the close is counted exactly once and survives any crash. If
// the connection or the daemon goes away before that answer, the client reconnects and
// sends the whole sample ID again from its first record, then the close: the daemon
// knows how many records of ID it holds durably (K, in the checkpoint), skips the first
// K records of ID on the new connection and takes the rest, so each record still counts
// once. A close of a sample committed not long ago (the last kRememberedCommits) is
// answered again without counting anything, and its records are skipped. Conditions: a
// re-send repeats the sample's records in the same order; one sample is sent by one
// connection at a time (records of ID arriving on a new connection are taken as a
// re-send from its start); with an empty input.sample_column every particle belongs
// to the one sample "socket". A daemon that is stopped (SIGTERM) answers the commits it
// made before closing connections; lines it had not taken are simply not committed.
//
// ## Failures of writing (full disk, I/O errors)
//
// The first failure of any write (checkpoint, count file, alert file, file move) is kept
// and shown (snapshot `degraded`, `problem`). While writing fails the service takes no
// work (accepting_work() is false: files stay in the drop directory, socket lines stay
// queued so TCP back-pressure reaches the clients) and Tick() retries with back-off (1 s
// doubling to 60 s). A failure inside the pipeline (a count row or an alert file) leaves
// its memory half-updated, so the service returns to the last durable checkpoint
// (CheckpointStore::Load, Pipeline::RestoreFromJson, which also cuts the count files
// back) and re-applies the socket records taken since, which it keeps (at most
// kMaxJournalParticles; more forces a checkpoint). When writes succeed again it
// resumes by itself; the problem stays visible in `problem` until the process restarts.
//
// A start that had to fall back to checkpoint.previous logs an error line beginning
// "ALERT" and shows degraded with the reason for the life of the process.
//
// Thread safety: every method belongs to one thread (the pipeline thread), except
// board(), which any thread may read.
#pragma once

#include <cstdint>
#include <deque>
#include <filesystem>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "base/clock.h"
#include "base/file_system.h"
#include "base/status.h"
#include "config/config.h"
#include "ingest/file_mover.h"
#include "ingest/ndjson_parser.h"
#include "ingest/record_queue.h"
#include "pipeline/pipeline.h"
#include "pipeline/service_snapshot.h"
#include "state/checkpoint_store.h"

namespace seston {

// What became of a ready drop file, for the watcher's bookkeeping.
enum class FileDisposition {
  kDone,         // counted and moved to done/
  kQuarantined,  // moved to quarantine/ with its note
  kCommitted,    // counted and committed; the service moves it once it can write again
  kRetryLater,   // not taken (writes are failing): hand it out again later
  kGone,         // it was no longer in the drop directory
};

class StationService {
 public:
  // Socket commits are answered after a checkpoint made at most this long after the
  // close, s (or sooner, when no more lines are waiting).
  static constexpr double kAckDelaySeconds = 0.5;
  // Socket particles taken since the last checkpoint, kept for a return to it; more
  // forces a checkpoint.
  static constexpr std::size_t kMaxJournalParticles = 200000;
  // Committed socket sample ids remembered (in the checkpoint) to answer re-sent closes.
  static constexpr std::size_t kRememberedCommits = 4096;
  // Socket samples open at once; records of one more sample are answered with an error
  // and not taken.
  static constexpr std::size_t kMaxOpenSocketSamples = 4096;

  // Loads the checkpoint (falling back to the previous one), restores the pipeline, moves
  // committed files still in the drop directory, and writes a first checkpoint when there
  // was none. Fails when the config is refused, a directory cannot be made, both
  // checkpoints are damaged (unless state.start_fresh_if_unreadable), or the checkpoint
  // does not fit this config. `fs` and `clock` must outlive the service.
  static Result<std::unique_ptr<StationService>> Create(const Config& config, FileSystem& fs,
                                                        const Clock& clock, std::string version);

  // One ready file of the drop directory, by its entry name (see the commit protocol).
  FileDisposition ProcessReadyFile(const std::string& name);
  // Socket lines in arrival order (moved from); see "What a socket client gets".
  void ProcessLines(std::vector<QueuedLine>& lines, bool more_waiting);

  // Technician writes: applied, then checkpointed so that they persist. Unavailable while
  // writing fails (nothing applied), or when applied but the checkpoint failed.
  Status SetLabel(std::uint32_t id, std::string label);
  Status AcceptBaseline();
  // The live part of a SIGHUP reload (Pipeline::ApplyLiveConfig, config/config_diff.h),
  // then a new snapshot. On error nothing changes.
  Status ApplyLiveConfig(const Config& config);

  // Periodic duty, at least every 100 ms: checkpoint when due (state.checkpoint_seconds,
  // or socket commits waiting), retry failed writes with back-off.
  void Tick();
  // Writes the count rows of closed bins and a last checkpoint (answering pending
  // commits). Returns the failure when either could not be written.
  Status Shutdown();

  // False while writing fails or the service is returning to its last checkpoint.
  bool accepting_work() const { return !needs_rollback_ && !write_failure_.has_value(); }
  // Alert files written since the last call and now durable, for the alert hook.
  std::vector<std::filesystem::path> TakeNewAlertFiles();

  const SnapshotBoard& board() const { return *board_; }
  std::shared_ptr<const SnapshotBoard> shared_board() const { return board_; }
  const Pipeline& pipeline() const { return *pipeline_; }

 private:
  struct CommittedFile {
    std::string name;
    std::uint64_t size_bytes = 0;
    double event_seconds = 0;  // chooses the done/<day>/ folder
    bool moved = false;        // moved since the checkpoint that recorded it
  };
  struct SocketSample {
    std::uint64_t records = 0;    // records of the sample taken (particles + rejected)
    std::uint64_t particles = 0;  // of which accepted
  };
  // Everything of the service's own that the checkpoint keeps beside the pipeline.
  struct ServiceState {
    std::vector<CommittedFile> committed_files;  // committed, not yet moved
    std::uint64_t files_done = 0;
    std::uint64_t files_quarantined = 0;
    std::map<std::string, SocketSample> open_samples;
    std::deque<std::pair<std::string, std::uint64_t>> recent_commits;  // id, particles

    nlohmann::json ToJson() const;
    static Result<ServiceState> FromJson(const nlohmann::json& json);
    const std::pair<std::string, std::uint64_t>* FindCommit(const std::string& sample) const;
  };
  // One step of the socket path, kept until the checkpoint after it is durable.
  struct SocketStep {
    enum class Kind { kRecords, kClose, kRepeatCommit } kind = Kind::kRecords;
    ParticleBatch batch;                        // kRecords: accepted particles
    std::vector<RejectReason> rejected;         // kRecords: rejected rows, counted
    std::map<std::string, SocketSample> added;  // kRecords: per sample taken
    std::string sample;                         // kClose, kRepeatCommit
    double volume_ml = 0;                       // kClose
    std::uint64_t particles = 0;                // kClose (set when applied), kRepeatCommit
    std::weak_ptr<ReplyChannel> reply_to;       // kClose, kRepeatCommit
  };

  StationService(const Config& config, FileSystem& fs, const Clock& clock, std::string version,
                 CheckpointStore store, FileMover mover, NdjsonParser parser);

  // Loads and applies the durable state: at Create, and when returning to it.
  Status RestoreDurableState(bool at_start);
  Status Apply(SocketStep& step);
  void FlushPending(SocketStep& pending);
  bool InDomain(const NdjsonParticle& particle) const;
  std::uint64_t RecordsHeld(const std::string& sample, const SocketStep& pending) const;

  Status Checkpoint(const char* why);
  nlohmann::json BuildCheckpoint() const;
  void MoveCommittedFiles();
  FileDisposition Quarantine(const std::string& name, std::string problem);

  // A write failed: keep the first problem, stop taking work, retry after the back-off.
  void WriteFailed(const Status& status, const char* what);
  // Pipeline memory may be half-updated: return to the last checkpoint at the next Tick.
  void PipelineFailed(const Status& status, const char* what);
  void WritesRecovered();
  void Publish();

  Config config_;
  FileSystem& fs_;
  const Clock& clock_;
  std::string version_;
  CheckpointStore store_;
  FileMover mover_;
  NdjsonParser parser_;
  std::unique_ptr<Pipeline> pipeline_;
  ServiceState state_;
  std::shared_ptr<SnapshotBoard> board_ = std::make_shared<SnapshotBoard>();

  std::vector<SocketStep> journal_;         // socket steps since the last durable checkpoint
  std::vector<QueuedLine> deferred_lines_;  // taken while returning to the checkpoint
  std::size_t journal_particles_ = 0;
  std::optional<double> first_unacked_close_;   // monotonic s
  std::map<std::string, std::uint64_t> owner_;  // socket sample -> connection sending it
  std::map<std::pair<std::uint64_t, std::string>, std::uint64_t> skip_;  // re-send to skip
  std::vector<std::filesystem::path> alert_files_;

  bool dirty_ = false;  // changed since the last durable checkpoint
  bool needs_rollback_ = false;
  std::optional<Status> write_failure_;  // the current failure, while it lasts
  double retry_at_ = 0;                  // monotonic s
  double backoff_seconds_ = 1;
  std::string problem_;  // the first problem of this process
  bool fell_back_ = false;
  bool restored_ = false;  // the last RestoreDurableState found a checkpoint
  double started_wall_ = 0;
  double last_checkpoint_monotonic_ = 0;
  std::optional<double> last_checkpoint_wall_;
  double last_publish_monotonic_ = -1e300;
  std::uint64_t checkpoints_written_ = 0;
  std::uint64_t checkpoint_failures_ = 0;
  std::uint64_t records_skipped_ = 0;
};

}  // namespace seston
