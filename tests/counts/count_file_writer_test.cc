#include "counts/count_file_writer.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "support/faulty_file_system.h"
#include "support/test_paths.h"

namespace seston {
namespace {

constexpr double kDay = 1764633600;  // 2025-12-02T00:00:00Z

CountsOptions Options(const std::filesystem::path& dir) {
  CountsOptions options;
  options.bin_seconds = 60;
  options.output_dir = dir.string();
  return options;
}

CountFileWriter MakeWriter(FileSystem& fs, const CountsOptions& options) {
  auto writer = CountFileWriter::Create(fs, options);
  EXPECT_TRUE(writer.ok()) << writer.status().ToString();
  return std::move(writer).value();
}

BinCounts Bin(double start, double volume_ml, std::vector<ClusterCount> clusters,
              std::uint64_t unclassified = 0, std::uint64_t rejected = 0) {
  BinCounts bin;
  bin.start_seconds = start;
  bin.volume_ml = volume_ml;
  bin.clusters = std::move(clusters);
  bin.unclassified = unclassified;
  bin.rejected = rejected;
  return bin;
}

std::string Slurp(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

std::vector<std::string> Lines(const std::filesystem::path& path) {
  std::vector<std::string> lines;
  std::istringstream in(Slurp(path));
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

std::vector<std::string> Fields(const std::string& line) {
  std::vector<std::string> fields;
  std::string field;
  std::istringstream in(line);
  while (std::getline(in, field, ',')) fields.push_back(field);
  if (!line.empty() && line.back() == ',') fields.push_back("");
  return fields;
}

// Every file in the directory with its content.
std::map<std::string, std::string> Contents(const std::filesystem::path& dir) {
  std::map<std::string, std::string> contents;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) {
    contents[entry.path().filename().string()] = Slurp(entry.path());
  }
  return contents;
}

TEST(CountFileWriter, RollsToANewFileAtUtcMidnight) {
  testing::ScratchDirectory scratch;
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(writer
                  .WriteBins({Bin(kDay - 120, 1, {{1, 2}}), Bin(kDay - 60, 1, {{1, 3}}),
                              Bin(kDay, 1, {{1, 4}})})
                  .ok());
  std::vector<std::string> before = Lines(scratch.path() / "bins_2025-12-01.csv");
  std::vector<std::string> after = Lines(scratch.path() / "bins_2025-12-02.csv");
  ASSERT_EQ(before.size(), 3u);  // header + 23:58 + 23:59
  ASSERT_EQ(after.size(), 2u);   // header + 00:00
  EXPECT_EQ(Fields(before[2])[0], "2025-12-01T23:59:00Z");
  EXPECT_EQ(Fields(before[2])[1], "2025-12-02T00:00:00Z");  // the bin ends at midnight
  EXPECT_EQ(Fields(after[1])[0], "2025-12-02T00:00:00Z");
}

TEST(CountFileWriter, WritesTheHeaderOncePerFileWithUnitsInEveryColumnName) {
  testing::ScratchDirectory scratch;
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
  writer.SetClusters({2, 1});
  ASSERT_TRUE(writer.WriteBins({Bin(kDay, 2, {{1, 5}})}).ok());
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 60, 2, {{2, 1}})}).ok());
  std::vector<std::string> lines = Lines(scratch.path() / "bins_2025-12-02.csv");
  ASSERT_EQ(lines.size(), 3u);
  EXPECT_EQ(lines[0],
            "bin_start_utc,bin_end_utc,volume_ml,total_count,unclassified_count,"
            "unclassified_per_ml,rejected_count,c1_count,c1_per_ml,c2_count,c2_per_ml");
  EXPECT_EQ(lines[1].rfind("bin_start_utc", 0), std::string::npos);
  EXPECT_EQ(lines[2].rfind("bin_start_utc", 0), std::string::npos);
  for (const std::string& name : Fields(lines[0])) {
    bool has_unit = name.ends_with("_utc") || name.ends_with("_ml") || name.ends_with("_count") ||
                    name.ends_with("_per_ml");
    EXPECT_TRUE(has_unit) << name;
  }
}

TEST(CountFileWriter, RowsReadBackToTheSameNumbers) {
  testing::ScratchDirectory scratch;
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
  const double volume = 2.0 / 3.0;  // no short decimal form
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 120, volume, {{1, 7}, {4, 3}}, 2, 9)}).ok());
  std::vector<std::string> lines = Lines(scratch.path() / "bins_2025-12-02.csv");
  ASSERT_EQ(lines.size(), 2u);
  std::vector<std::string> header = Fields(lines[0]);
  std::vector<std::string> row = Fields(lines[1]);
  ASSERT_EQ(row.size(), header.size());
  std::map<std::string, std::string> cell;
  for (std::size_t i = 0; i < header.size(); ++i) cell[header[i]] = row[i];
  EXPECT_EQ(cell["bin_start_utc"], "2025-12-02T00:02:00Z");
  EXPECT_EQ(cell["bin_end_utc"], "2025-12-02T00:03:00Z");
  EXPECT_EQ(std::strtod(cell["volume_ml"].c_str(), nullptr), volume);
  EXPECT_EQ(cell["total_count"], "12");
  EXPECT_EQ(cell["unclassified_count"], "2");
  EXPECT_EQ(std::strtod(cell["unclassified_per_ml"].c_str(), nullptr), 2 / volume);
  EXPECT_EQ(cell["rejected_count"], "9");
  EXPECT_EQ(cell["c1_count"], "7");
  EXPECT_EQ(std::strtod(cell["c1_per_ml"].c_str(), nullptr), 7 / volume);
  EXPECT_EQ(cell["c4_count"], "3");
  EXPECT_EQ(std::strtod(cell["c4_per_ml"].c_str(), nullptr), 3 / volume);
}

TEST(CountFileWriter, SampleRowQuotesTextAndLeavesConcentrationEmptyWithoutVolume) {
  testing::ScratchDirectory scratch;
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
  SampleTally sample;
  sample.sample_id = "skerry-b,0042";
  sample.source = "mooring \"B\".csv";
  sample.first_seconds = kDay + 3.25;
  sample.last_seconds = kDay + 63.5;
  sample.volume_ml = 0;
  sample.by_cluster = {{0, 1}, {3, 4}};
  sample.rejected = 2;
  ASSERT_TRUE(writer.WriteSample(sample).ok());
  std::vector<std::string> lines = Lines(scratch.path() / "samples_2025-12-02.csv");
  ASSERT_EQ(lines.size(), 2u);
  EXPECT_EQ(lines[0],
            "sample_id,source,first_utc,last_utc,volume_ml,total_count,unclassified_count,"
            "unclassified_per_ml,rejected_count,c3_count,c3_per_ml");
  EXPECT_EQ(lines[1],
            "\"skerry-b,0042\",\"mooring \"\"B\"\".csv\",2025-12-02T00:00:03.250Z,"
            "2025-12-02T00:01:03.500Z,0,5,1,,2,4,");
}

TEST(CountFileWriter, NewClusterStartsTheNextPartWithAWiderHeader) {
  testing::ScratchDirectory scratch;
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
  writer.SetClusters({1, 2});
  ASSERT_TRUE(writer.WriteBins({Bin(kDay, 1, {{1, 5}, {2, 1}})}).ok());
  const std::string first_part = Slurp(scratch.path() / "bins_2025-12-02.csv");
  writer.SetClusters({1, 2, 3});
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 60, 1, {{3, 2}})}).ok());
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 120, 1, {{1, 1}})}).ok());  // fits part 2

  EXPECT_EQ(Slurp(scratch.path() / "bins_2025-12-02.csv"), first_part);  // never rewritten
  std::vector<std::string> part2 = Lines(scratch.path() / "bins_2025-12-02.part2.csv");
  ASSERT_EQ(part2.size(), 3u);
  EXPECT_TRUE(part2[0].ends_with(",c1_count,c1_per_ml,c2_count,c2_per_ml,c3_count,c3_per_ml"));
  EXPECT_TRUE(part2[1].ends_with(",0,0,0,0,2,2"));
  EXPECT_FALSE(std::filesystem::exists(scratch.path() / "bins_2025-12-02.part3.csv"));

  // The next day starts narrow again with the living clusters only.
  writer.SetClusters({3});
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 86400, 1, {{3, 1}})}).ok());
  EXPECT_TRUE(Lines(scratch.path() / "bins_2025-12-03.csv")[0].ends_with(
      ",rejected_count,c3_count,c3_per_ml"));
}

TEST(CountFileWriter, ContinuesTheDaysFileAfterARestart) {
  testing::ScratchDirectory scratch;
  {
    CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
    ASSERT_TRUE(writer.WriteBins({Bin(kDay, 1, {{1, 5}})}).ok());
  }
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 60, 1, {{1, 6}})}).ok());
  EXPECT_EQ(Lines(scratch.path() / "bins_2025-12-02.csv").size(), 3u);
  EXPECT_FALSE(std::filesystem::exists(scratch.path() / "bins_2025-12-02.part2.csv"));
}

TEST(CountFileWriter, RestoreToCutsRowsAndFilesWrittenAfterTheOffsets) {
  testing::ScratchDirectory scratch;
  CountsOptions options = Options(scratch.path());
  CountFileOffsets offsets;
  std::map<std::string, std::string> at_checkpoint;
  {
    CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), options);
    writer.SetClusters({1});
    ASSERT_TRUE(writer.WriteBins({Bin(kDay, 1, {{1, 5}})}).ok());
    offsets = writer.Offsets();
    at_checkpoint = Contents(scratch.path());
    // After the checkpoint: a row in the same file, a new part, a new day, a sample.
    ASSERT_TRUE(writer.WriteBins({Bin(kDay + 60, 1, {{1, 6}})}).ok());
    ASSERT_TRUE(writer.WriteBins({Bin(kDay + 120, 1, {{2, 1}})}).ok());
    ASSERT_TRUE(writer.WriteBins({Bin(kDay + 86400, 1, {{1, 1}})}).ok());
    SampleTally sample;
    sample.sample_id = "s";
    sample.first_seconds = kDay;
    sample.last_seconds = kDay;
    ASSERT_TRUE(writer.WriteSample(sample).ok());
  }
  EXPECT_NE(Contents(scratch.path()), at_checkpoint);
  // Offsets travel through the checkpoint's JSON.
  auto reloaded = CountFileOffsets::FromJson(nlohmann::json::parse(offsets.ToJson().dump()));
  ASSERT_TRUE(reloaded.ok());
  EXPECT_EQ(*reloaded, offsets);

  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), options);
  ASSERT_TRUE(writer.RestoreTo(*reloaded).ok());
  EXPECT_EQ(Contents(scratch.path()), at_checkpoint);
  const std::string journal(CountFileWriter::kJournalName);
  EXPECT_EQ(writer.Offsets().bytes_by_file.at(journal), offsets.bytes_by_file.at(journal));
  // Writing the same rows again gives the files as if nothing had happened.
  writer.SetClusters({1});
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 60, 1, {{1, 6}})}).ok());
  EXPECT_EQ(Lines(scratch.path() / "bins_2025-12-02.csv").size(), 3u);
}

TEST(CountFileWriter, RestoreToLeavesFilesSestonDidNotWriteAlone) {
  testing::ScratchDirectory scratch;
  CountsOptions options = Options(scratch.path());
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), options);
  CountFileOffsets offsets = writer.Offsets();
  {
    std::ofstream foreign(scratch.path() / "bins_2025-11-30.csv");
    foreign << "somebody's own notes\n";
  }
  ASSERT_TRUE(writer.WriteBins({Bin(kDay, 1, {{1, 5}})}).ok());
  ASSERT_TRUE(writer.RestoreTo(offsets).ok());
  EXPECT_FALSE(std::filesystem::exists(scratch.path() / "bins_2025-12-02.csv"));
  EXPECT_EQ(Slurp(scratch.path() / "bins_2025-11-30.csv"), "somebody's own notes\n");
}

TEST(CountFileWriter, RestoreToRefusesNamesThatAreNotCountFiles) {
  testing::ScratchDirectory scratch;
  CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), Options(scratch.path()));
  CountFileOffsets offsets;
  offsets.bytes_by_file["../etc/passwd"] = 0;
  Status status = writer.RestoreTo(offsets);
  EXPECT_EQ(status.code(), StatusCode::kInvalidArgument);
  EXPECT_NE(status.message().find("../etc/passwd"), std::string::npos);
}

TEST(CountFileWriter, TornWriteCommitsNothingAndTheRetryLeavesOnlyWholeRows) {
  testing::ScratchDirectory scratch;
  testing::FaultyFileSystem faulty(PosixFileSystem::Instance());
  CountFileWriter writer = MakeWriter(faulty, Options(scratch.path()));
  ASSERT_TRUE(writer.WriteBins({Bin(kDay, 1, {{1, 5}})}).ok());
  CountFileOffsets before = writer.Offsets();
  faulty.Arm({.operation = testing::FileOperation::kAppend,
              .status = Status::ResourceExhausted("No space left on device"),
              .torn = true});
  Status status = writer.WriteBins({Bin(kDay + 60, 1, {{1, 6}})});
  EXPECT_EQ(status.code(), StatusCode::kResourceExhausted);
  EXPECT_EQ(faulty.faults_fired(), 1u);
  EXPECT_EQ(writer.Offsets(), before);
  ASSERT_TRUE(writer.WriteBins({Bin(kDay + 60, 1, {{1, 6}})}).ok());
  std::vector<std::string> lines = Lines(scratch.path() / "bins_2025-12-02.csv");
  ASSERT_EQ(lines.size(), 3u);
  EXPECT_EQ(Fields(lines[2])[3], "6");
  EXPECT_EQ(Fields(lines[2]).size(), Fields(lines[0]).size());
}

// A fault at each file operation of a series of writes, then a "restart" restoring the
// last offsets: the directory is always exactly as it was at those offsets.
TEST(CountFileWriter, FaultAtAnyOperationThenRestoreGivesTheCheckpointedFiles) {
  auto run = [](FileSystem& fs, const CountsOptions& options, CountFileOffsets* offsets) {
    auto created = CountFileWriter::Create(fs, options);
    if (!created.ok()) return created.status();
    CountFileWriter& writer = *created;
    writer.SetClusters({1});
    Status status = writer.WriteBins({Bin(kDay, 1, {{1, 5}})});
    if (offsets && status.ok()) *offsets = writer.Offsets();
    if (status.ok())
      status = writer.WriteBins({Bin(kDay + 60, 1, {{2, 1}}), Bin(kDay + 86400, 2, {{1, 3}})});
    SampleTally sample;
    sample.sample_id = "s";
    sample.first_seconds = kDay;
    sample.last_seconds = kDay;
    if (status.ok()) status = writer.WriteSample(sample);
    return status;
  };
  testing::ScratchDirectory counting;
  testing::FaultyFileSystem counter(PosixFileSystem::Instance());
  ASSERT_TRUE(run(counter, Options(counting.path()), nullptr).ok());
  const std::uint64_t operations = counter.failable_count();
  ASSERT_GT(operations, 10u);

  for (std::uint64_t n = 1; n <= operations; ++n) {
    testing::ScratchDirectory scratch;
    CountsOptions options = Options(scratch.path());
    testing::FaultyFileSystem faulty(PosixFileSystem::Instance());
    faulty.Arm({.operation = std::nullopt, .nth = n, .torn = true});
    CountFileOffsets offsets;  // nothing committed unless the first write got through
    {
      auto writer = CountFileWriter::Create(PosixFileSystem::Instance(), options);
      ASSERT_TRUE(writer.ok());
      offsets = writer->Offsets();
    }
    std::map<std::string, std::string> expected;
    Status status = run(faulty, options, &offsets);
    EXPECT_FALSE(status.ok()) << "operation " << n;
    // What the offsets promise: recompute by a clean run up to the same point.
    {
      testing::ScratchDirectory clean;
      CountsOptions clean_options = Options(clean.path());
      CountFileWriter writer = MakeWriter(PosixFileSystem::Instance(), clean_options);
      writer.SetClusters({1});
      if (offsets.bytes_by_file.size() > 1) {
        ASSERT_TRUE(writer.WriteBins({Bin(kDay, 1, {{1, 5}})}).ok());
      }
      expected = Contents(clean.path());
    }
    CountFileWriter restarted = MakeWriter(PosixFileSystem::Instance(), options);
    ASSERT_TRUE(restarted.RestoreTo(offsets).ok()) << "operation " << n;
    std::map<std::string, std::string> actual = Contents(scratch.path());
    // An empty journal and no journal say the same: nothing was ever committed.
    for (auto* contents : {&actual, &expected}) {
      auto journal = contents->find(std::string(CountFileWriter::kJournalName));
      if (journal != contents->end() && journal->second.empty()) contents->erase(journal);
    }
    EXPECT_EQ(actual, expected) << "operation " << n << " of " << operations;
  }
}

}  // namespace
}  // namespace seston
