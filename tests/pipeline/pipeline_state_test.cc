// Pipeline state across restarts: a pipeline stopped at any point and continued from its
// checkpoint must end exactly where an uninterrupted run ends — the same summary, the same
// state, the same count files byte for byte, nothing counted twice or lost.
//
// Each run feeds the same simulated files (seston-sim's Skerry Sound station at
// concentration_scale 0.2, about 170 particles per 5 mL sample, one sample every 300 s,
// with a bloom starting after 1 h so that the drift monitor has something to hold) and
// commits each file the way the daemon does (station_service.h): ProcessFile, then
// WriteCountFiles(false), then one checkpoint holding the pipeline state and the number
// of files done. A "crash" drops the pipeline and the store at any instant; a restart
// builds new ones on the same directories, loads the checkpoint, restores, and goes on
// with the first file not recorded as done.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdint>
#include <filesystem>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "base/file_system.h"
#include "config/config_loader.h"
#include "pipeline/pipeline.h"
#include "seston-sim/sample_generator.h"
#include "state/checkpoint_store.h"
#include "support/faulty_file_system.h"
#include "support/test_paths.h"

namespace seston {
namespace {

using testing::FaultyFileSystem;
using testing::FileFault;
using testing::FileOperation;

constexpr std::size_t kFiles = 24;

// The demo's features; a small warm-up (ends during the fourth file) and batches, so that
// warm-up, mini-batch updates and a bloom all happen within the files.
constexpr const char* kConfigYaml = R"yaml(
station: "Skerry Sound mooring B (simulated)"
features:
  - { column: area_um2, transform: log10 }
  - { column: aspect_ratio }
  - { column: perimeter_um, transform: log10 }
  - { column: grey_level }
model:
  k: 4
  warmup_particles: 600
  batch_size: 64
  restarts: 3
  half_life_seconds: 3600
)yaml";

struct SampleFile {
  std::string name;
  std::string csv;
};

const std::vector<SampleFile>& Files() {
  static const std::vector<SampleFile> files = [] {
    sim::SimulatorOptions options;
    options.concentration_scale = 0.2;
    options.scenario.scenario = sim::Scenario::kBloom;
    options.scenario.change_at_hours = 1;
    auto generator = sim::SampleGenerator::Create(options);
    EXPECT_TRUE(generator.ok()) << generator.status().message();
    std::vector<SampleFile> made;
    for (std::uint64_t n = 0; n < kFiles; ++n) {
      const sim::SimulatedSample sample = generator->Generate(n);
      made.push_back({sample.file_name, sim::FormatCsv(sample, options.groups, false)});
    }
    return made;
  }();
  return files;
}

Config MakeConfig(const std::filesystem::path& root) {
  auto config = ParseConfig(kConfigYaml, (root / "seston.yaml").string());
  EXPECT_TRUE(config.ok()) << config.status().message();
  config->counts.output_dir = (root / "counts").string();
  config->alerts.dir = (root / "alerts").string();
  config->state.dir = (root / "state").string();
  return *config;
}

// The pipeline and checkpoint store of one process life, over one file system.
struct Station {
  std::unique_ptr<Pipeline> pipeline;
  std::optional<CheckpointStore> store;
  std::size_t files_done = 0;  // from the checkpoint: files [0, files_done) are committed
};

nlohmann::json Checkpoint(const Pipeline& pipeline, std::size_t files_done) {
  return {{"pipeline", pipeline.ToJson()}, {"files_done", files_done}};
}

// A process start: the last checkpoint restored, or a first one written before any count.
Station Start(const Config& config, FileSystem& fs) {
  Station station;
  auto pipeline = Pipeline::Create(config, fs);
  EXPECT_TRUE(pipeline.ok()) << pipeline.status().message();
  auto store = CheckpointStore::Create(fs, config.state);
  EXPECT_TRUE(store.ok()) << store.status().message();
  if (!pipeline.ok() || !store.ok()) return station;
  station.pipeline = std::move(pipeline).value();
  station.store.emplace(std::move(store).value());

  auto loaded = station.store->Load();
  EXPECT_TRUE(loaded.ok()) << loaded.status().message();
  if (loaded.ok() && loaded->state) {
    const Status restored = station.pipeline->RestoreFromJson(loaded->state->at("pipeline"));
    EXPECT_TRUE(restored.ok()) << restored.message();
    station.files_done = loaded->state->at("files_done").get<std::size_t>();
  } else {
    EXPECT_TRUE(station.store->Write(Checkpoint(*station.pipeline, 0)).ok());
  }
  return station;
}

// File `index` through the daemon's commit order.
Status Commit(Station& station, std::size_t index) {
  const SampleFile& file = Files()[index];
  SESTON_RETURN_IF_ERROR(station.pipeline->ProcessFile(file.name, file.csv, nullptr).status());
  SESTON_RETURN_IF_ERROR(station.pipeline->WriteCountFiles(false));
  SESTON_RETURN_IF_ERROR(station.store->Write(Checkpoint(*station.pipeline, index + 1)));
  station.files_done = index + 1;
  return Status::Ok();
}

void CommitUpTo(Station& station, std::size_t end) {
  for (std::size_t i = station.files_done; i < end; ++i) {
    const Status committed = Commit(station, i);
    ASSERT_TRUE(committed.ok()) << "file " << i << ": " << committed.message();
  }
}

// What a run leaves: the summary, the state without the count-file offsets (a restart
// journals the files it reopens, so its journal is longer), and every count file.
struct RunResult {
  nlohmann::json summary;
  nlohmann::json state;
  std::map<std::uint32_t, std::uint64_t> totals;
  std::map<std::string, std::string> count_files;
};

RunResult Finish(Station& station, const Config& config) {
  EXPECT_EQ(station.files_done, kFiles);
  EXPECT_TRUE(station.pipeline->WriteCountFiles(true).ok());
  RunResult result;
  result.summary = station.pipeline->SummaryJson();
  result.state = station.pipeline->ToJson();
  result.state.erase("count_files");
  result.totals = station.pipeline->cluster_totals();
  PosixFileSystem& fs = PosixFileSystem::Instance();
  auto entries = fs.ListDirectory(config.counts.output_dir);
  EXPECT_TRUE(entries.ok()) << entries.status().message();
  for (const DirectoryEntry& entry : *entries) {
    if (entry.name == CountFileWriter::kJournalName) continue;
    auto text = fs.ReadFile(std::filesystem::path(config.counts.output_dir) / entry.name, 1 << 26);
    EXPECT_TRUE(text.ok()) << entry.name;
    result.count_files[entry.name] = *text;
  }
  return result;
}

const RunResult& StraightRun() {
  static const RunResult result = [] {
    testing::ScratchDirectory scratch;
    const Config config = MakeConfig(scratch.path());
    Station station = Start(config, PosixFileSystem::Instance());
    CommitUpTo(station, kFiles);
    return Finish(station, config);
  }();
  return result;
}

void ExpectSameAsStraightRun(const RunResult& run) {
  const RunResult& straight = StraightRun();
  EXPECT_EQ(run.summary, straight.summary);
  EXPECT_EQ(run.totals, straight.totals);
  EXPECT_EQ(run.state, straight.state)
      << "differs in " << nlohmann::json::diff(run.state, straight.state).dump().substr(0, 2000);
  ASSERT_EQ(run.count_files.size(), straight.count_files.size());
  for (const auto& [name, text] : straight.count_files) {
    ASSERT_EQ(run.count_files.count(name), 1u) << name;
    EXPECT_EQ(run.count_files.at(name), text) << name;
  }
}

TEST(PipelineState, StraightRunWarmsUpCountsEveryParticleAndWritesCountFiles) {
  const RunResult& straight = StraightRun();
  std::uint64_t particles = 0;
  for (const SampleFile& file : Files()) {
    particles += std::count(file.csv.begin(), file.csv.end(), '\n') - 1;  // less the header
  }
  std::uint64_t counted = 0;
  for (const auto& [id, count] : straight.totals) counted += count;
  EXPECT_EQ(counted, particles);
  EXPECT_GE(straight.totals.size(), 4u);  // k = 4 clusters, perhaps unclassified too
  EXPECT_FALSE(straight.state.at("model").is_null());
  EXPECT_GE(straight.count_files.size(), 2u);  // bins and samples of the day
}

TEST(PipelineState, RestoredAfterWarmupContinuesExactlyAsAStraightRun) {
  testing::ScratchDirectory scratch;
  const Config config = MakeConfig(scratch.path());
  {
    Station first = Start(config, PosixFileSystem::Instance());
    CommitUpTo(first, kFiles / 2);
    ASSERT_FALSE(first.pipeline->warming_up());
  }
  Station second = Start(config, PosixFileSystem::Instance());
  EXPECT_EQ(second.files_done, kFiles / 2);
  CommitUpTo(second, kFiles);
  ExpectSameAsStraightRun(Finish(second, config));
}

TEST(PipelineState, RestoredDuringWarmupContinuesExactlyAsAStraightRun) {
  testing::ScratchDirectory scratch;
  const Config config = MakeConfig(scratch.path());
  std::size_t held = 0;
  {
    Station first = Start(config, PosixFileSystem::Instance());
    CommitUpTo(first, 2);
    ASSERT_TRUE(first.pipeline->warming_up());
    held = first.pipeline->warmup_held();
    ASSERT_GT(held, 0u);
  }
  Station second = Start(config, PosixFileSystem::Instance());
  EXPECT_TRUE(second.pipeline->warming_up());
  EXPECT_EQ(second.pipeline->warmup_held(), held);
  CommitUpTo(second, kFiles);
  ExpectSameAsStraightRun(Finish(second, config));
}

TEST(PipelineState, RestartAfterEveryFileContinuesExactlyAsAStraightRun) {
  testing::ScratchDirectory scratch;
  const Config config = MakeConfig(scratch.path());
  for (std::size_t i = 0; i + 1 < kFiles; ++i) {
    Station station = Start(config, PosixFileSystem::Instance());
    ASSERT_EQ(station.files_done, i);
    CommitUpTo(station, i + 1);
  }
  Station last = Start(config, PosixFileSystem::Instance());
  CommitUpTo(last, kFiles);
  ExpectSameAsStraightRun(Finish(last, config));
}

// The count rows of a file are durable before its checkpoint is. A crash between the
// two leaves rows the checkpoint does not know; the restart cuts them away and the file
// is counted again, once.
TEST(PipelineState, RowsWrittenAfterTheCheckpointAreCutAndCountedOnce) {
  testing::ScratchDirectory scratch;
  const Config config = MakeConfig(scratch.path());
  const auto count_bytes = [&config] {
    std::uintmax_t bytes = 0;
    for (const auto& entry : std::filesystem::directory_iterator(config.counts.output_dir)) {
      if (entry.path().filename() != CountFileWriter::kJournalName) bytes += entry.file_size();
    }
    return bytes;
  };
  std::uintmax_t bytes_at_checkpoint = 0;
  {
    Station first = Start(config, PosixFileSystem::Instance());
    CommitUpTo(first, kFiles / 2);
    bytes_at_checkpoint = count_bytes();
    const SampleFile& file = Files()[kFiles / 2];
    ASSERT_TRUE(first.pipeline->ProcessFile(file.name, file.csv, nullptr).ok());
    ASSERT_TRUE(first.pipeline->WriteCountFiles(false).ok());
    ASSERT_GT(count_bytes(), bytes_at_checkpoint);  // the file's sample row is on disk
  }
  Station second = Start(config, PosixFileSystem::Instance());
  EXPECT_EQ(second.files_done, kFiles / 2);
  EXPECT_EQ(count_bytes(), bytes_at_checkpoint);  // and cut away by the restore
  CommitUpTo(second, kFiles);
  ExpectSameAsStraightRun(Finish(second, config));
}

// A power cut that tears checkpoint.current: the restart falls back to the checkpoint
// before, whose count-file sizes cut away the last file's rows, and the last file is
// counted again.
TEST(PipelineState, TornCheckpointFallsBackOneFileAndStillEndsExact) {
  testing::ScratchDirectory scratch;
  const Config config = MakeConfig(scratch.path());
  {
    Station first = Start(config, PosixFileSystem::Instance());
    CommitUpTo(first, kFiles / 2);
  }
  const std::filesystem::path current =
      std::filesystem::path(config.state.dir) / CheckpointStore::kCurrentName;
  std::filesystem::resize_file(current, std::filesystem::file_size(current) / 2);

  Station second = Start(config, PosixFileSystem::Instance());
  EXPECT_EQ(second.files_done, kFiles / 2 - 1);
  CommitUpTo(second, kFiles);
  ExpectSameAsStraightRun(Finish(second, config));
}

// The heart of exactly-once: a fault at every operation of one file's commit (an I/O
// error at any operation, and a torn write cut short by a full disk at every append),
// then a crash at that instant. The restart loads the state before or after the file;
// the count files are exactly that state's; the run ends as the straight run does. Each
// case starts from a copy of the directories as they were after the files before.
TEST(PipelineState, FaultAtEveryOperationOfACommitThenCrashEndsExact) {
  constexpr std::size_t kFaultyFile = kFiles - 4;
  testing::ScratchDirectory base;
  std::uint64_t operations = 0;
  std::uint64_t appends = 0;
  {
    const Config config = MakeConfig(base.path());
    Station station = Start(config, PosixFileSystem::Instance());
    CommitUpTo(station, kFaultyFile);
  }
  {
    testing::ScratchDirectory scratch;
    std::filesystem::copy(base.path(), scratch.path(), std::filesystem::copy_options::recursive);
    FaultyFileSystem counter(PosixFileSystem::Instance());
    Station station = Start(MakeConfig(scratch.path()), counter);
    ASSERT_EQ(station.files_done, kFaultyFile);
    counter.ResetCounts();
    ASSERT_TRUE(Commit(station, kFaultyFile).ok());
    operations = counter.failable_count();
    appends = counter.count(FileOperation::kAppend);
  }
  ASSERT_GE(operations, 10u);  // sample rows, bin rows, checkpoint: appends, syncs, renames
  ASSERT_GE(appends, 2u);      // a sample row and the checkpoint at least

  int restarts_before = 0;
  int restarts_after = 0;
  for (bool torn : {false, true}) {
    for (std::uint64_t n = 1; n <= (torn ? appends : operations); ++n) {
      SCOPED_TRACE((torn ? "torn append " : "operation ") + std::to_string(n));
      testing::ScratchDirectory scratch;
      std::filesystem::copy(base.path(), scratch.path(), std::filesystem::copy_options::recursive);
      const Config config = MakeConfig(scratch.path());
      {
        FaultyFileSystem faulty(PosixFileSystem::Instance());
        Station doomed = Start(config, faulty);
        FileFault fault;
        fault.nth = n;
        if (torn) {
          fault.operation = FileOperation::kAppend;
          fault.status = Status::ResourceExhausted("No space left on device");
          fault.torn = true;
        }
        faulty.Arm(fault);
        const Status committed = Commit(doomed, kFaultyFile);
        EXPECT_EQ(faulty.faults_fired(), 1u);
        EXPECT_FALSE(committed.ok());
      }  // the crash: nothing after the failed operation happens

      Station restarted = Start(config, PosixFileSystem::Instance());
      ASSERT_TRUE(restarted.files_done == kFaultyFile || restarted.files_done == kFaultyFile + 1)
          << restarted.files_done;
      (restarted.files_done == kFaultyFile ? restarts_before : restarts_after) += 1;
      CommitUpTo(restarted, kFiles);
      ExpectSameAsStraightRun(Finish(restarted, config));
    }
  }
  EXPECT_GT(restarts_before, 0);
  EXPECT_GT(restarts_after, 0);  // the last directory fsync fails after the rename
}

// A disk that fills up in the middle of a commit and stays full, with no crash: the
// daemon returns to its last durable checkpoint in the same process (station_service.h,
// "Failures of writing"), waits for space, and takes the file again.
TEST(PipelineState, FullDiskMidCommitRecoversInPlaceFromTheLastCheckpoint) {
  constexpr std::size_t kFaultyFile = kFiles / 2;
  for (std::uint64_t n = 1;; ++n) {
    SCOPED_TRACE("disk full from append " + std::to_string(n));
    testing::ScratchDirectory scratch;
    const Config config = MakeConfig(scratch.path());
    FaultyFileSystem faulty(PosixFileSystem::Instance());
    Station station = Start(config, faulty);
    CommitUpTo(station, kFaultyFile);

    faulty.Arm({.operation = FileOperation::kAppend,
                .nth = n,
                .status = Status::ResourceExhausted("No space left on device"),
                .persistent = true});
    const Status committed = Commit(station, kFaultyFile);
    if (faulty.faults_fired() == 0) {
      EXPECT_TRUE(committed.ok());
      EXPECT_GE(n, 3u);  // a sample row and the checkpoint, at least, failed before
      break;
    }
    EXPECT_EQ(committed.code(), StatusCode::kResourceExhausted) << committed.message();
    // Still full: back to the last durable state (reading and cutting need no space).
    auto loaded = station.store->Load();
    ASSERT_TRUE(loaded.ok() && loaded->state) << loaded.status().message();
    ASSERT_EQ(loaded->state->at("files_done").get<std::size_t>(), kFaultyFile);
    ASSERT_TRUE(station.pipeline->RestoreFromJson(loaded->state->at("pipeline")).ok());
    EXPECT_EQ(Commit(station, kFaultyFile).code(), StatusCode::kResourceExhausted);
    ASSERT_TRUE(station.pipeline->RestoreFromJson(loaded->state->at("pipeline")).ok());

    faulty.DisarmAll();  // space returns
    station.files_done = kFaultyFile;
    CommitUpTo(station, kFiles);
    ExpectSameAsStraightRun(Finish(station, config));
  }
}

}  // namespace
}  // namespace seston
