// Fault tests of CheckpointStore through the file-system seam, one named fault at a time
// (a failing rename at each of Write's three renames, a failing fsync of the new file or
// of the directory, a disk that stays full, a torn or bit-damaged checkpoint), and a long
// seeded run of random faults. Each must recover as checkpoint_store.h specifies: a
// fresh reader (a restart at the instant of the failure) loads the old state or the new
// one, never an error and never anything else, and the next Write commits.
#include <gtest/gtest.h>

#include <cstdint>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>

#include "state/checkpoint_store.h"
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

CheckpointStore MakeStore(FileSystem& fs, const std::filesystem::path& dir) {
  auto store = CheckpointStore::Create(fs, Options(dir));
  EXPECT_TRUE(store.ok()) << store.status().ToString();
  return std::move(store).value();
}

nlohmann::json State(int generation) {
  return {{"generation", generation},
          {"centres", {{0.1 * generation, 1.0 / 3.0}, {-2.5e-300, 7.0}}},
          {"committed_files", {"skerry-sound-b_20260601T000000Z_S000001.csv"}}};
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

// What a restarted daemon would load from `dir`, through a store of its own.
LoadedCheckpoint LoadAfterRestart(const std::filesystem::path& dir) {
  CheckpointStore reader = MakeStore(PosixFileSystem::Instance(), dir);
  auto loaded = reader.Load();
  EXPECT_TRUE(loaded.ok()) << loaded.status().ToString();
  return loaded.ok() ? *loaded : LoadedCheckpoint{};
}

nlohmann::json PreviousState(const std::filesystem::path& dir) {
  auto payload = CheckpointStore::Decode(Slurp(dir / CheckpointStore::kPreviousName));
  EXPECT_TRUE(payload.ok()) << payload.status().ToString();
  return payload.ok() ? nlohmann::json::parse(*payload) : nlohmann::json();
}

// Write renames next.tmp -> next (inside WriteFileAtomically), current -> previous, and
// next -> current. A failure of any of them loads as the old state (the third through
// the fallback, since current is gone by then), and the next Write still keeps the old
// state as its previous.
TEST(CheckpointStoreFaults, FailingRenameAtEachStepLoadsTheOldStateAndTheNextWriteCommits) {
  for (std::uint64_t rename = 1; rename <= 3; ++rename) {
    SCOPED_TRACE("rename " + std::to_string(rename));
    testing::ScratchDirectory scratch;
    FaultyFileSystem faulty(PosixFileSystem::Instance());
    CheckpointStore store = MakeStore(faulty, scratch.path());
    ASSERT_TRUE(store.Write(State(1)).ok());
    ASSERT_TRUE(store.Write(State(2)).ok());

    faulty.Arm({.operation = FileOperation::kRename,
                .nth = rename,
                .status = Status::IoError("Input/output error")});
    Status written = store.Write(State(3));
    EXPECT_EQ(written.code(), StatusCode::kIoError);
    EXPECT_EQ(faulty.faults_fired(), 1u);

    LoadedCheckpoint loaded = LoadAfterRestart(scratch.path());
    ASSERT_TRUE(loaded.state.has_value());
    EXPECT_EQ(*loaded.state, State(2));
    EXPECT_EQ(loaded.used_fallback, rename == 3) << loaded.problem;

    ASSERT_TRUE(store.Write(State(4)).ok());
    LoadedCheckpoint after = LoadAfterRestart(scratch.path());
    EXPECT_EQ(*after.state, State(4));
    EXPECT_FALSE(after.used_fallback);
    EXPECT_EQ(PreviousState(scratch.path()), State(2));
  }
}

TEST(CheckpointStoreFaults, FailingFsyncOfTheNewFileLeavesCurrentAndPreviousUntouched) {
  testing::ScratchDirectory scratch;
  FaultyFileSystem faulty(PosixFileSystem::Instance());
  CheckpointStore store = MakeStore(faulty, scratch.path());
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  const std::string current = Slurp(scratch.path() / CheckpointStore::kCurrentName);
  const std::string previous = Slurp(scratch.path() / CheckpointStore::kPreviousName);

  faulty.Arm({.operation = FileOperation::kSync, .status = Status::IoError("Input/output error")});
  EXPECT_EQ(store.Write(State(3)).code(), StatusCode::kIoError);

  EXPECT_EQ(Slurp(scratch.path() / CheckpointStore::kCurrentName), current);
  EXPECT_EQ(Slurp(scratch.path() / CheckpointStore::kPreviousName), previous);
  EXPECT_EQ(*LoadAfterRestart(scratch.path()).state, State(2));
  EXPECT_EQ(store.FirstWriteFailure().code(), StatusCode::kIoError);

  ASSERT_TRUE(store.Write(State(3)).ok());
  EXPECT_EQ(*LoadAfterRestart(scratch.path()).state, State(3));
}

// Write fsyncs the directory twice: after naming checkpoint.next, and after the final
// rename. When the last one fails the renames have happened: Write reports the failure
// (the new state may not survive a power cut), a restart without a power cut loads the
// new state, and the next Write commits.
TEST(CheckpointStoreFaults, FailingDirectoryFsyncIsReportedAndLoadsOldOrNewState) {
  for (std::uint64_t sync = 1; sync <= 2; ++sync) {
    SCOPED_TRACE("directory fsync " + std::to_string(sync));
    testing::ScratchDirectory scratch;
    FaultyFileSystem faulty(PosixFileSystem::Instance());
    CheckpointStore store = MakeStore(faulty, scratch.path());
    ASSERT_TRUE(store.Write(State(1)).ok());

    faulty.Arm({.operation = FileOperation::kSyncDirectory,
                .nth = sync,
                .status = Status::IoError("Input/output error")});
    EXPECT_EQ(store.Write(State(2)).code(), StatusCode::kIoError);
    EXPECT_EQ(faulty.faults_fired(), 1u);
    EXPECT_EQ(*LoadAfterRestart(scratch.path()).state, sync == 1 ? State(1) : State(2));

    ASSERT_TRUE(store.Write(State(3)).ok());
    EXPECT_EQ(*LoadAfterRestart(scratch.path()).state, State(3));
  }
}

TEST(CheckpointStoreFaults, DiskFullKeepsTheOldFilesByteForByteAndResumesWhenSpaceReturns) {
  testing::ScratchDirectory scratch;
  FaultyFileSystem faulty(PosixFileSystem::Instance());
  CheckpointStore store = MakeStore(faulty, scratch.path());
  ASSERT_TRUE(store.Write(State(1)).ok());
  ASSERT_TRUE(store.Write(State(2)).ok());
  const std::string current = Slurp(scratch.path() / CheckpointStore::kCurrentName);
  const std::string previous = Slurp(scratch.path() / CheckpointStore::kPreviousName);

  // ENOSPC on every write of data, as a full disk gives, for five checkpoints in a row.
  faulty.Arm({.operation = FileOperation::kAppend,
              .status = Status::ResourceExhausted("No space left on device"),
              .persistent = true});
  for (int attempt = 3; attempt < 8; ++attempt) {
    EXPECT_EQ(store.Write(State(attempt)).code(), StatusCode::kResourceExhausted);
    EXPECT_EQ(Slurp(scratch.path() / CheckpointStore::kCurrentName), current);
    EXPECT_EQ(Slurp(scratch.path() / CheckpointStore::kPreviousName), previous);
    EXPECT_EQ(*LoadAfterRestart(scratch.path()).state, State(2));
  }
  EXPECT_EQ(store.failed_writes(), 5u);

  faulty.DisarmAll();
  ASSERT_TRUE(store.Write(State(8)).ok());
  EXPECT_EQ(*LoadAfterRestart(scratch.path()).state, State(8));
  EXPECT_EQ(PreviousState(scratch.path()), State(2));
  EXPECT_EQ(store.FirstWriteFailure().code(), StatusCode::kResourceExhausted);
  EXPECT_TRUE(store.LastWriteStatus().ok());
}

TEST(CheckpointStoreFaults, TornWriteOfTheNewFileThenACrashLoadsTheOldState) {
  testing::ScratchDirectory scratch;
  FaultyFileSystem faulty(PosixFileSystem::Instance());
  CheckpointStore store = MakeStore(faulty, scratch.path());
  ASSERT_TRUE(store.Write(State(1)).ok());

  // The write is torn and the process dies before it can remove the temporary file (a
  // failing Remove stands for the crash).
  faulty.Arm({.operation = FileOperation::kAppend,
              .status = Status::ResourceExhausted("No space left on device"),
              .torn = true});
  faulty.Arm({.operation = FileOperation::kRemove});
  EXPECT_EQ(store.Write(State(2)).code(), StatusCode::kResourceExhausted);
  EXPECT_EQ(faulty.faults_fired(), 2u);
  // Half of the new file is on disk under its temporary name, which Load ignores.
  const std::string torn = Slurp(scratch.path() / "checkpoint.next.tmp");
  EXPECT_FALSE(torn.empty());
  EXPECT_FALSE(CheckpointStore::Decode(torn).ok());

  LoadedCheckpoint loaded = LoadAfterRestart(scratch.path());
  EXPECT_EQ(*loaded.state, State(1));
  EXPECT_FALSE(loaded.used_fallback);
}

// A power cut can leave checkpoint.current cut short or with damaged bytes. Cutting it
// at every length and flipping every single bit of it must never load a wrong state:
// either the damage is found (CRC-32 detects every single-bit error, a property of every
// CRC with more than one term — from memory) and the previous checkpoint is loaded, or
// the payload is intact (a flip that only changes the case of a header hex digit) and
// the state is the one written.
TEST(CheckpointStoreFaults, EveryTruncationAndEveryBitFlipOfCurrentLoadsAGoodState) {
  testing::ScratchDirectory scratch;
  {
    CheckpointStore store = MakeStore(PosixFileSystem::Instance(), scratch.path());
    ASSERT_TRUE(store.Write(State(1)).ok());
    ASSERT_TRUE(store.Write(State(2)).ok());
  }
  const std::filesystem::path current_path = scratch.path() / CheckpointStore::kCurrentName;
  const std::string current = Slurp(current_path);
  ASSERT_GT(current.size(), 100u);

  for (std::size_t length = 0; length < current.size(); ++length) {
    Overwrite(current_path, current.substr(0, length));
    LoadedCheckpoint loaded = LoadAfterRestart(scratch.path());
    ASSERT_TRUE(loaded.state.has_value()) << "cut at " << length;
    EXPECT_EQ(*loaded.state, State(1)) << "cut at " << length;
    EXPECT_TRUE(loaded.used_fallback) << "cut at " << length;
  }

  int accepted_flips = 0;
  for (std::size_t byte = 0; byte < current.size(); ++byte) {
    for (int bit = 0; bit < 8; ++bit) {
      std::string damaged = current;
      damaged[byte] = static_cast<char>(damaged[byte] ^ (1 << bit));
      Overwrite(current_path, damaged);
      LoadedCheckpoint loaded = LoadAfterRestart(scratch.path());
      ASSERT_TRUE(loaded.state.has_value()) << "byte " << byte << " bit " << bit;
      if (loaded.used_fallback) {
        EXPECT_EQ(*loaded.state, State(1)) << "byte " << byte << " bit " << bit;
      } else {
        EXPECT_EQ(*loaded.state, State(2)) << "byte " << byte << " bit " << bit;
        ++accepted_flips;
      }
    }
  }
  // Only the header's hex letters can change case without changing their value.
  EXPECT_LE(accepted_flips, 8);
}

// Many writes, each (at random, seeded) hit by a fault at one of its operations: an I/O
// error, a full disk or a torn write. After every write a restart loads either what the
// last restart loaded or the state just attempted, and the store never stops writing.
TEST(CheckpointStoreFaults, RandomFaultsOverManyWritesAlwaysLoadTheOldOrTheNewState) {
  testing::ScratchDirectory scratch;
  FaultyFileSystem faulty(PosixFileSystem::Instance());
  CheckpointStore store = MakeStore(faulty, scratch.path());
  ASSERT_TRUE(store.Write(State(0)).ok());
  nlohmann::json durable = State(0);

  std::mt19937_64 random(20260601);
  int failures = 0;
  for (int generation = 1; generation <= 300; ++generation) {
    SCOPED_TRACE("generation " + std::to_string(generation));
    faulty.DisarmAll();
    const int kind = static_cast<int>(random() % 4);
    if (kind > 0) {
      FileFault fault;
      fault.nth = 1 + random() % 12;
      fault.status = kind == 1 ? Status::IoError("Input/output error")
                               : Status::ResourceExhausted("No space left on device");
      fault.torn = kind == 3;
      faulty.Arm(fault);
    }
    const std::uint64_t fired_before = faulty.faults_fired();
    const Status written = store.Write(State(generation));
    if (!written.ok()) ++failures;
    EXPECT_EQ(written.ok(), faulty.faults_fired() == fired_before) << written.ToString();

    LoadedCheckpoint loaded = LoadAfterRestart(scratch.path());
    ASSERT_TRUE(loaded.state.has_value());
    if (written.ok()) {
      EXPECT_EQ(*loaded.state, State(generation));
    } else {
      EXPECT_TRUE(*loaded.state == durable || *loaded.state == State(generation))
          << loaded.state->dump();
    }
    durable = *loaded.state;
  }
  EXPECT_GT(failures, 100);
  faulty.DisarmAll();
  ASSERT_TRUE(store.Write(State(1000)).ok());
  EXPECT_EQ(*LoadAfterRestart(scratch.path()).state, State(1000));
}

}  // namespace
}  // namespace seston
