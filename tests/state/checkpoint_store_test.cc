#include "state/checkpoint_store.h"

#include <gtest/gtest.h>

#include <fstream>
#include <sstream>

#include "support/faulty_file_system.h"
#include "support/test_paths.h"

namespace seston {
namespace {

using testing::FaultyFileSystem;
using testing::FileFault;
using testing::FileOperation;

StateOptions Options(const std::filesystem::path& dir) {
  StateOptions options;
  options.dir = dir.string();
  return options;
}

CheckpointStore MakeStore(FileSystem& fs, const StateOptions& options) {
  auto store = CheckpointStore::Create(fs, options);
  EXPECT_TRUE(store.ok()) << store.status().ToString();
  return std::move(store).value();
}

nlohmann::json State(int generation) {
  return {{"generation", generation},
          {"counts", {{"bins", {1.0 / 3.0, 2.5e-300, generation}}}},
          {"station", "Skerry Sound mooring B"}};
}

std::string Slurp(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

void Overwrite(const std::filesystem::path& path, const std::string& content) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << content;
}

LoadedCheckpoint LoadOk(CheckpointStore& store) {
  auto loaded = store.Load();
  EXPECT_TRUE(loaded.ok()) << loaded.status().ToString();
  return loaded.ok() ? *loaded : LoadedCheckpoint{};
}

TEST(CheckpointStore, EncodesCrc32LikeTheStandardCheckValue) {
  // CRC-32 (IEEE 802.3) of "123456789" is cbf43926: the check value of the catalogue of
  // parametrised CRC algorithms (from memory), confirmed with Python's zlib.crc32.
  std::string file = CheckpointStore::Encode("123456789");
  EXPECT_EQ(file, "seston-checkpoint v1 crc32=cbf43926 bytes=9\n123456789");
  auto payload = CheckpointStore::Decode(file);
  ASSERT_TRUE(payload.ok());
  EXPECT_EQ(*payload, "123456789");
}

TEST(CheckpointStore, NothingWrittenYetLoadsAsNoState) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  LoadedCheckpoint loaded = LoadOk(store);
  EXPECT_FALSE(loaded.state.has_value());
  EXPECT_FALSE(loaded.used_fallback);
  EXPECT_EQ(loaded.problem, "");
}

TEST(CheckpointStore, WrittenStateLoadsBackExactly) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  CheckpointStore reopened = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  LoadedCheckpoint loaded = LoadOk(reopened);
  ASSERT_TRUE(loaded.state.has_value());
  EXPECT_EQ(*loaded.state, State(1));
  EXPECT_EQ(loaded.state->at("counts").at("bins").at(0).get<double>(), 1.0 / 3.0);
  EXPECT_FALSE(loaded.used_fallback);
  EXPECT_TRUE(store.LastWriteStatus().ok());
  EXPECT_EQ(store.successful_writes(), 1u);
  EXPECT_FALSE(std::filesystem::exists(scratch.path() / "checkpoint.next"));
}

TEST(CheckpointStore, KeepsTheOneBeforeAsPrevious) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  ASSERT_TRUE(store.Write(State(3)).ok());
  auto previous = CheckpointStore::Decode(Slurp(scratch.path() / "checkpoint.previous"));
  ASSERT_TRUE(previous.ok());
  EXPECT_EQ(nlohmann::json::parse(*previous), State(2));
  EXPECT_EQ(*LoadOk(store).state, State(3));
}

TEST(CheckpointStore, TornCurrentFallsBackToPreviousAndSaysWhy) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  std::filesystem::path current = scratch.path() / "checkpoint.current";
  std::filesystem::resize_file(current, std::filesystem::file_size(current) / 2);
  LoadedCheckpoint loaded = LoadOk(store);
  ASSERT_TRUE(loaded.state.has_value());
  EXPECT_EQ(*loaded.state, State(1));
  EXPECT_TRUE(loaded.used_fallback);
  EXPECT_NE(loaded.problem.find("checkpoint.current"), std::string::npos) << loaded.problem;
  EXPECT_NE(loaded.problem.find("truncated"), std::string::npos) << loaded.problem;
}

TEST(CheckpointStore, BadChecksumFallsBackToPrevious) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  std::filesystem::path current = scratch.path() / "checkpoint.current";
  std::string content = Slurp(current);
  std::size_t digit = content.find("\"generation\":2");
  ASSERT_NE(digit, std::string::npos);
  content[digit + 13] = '7';  // same length, still JSON, wrong checksum
  Overwrite(current, content);
  LoadedCheckpoint loaded = LoadOk(store);
  EXPECT_EQ(*loaded.state, State(1));
  EXPECT_TRUE(loaded.used_fallback);
  EXPECT_NE(loaded.problem.find("checksum"), std::string::npos) << loaded.problem;
}

TEST(CheckpointStore, OtherFormatVersionIsRefusedByName) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  std::filesystem::path current = scratch.path() / "checkpoint.current";
  std::string content = Slurp(current);
  content.replace(content.find(" v1 "), 4, " v9 ");
  Overwrite(current, content);
  LoadedCheckpoint loaded = LoadOk(store);
  EXPECT_TRUE(loaded.used_fallback);
  EXPECT_NE(loaded.problem.find("\"v9\""), std::string::npos) << loaded.problem;
}

TEST(CheckpointStore, BothDamagedIsCorruptionNamingBothFiles) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  Overwrite(scratch.path() / "checkpoint.current", "not a checkpoint\n");
  std::filesystem::resize_file(scratch.path() / "checkpoint.previous", 30);
  auto loaded = store.Load();
  ASSERT_FALSE(loaded.ok());
  EXPECT_EQ(loaded.status().code(), StatusCode::kCorruption);
  const std::string message = loaded.status().message();
  EXPECT_NE(message.find((scratch.path() / "checkpoint.current").string()), std::string::npos);
  EXPECT_NE(message.find((scratch.path() / "checkpoint.previous").string()), std::string::npos);
  EXPECT_NE(message.find("does not start with"), std::string::npos) << message;
  EXPECT_NE(message.find("no header line"), std::string::npos) << message;
  EXPECT_NE(message.find("start_fresh_if_unreadable"), std::string::npos) << message;
}

TEST(CheckpointStore, StartFreshOptionGivesNoStateAndThePlainProblem) {
  testing::ScratchDirectory scratch;
  StateOptions options = Options(scratch.path());
  options.start_fresh_if_unreadable = true;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), options);
  ASSERT_TRUE(store.Write(State(1)).ok());
  Overwrite(scratch.path() / "checkpoint.current", "garbage");
  LoadedCheckpoint loaded = LoadOk(store);
  EXPECT_FALSE(loaded.state.has_value());
  EXPECT_NE(loaded.problem.find("checkpoint.previous is missing"), std::string::npos)
      << loaded.problem;
  EXPECT_NE(loaded.problem.find("starting with empty state"), std::string::npos);
  // The next write simply becomes the new current.
  ASSERT_TRUE(store.Write(State(2)).ok());
  EXPECT_EQ(*LoadOk(store).state, State(2));
}

TEST(CheckpointStore, DamagedCurrentNeverReplacesAGoodPrevious) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  Overwrite(scratch.path() / "checkpoint.current", "garbage");
  EXPECT_TRUE(LoadOk(store).used_fallback);
  ASSERT_TRUE(store.Write(State(3)).ok());
  auto previous = CheckpointStore::Decode(Slurp(scratch.path() / "checkpoint.previous"));
  ASSERT_TRUE(previous.ok()) << previous.status().ToString();
  EXPECT_EQ(nlohmann::json::parse(*previous), State(1));
}

// The heart of the contract: whichever operation of Write fails (or is torn), the
// directory loads as the old state or the new one, and the next Write repairs all.
TEST(CheckpointStore, FaultAtEveryOperationOfWriteLeavesOldOrNewState) {
  for (int existing : {1, 2}) {  // a current only, or a current and a previous
    std::uint64_t operations = 0;
    {
      testing::ScratchDirectory scratch;
      FaultyFileSystem counter(PosixFileSystem::Instance());
      CheckpointStore store = MakeStore(counter, Options(scratch.path()));
      for (int g = 1; g <= existing; ++g) ASSERT_TRUE(store.Write(State(g)).ok());
      counter.ResetCounts();
      ASSERT_TRUE(store.Write(State(10)).ok());
      operations = counter.failable_count();
    }
    ASSERT_GE(operations, 8u);  // open, append, sync, close, rename, sync dir, 2 renames, ...
    for (bool torn : {false, true}) {
      for (std::uint64_t n = 1; n <= operations; ++n) {
        SCOPED_TRACE("existing " + std::to_string(existing) + ", operation " + std::to_string(n) +
                     (torn ? ", torn" : ""));
        testing::ScratchDirectory scratch;
        FaultyFileSystem faulty(PosixFileSystem::Instance());
        CheckpointStore store = MakeStore(faulty, Options(scratch.path()));
        for (int g = 1; g <= existing; ++g) ASSERT_TRUE(store.Write(State(g)).ok());
        faulty.Arm({.operation = std::nullopt, .nth = n, .torn = torn});
        Status written = store.Write(State(10));
        EXPECT_EQ(faulty.faults_fired(), 1u);
        EXPECT_FALSE(written.ok());

        CheckpointStore reader = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
        LoadedCheckpoint loaded = LoadOk(reader);
        ASSERT_TRUE(loaded.state.has_value());
        EXPECT_TRUE(*loaded.state == State(existing) || *loaded.state == State(10))
            << loaded.state->dump();

        ASSERT_TRUE(store.Write(State(11)).ok());
        LoadedCheckpoint after = LoadOk(reader);
        EXPECT_EQ(*after.state, State(11));
        EXPECT_FALSE(after.used_fallback);
        auto previous = CheckpointStore::Decode(Slurp(scratch.path() / "checkpoint.previous"));
        EXPECT_TRUE(previous.ok()) << previous.status().ToString();
      }
    }
  }
}

TEST(CheckpointStore, FullDiskIsResourceExhaustedAndKeptAsFirstFailure) {
  testing::ScratchDirectory scratch;
  FaultyFileSystem faulty(PosixFileSystem::Instance());
  CheckpointStore store = MakeStore(faulty, Options(scratch.path()));
  ASSERT_TRUE(store.Write(State(1)).ok());
  EXPECT_TRUE(store.FirstWriteFailure().ok());

  faulty.Arm({.operation = FileOperation::kAppend,
              .status = Status::ResourceExhausted("No space left on device"),
              .persistent = true});
  Status full = store.Write(State(2));
  EXPECT_EQ(full.code(), StatusCode::kResourceExhausted);
  EXPECT_NE(full.message().find("checkpoint.next.tmp"), std::string::npos) << full.message();
  faulty.DisarmAll();
  faulty.Arm(
      {.operation = FileOperation::kRename, .status = Status::IoError("Input/output error")});
  EXPECT_EQ(store.Write(State(3)).code(), StatusCode::kIoError);

  EXPECT_EQ(store.FirstWriteFailure().code(), StatusCode::kResourceExhausted);
  EXPECT_EQ(store.LastWriteStatus().code(), StatusCode::kIoError);
  EXPECT_EQ(store.failed_writes(), 2u);
  faulty.DisarmAll();
  ASSERT_TRUE(store.Write(State(4)).ok());
  EXPECT_TRUE(store.LastWriteStatus().ok());
  EXPECT_EQ(store.FirstWriteFailure().code(), StatusCode::kResourceExhausted);
  EXPECT_EQ(*LoadOk(store).state, State(4));
}

TEST(CheckpointStore, OversizedStateIsRefusedBeforeTouchingTheDisk) {
  testing::ScratchDirectory scratch;
  StateOptions options = Options(scratch.path());
  options.max_checkpoint_bytes = 64;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), options);
  Status status = store.Write(State(1));
  EXPECT_EQ(status.code(), StatusCode::kResourceExhausted);
  EXPECT_NE(status.message().find("state.max_checkpoint_bytes"), std::string::npos);
  EXPECT_FALSE(std::filesystem::exists(scratch.path() / "checkpoint.next"));
}

TEST(CheckpointStore, StateThatIsNotUtf8IsAnInvalidArgument) {
  testing::ScratchDirectory scratch;
  CheckpointStore store = MakeStore(PosixFileSystem::Instance(), Options(scratch.path()));
  Status status = store.Write(nlohmann::json{{"sample_id", std::string("\xff\xfe")}});
  EXPECT_EQ(status.code(), StatusCode::kInvalidArgument);
  EXPECT_EQ(store.FirstWriteFailure().code(), StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace seston
