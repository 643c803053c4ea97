// Replay tests: outputs identical with and without read-ahead and across runs, the fast
// assignment path against the plain reference of tests/support on seeded data, the input
// order, and skipped files.
//
// Data: seston-sim's simulated Skerry Sound samples (seeded, so every run sees the same
// bytes), at concentration_scale 0.3 (about 260 particles per sample).
#include "pipeline/replay.h"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <map>
#include <string>
#include <vector>

#include "base/clock.h"
#include "base/file_system.h"
#include "config/config_loader.h"
#include "pipeline/pipeline.h"
#include "seston-sim/sample_generator.h"
#include "support/reference_kmeans.h"
#include "support/test_paths.h"

namespace seston {
namespace {

namespace fs = std::filesystem;

// Five features and k = 16: k·d = 80 takes the matrix-product path of
// model/nearest_centre.h, the fast path under test.
constexpr const char* kConfigYaml = R"yaml(
station: "Skerry Sound mooring B (simulated)"
features:
  - { column: area_um2, transform: log10 }
  - { column: esd_um, transform: log10 }
  - { column: aspect_ratio }
  - { column: perimeter_um, transform: log10 }
  - { column: grey_level }
standardize: true
model:
  k: 16
  warmup_particles: WARMUP
  batch_size: 256
  half_life_particles: 5000
counts:
  bin_seconds: 600
  output_dir: OUT/counts
alerts:
  dir: OUT/alerts
)yaml";

std::string ReplacedAll(std::string text, const std::string& from, const std::string& to) {
  for (auto at = text.find(from); at != std::string::npos; at = text.find(from, at + to.size())) {
    text.replace(at, from.size(), to);
  }
  return text;
}

Config MakeConfig(const fs::path& out, std::size_t warmup_particles) {
  std::string yaml = ReplacedAll(kConfigYaml, "OUT", out.string());
  yaml = ReplacedAll(yaml, "WARMUP", std::to_string(warmup_particles));
  auto config = ParseConfig(yaml, "replay_test.yaml");
  EXPECT_TRUE(config.ok()) << config.status().message();
  return *config;
}

// Writes `samples` seeded simulated sample files into `dir`; returns their total rows.
std::uint64_t WriteSamples(const fs::path& dir, std::uint64_t samples) {
  sim::SimulatorOptions options;
  options.concentration_scale = 0.3;
  auto generator = sim::SampleGenerator::Create(options);
  EXPECT_TRUE(generator.ok()) << generator.status().message();
  fs::create_directories(dir);
  std::uint64_t rows = 0;
  for (std::uint64_t n = 0; n < samples; ++n) {
    const sim::SimulatedSample sample = generator->Generate(n);
    rows += sample.particles.size();
    std::ofstream(dir / sample.file_name) << sim::FormatCsv(sample, options.groups, false);
  }
  return rows;
}

void WriteText(const fs::path& path, const std::string& text) { std::ofstream(path) << text; }

// Every regular file under `dir`, by path relative to it, with its bytes.
std::map<std::string, std::string> ReadTree(const fs::path& dir) {
  std::map<std::string, std::string> tree;
  if (!fs::exists(dir)) return tree;
  PosixFileSystem file_system;
  for (const auto& entry : fs::recursive_directory_iterator(dir)) {
    if (!entry.is_regular_file()) continue;
    auto bytes = file_system.ReadFile(entry.path(), 1ull << 30);
    EXPECT_TRUE(bytes.ok());
    tree[fs::relative(entry.path(), dir).string()] = *bytes;
  }
  return tree;
}

struct ReplayOutputs {
  std::string summary_json;
  std::string assignments_csv;
  std::map<std::string, std::string> counts;  // count files by name
  std::map<std::string, std::string> alerts;
};

ReplayOutputs Replay(const fs::path& input, const fs::path& out, std::size_t read_ahead,
                     std::size_t warmup_particles, std::size_t read_workers = 1) {
  Config config = MakeConfig(out, warmup_particles);
  ReplayRequest request;
  request.paths = {input};
  request.assignments_csv = out / "assignments.csv";
  request.summary_json = out / "summary.json";
  request.read_ahead_files = read_ahead;
  request.read_workers = read_workers;
  ManualClock clock;
  auto summary = RunReplay(config, request, PosixFileSystem::Instance(), clock, nullptr);
  EXPECT_TRUE(summary.ok()) << summary.status().message();
  PosixFileSystem file_system;
  ReplayOutputs outputs;
  outputs.summary_json = *file_system.ReadFile(out / "summary.json", 1 << 26);
  outputs.assignments_csv = *file_system.ReadFile(out / "assignments.csv", 1 << 26);
  outputs.counts = ReadTree(out / "counts");
  outputs.alerts = ReadTree(out / "alerts");
  return outputs;
}

void ExpectSameOutputs(const ReplayOutputs& a, const ReplayOutputs& b) {
  EXPECT_EQ(a.summary_json, b.summary_json);
  EXPECT_TRUE(a.assignments_csv == b.assignments_csv) << "assignments differ";
  EXPECT_EQ(a.counts, b.counts);
  EXPECT_EQ(a.alerts, b.alerts);
}

TEST(Replay, OutputsAreByteIdenticalWithAndWithoutReadAheadAnyWorkersAndAcrossRuns) {
  testing::ScratchDirectory scratch;
  const fs::path input = scratch.path() / "in";
  const std::uint64_t rows = WriteSamples(input, 24);
  // One file the pipeline refuses (no feature columns): skipping must not shift anything.
  WriteText(input / "skerry-sound-b_20260601T010200Z_S999999.csv", "time,sample\n1,a\n");

  const ReplayOutputs in_line = Replay(input, scratch.path() / "in-line", 0, 2000);
  const ReplayOutputs ahead = Replay(input, scratch.path() / "ahead", 3, 2000);
  const ReplayOutputs again = Replay(input, scratch.path() / "again", 1, 2000);
  const ReplayOutputs three_workers = Replay(input, scratch.path() / "three", 2, 2000, 3);

  // The run did real work: every row assigned (one header line plus one row each), count
  // files written.
  std::uint64_t assignment_rows = 0;
  for (char c : in_line.assignments_csv) assignment_rows += c == '\n';
  EXPECT_EQ(assignment_rows, rows + 1);
  EXPECT_FALSE(in_line.counts.empty());
  ExpectSameOutputs(in_line, ahead);
  ExpectSameOutputs(ahead, again);
  ExpectSameOutputs(in_line, three_workers);
}

TEST(Replay, SkippedFilesAreReportedWithTheirReasonAndNotCounted) {
  testing::ScratchDirectory scratch;
  const fs::path input = scratch.path() / "in";
  const std::uint64_t rows = WriteSamples(input, 6);
  const fs::path no_features = input / "skerry-sound-b_20260601T000100Z_S900001.csv";
  WriteText(no_features, "time,sample,volume_ml\n1,a,5\n");
  const fs::path empty = input / "skerry-sound-b_20260601T000200Z_S900002.csv";
  WriteText(empty, "");

  Config config = MakeConfig(scratch.path() / "out", 1000);
  ReplayRequest request;
  request.paths = {input};
  ManualClock clock;
  auto summary = RunReplay(config, request, PosixFileSystem::Instance(), clock, nullptr);
  ASSERT_TRUE(summary.ok()) << summary.status().message();

  EXPECT_EQ((*summary)["files_total"].get<std::uint64_t>(), 8u);
  EXPECT_EQ((*summary)["files"].get<std::uint64_t>(), 6u);
  EXPECT_EQ((*summary)["particles"]["read"].get<std::uint64_t>(), rows);
  const auto& skipped = (*summary)["files_skipped"];
  ASSERT_EQ(skipped.size(), 2u);
  // In processing order: by name, their time stamps put both after the first sample.
  EXPECT_EQ(skipped[0]["file"].get<std::string>(), no_features.string());
  EXPECT_NE(skipped[0]["reason"].get<std::string>().find("area_um2"), std::string::npos)
      << skipped[0]["reason"];
  EXPECT_EQ(skipped[1]["file"].get<std::string>(), empty.string());
  EXPECT_FALSE(skipped[1]["reason"].get<std::string>().empty());
}

TEST(ListReplayFiles, OrdersByNameThenPathAcrossDirectoriesAndSkipsHiddenAndOtherSuffixes) {
  testing::ScratchDirectory scratch;
  const fs::path root = scratch.path();
  fs::create_directories(root / "2026" / "06");
  fs::create_directories(root / "b");
  fs::create_directories(root / ".trash");
  WriteText(root / "2026" / "06" / "s_20260601T001000Z.csv", "x");
  WriteText(root / "s_20260601T000000Z.csv", "x");
  WriteText(root / "b" / "s_20260601T000500Z.csv", "x");
  WriteText(root / "2026" / "s_20260601T000500Z.csv", "x");  // same name: path decides
  WriteText(root / "notes.txt", "x");
  WriteText(root / ".s_20260601T000100Z.csv", "x");
  WriteText(root / ".trash" / "s_20260601T000200Z.csv", "x");
  const fs::path explicit_file = scratch.path() / "2026" / "06" / "late.dat";
  WriteText(explicit_file, "x");

  auto files = ListReplayFiles(PosixFileSystem::Instance(), {root, explicit_file, root}, ".csv");
  ASSERT_TRUE(files.ok()) << files.status().message();
  const std::vector<fs::path> expected = {
      explicit_file,  // "late.dat" sorts before "s_..."
      root / "s_20260601T000000Z.csv",
      root / "2026" / "s_20260601T000500Z.csv",
      root / "b" / "s_20260601T000500Z.csv",
      root / "2026" / "06" / "s_20260601T001000Z.csv",
  };
  EXPECT_EQ(*files, expected);
}

class CollectingSink final : public AssignmentSink {
 public:
  struct Row {
    std::uint32_t cluster_id;
    double distance;
  };
  void Assigned(std::string_view source, std::uint64_t line, std::uint32_t cluster_id,
                double distance) override {
    rows[{std::string(source), line}] = {cluster_id, distance};
  }
  std::map<std::pair<std::string, std::uint64_t>, Row> rows;
};

// The whole replay held as warm-up: the pipeline fits on it and then classifies every
// particle against the fitted centres with the fast matrix-product assignment. The same
// rows, parsed, transformed and standardised again here, go through ReferenceNearest
// (plain loops, tests/support) against the same centres; ids and distances must agree.
TEST(Replay, FastAssignmentEqualsThePlainReferenceOnSeededSamples) {
  testing::ScratchDirectory scratch;
  const fs::path input = scratch.path() / "in";
  WriteSamples(input, 10);
  Config config = MakeConfig(scratch.path() / "out", 1'000'000);
  auto pipeline = Pipeline::Create(config, PosixFileSystem::Instance());
  ASSERT_TRUE(pipeline.ok()) << pipeline.status().message();
  auto files = ListReplayFiles(PosixFileSystem::Instance(), {input}, ".csv");
  ASSERT_TRUE(files.ok());
  CollectingSink sink;
  std::vector<std::string> contents;
  for (const auto& file : *files) {
    contents.push_back(*PosixFileSystem::Instance().ReadFile(file, 1 << 26));
    ASSERT_TRUE((*pipeline)->ProcessFile(file.string(), contents.back(), &sink).ok());
  }
  ASSERT_TRUE((*pipeline)->warming_up());
  ASSERT_TRUE((*pipeline)->FinishWarmup(&sink).ok());

  const MiniBatchKMeans& model = *(*pipeline)->model();
  RowMatrix centres(static_cast<Eigen::Index>(model.clusters().size()), model.dims());
  for (std::size_t j = 0; j < model.clusters().size(); ++j) {
    centres.row(static_cast<Eigen::Index>(j)) = model.clusters()[j].centre.transpose();
  }
  ASSERT_EQ(centres.rows(), 16);
  std::size_t compared = 0, unclassified = 0;
  for (std::size_t f = 0; f < files->size(); ++f) {
    const std::string source = (*files)[f].string();
    auto parsed = (*pipeline)->csv_reader().Parse(source, contents[f]);
    ASSERT_TRUE(parsed.ok());
    RowMatrix rows;
    std::vector<std::size_t> kept;
    std::vector<RowRejection> rejections;
    (*pipeline)->features().TransformBatch(parsed->batch, &rows, &kept, &rejections);
    (*pipeline)->features().Standardize(&rows);
    std::vector<int> nearest;
    std::vector<double> squared;
    testing::ReferenceNearest(rows, centres, &nearest, &squared);
    for (std::size_t i = 0; i < kept.size(); ++i) {
      const auto& cluster = model.clusters()[static_cast<std::size_t>(nearest[i])];
      const double distance = std::sqrt(squared[i]);
      const auto it = sink.rows.find({source, parsed->batch.line[kept[i]]});
      ASSERT_NE(it, sink.rows.end());
      const std::uint32_t expected_id = distance > cluster.novelty_threshold ? 0 : cluster.id;
      EXPECT_EQ(it->second.cluster_id, expected_id) << source << " line " << it->first.second;
      EXPECT_NEAR(it->second.distance, distance, 1e-12 * (1 + distance));
      ++compared;
      unclassified += expected_id == 0;
    }
  }
  EXPECT_EQ(compared, sink.rows.size());
  EXPECT_GT(compared, 2000u);
  // The novelty threshold is a high quantile of warm-up distances: a few, not many.
  EXPECT_LT(unclassified, compared / 20);
}

}  // namespace
}  // namespace seston
