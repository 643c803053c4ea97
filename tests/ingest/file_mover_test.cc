#include "ingest/file_mover.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "support/test_paths.h"

namespace seston {
namespace {

namespace fs = std::filesystem;

void WriteFile(const fs::path& path, const std::string& content) {
  std::ofstream out(path, std::ios::binary);
  out << content;
}

std::string ReadText(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

// Every path under `root`, relative to it, sorted.
std::vector<std::string> Tree(const fs::path& root) {
  std::vector<std::string> paths;
  for (const auto& entry : fs::recursive_directory_iterator(root)) {
    paths.push_back(fs::relative(entry.path(), root).string());
  }
  std::sort(paths.begin(), paths.end());
  return paths;
}

// Epoch seconds checked with GNU date: `date -u -d @1796255999` is Wed Dec 2 23:59:59 UTC
// 2026, and 1700000000 is 2023-11-14T22:13:20Z.
constexpr double kLastSecondOf2026Dec02 = 1796255999;
constexpr double kWallAt2023Nov14 = 1700000000;

class FileMoverTest : public ::testing::Test {
 protected:
  void SetUp() override {
    drop_ = scratch_.path() / "drop";
    fs::create_directories(drop_);
    options_.drop_dir = drop_.string();
    auto made = FileMover::Create(PosixFileSystem::Instance(), clock_, options_);
    ASSERT_TRUE(made.ok()) << made.status().ToString();
    mover_.emplace(std::move(*made));
  }

  testing::ScratchDirectory scratch_;
  fs::path drop_;
  InputOptions options_;
  ManualClock clock_{kWallAt2023Nov14};
  std::optional<FileMover> mover_;
};

TEST_F(FileMoverTest, DefaultFoldersSitInsideTheDropDirectory) {
  EXPECT_EQ(mover_->done_dir(), drop_ / "done");
  EXPECT_EQ(mover_->quarantine_dir(), drop_ / "quarantine");
  EXPECT_TRUE(fs::is_directory(drop_ / "done"));
  EXPECT_TRUE(fs::is_directory(drop_ / "quarantine"));
}

TEST_F(FileMoverTest, DoneFileGoesToTheUtcDayOfItsEventTime) {
  WriteFile(drop_ / "late.csv", "late\n");
  WriteFile(drop_ / "early.csv", "early\n");
  auto late = mover_->MoveToDone("late.csv", kLastSecondOf2026Dec02);
  auto early = mover_->MoveToDone("early.csv", kLastSecondOf2026Dec02 + 1);
  ASSERT_TRUE(late.ok()) << late.status().ToString();
  ASSERT_TRUE(early.ok()) << early.status().ToString();
  EXPECT_EQ(*late, drop_ / "done" / "2026-12-02" / "late.csv");
  EXPECT_EQ(*early, drop_ / "done" / "2026-12-03" / "early.csv");
  EXPECT_EQ(ReadText(*late), "late\n");
  EXPECT_FALSE(fs::exists(drop_ / "late.csv"));
}

TEST_F(FileMoverTest, NeverOverwritesAnEarlierFileOfTheSameName) {
  for (const char* content : {"first\n", "second\n", "third\n"}) {
    WriteFile(drop_ / "S1.csv", content);
    ASSERT_TRUE(mover_->MoveToDone("S1.csv", kLastSecondOf2026Dec02).ok());
  }
  fs::path day = drop_ / "done" / "2026-12-02";
  EXPECT_EQ(ReadText(day / "S1.csv"), "first\n");
  EXPECT_EQ(ReadText(day / "S1.csv.1"), "second\n");
  EXPECT_EQ(ReadText(day / "S1.csv.2"), "third\n");
}

TEST_F(FileMoverTest, QuarantineLeavesAReasonNoteBesideTheFile) {
  WriteFile(drop_ / "S9.csv", "tme,area\n");
  auto moved = mover_->MoveToQuarantine(
      "S9.csv", {"header has no column \"time\"", 1, "rename the column to time"});
  ASSERT_TRUE(moved.ok()) << moved.status().ToString();
  EXPECT_EQ(*moved, drop_ / "quarantine" / "S9.csv");
  std::string note = ReadText(drop_ / "quarantine" / "S9.csv.reason");
  EXPECT_NE(note.find("file: " + (drop_ / "S9.csv").string() + "\n"), std::string::npos);
  EXPECT_NE(note.find("problem: header has no column \"time\"\n"), std::string::npos);
  EXPECT_NE(note.find("line: 1\n"), std::string::npos);
  EXPECT_NE(note.find("when: 2023-11-14T22:13:20Z\n"), std::string::npos);
  EXPECT_NE(note.find("what to do: rename the column to time\n"), std::string::npos);
  EXPECT_FALSE(fs::exists(drop_ / "quarantine" / "S9.csv.reason.tmp"));
}

TEST_F(FileMoverTest, QuarantineNeverOverwritesAFileOrANote) {
  WriteFile(drop_ / "quarantine" / "S9.csv.reason", "an older note\n");
  WriteFile(drop_ / "S9.csv", "x\n");
  auto moved = mover_->MoveToQuarantine("S9.csv", {"too many bad rows", 0, ""});
  ASSERT_TRUE(moved.ok());
  EXPECT_EQ(*moved, drop_ / "quarantine" / "S9.csv.1");
  EXPECT_EQ(ReadText(drop_ / "quarantine" / "S9.csv.reason"), "an older note\n");
  std::string note = ReadText(drop_ / "quarantine" / "S9.csv.1.reason");
  EXPECT_NE(note.find("line: whole file\n"), std::string::npos);
  EXPECT_NE(note.find("move it back into " + drop_.string()), std::string::npos)
      << "the default advice names the drop directory";
}

TEST_F(FileMoverTest, OddButSingleNamesAreMovedAsTheyAre) {
  const std::string names[] = {"a b.csv", "line\nbreak.csv", "\xff\xfe.csv"};
  for (const std::string& name : names) {
    WriteFile(drop_ / name, "x\n");
    auto moved = mover_->MoveToDone(name, kLastSecondOf2026Dec02);
    ASSERT_TRUE(moved.ok()) << moved.status().ToString();
    EXPECT_EQ(moved->filename().string(), name);
    EXPECT_TRUE(fs::exists(drop_ / "done" / "2026-12-02" / name));
  }
  WriteFile(drop_ / "evil\nwhen: never.csv", "x\n");
  ASSERT_TRUE(mover_->MoveToQuarantine("evil\nwhen: never.csv", {"bad", 0, ""}).ok());
  std::string note = ReadText(drop_ / "quarantine" / "evil\nwhen: never.csv.reason");
  EXPECT_EQ(std::count(note.begin(), note.end(), '\n'), 7)
      << "a newline in the name must not add a line to the note:\n"
      << note;
  EXPECT_NE(note.find("evil\\nwhen: never.csv"), std::string::npos);
}

TEST_F(FileMoverTest, NamesThatLeaveTheDropDirectoryAreRefused) {
  WriteFile(scratch_.path() / "x.csv", "outside\n");
  fs::create_directories(drop_ / "sub");
  WriteFile(drop_ / "sub" / "y.csv", "inside a subfolder\n");
  std::vector<std::string> before = Tree(scratch_.path());
  for (const std::string& name :
       {std::string("../x.csv"), std::string("sub/y.csv"), std::string(".."), std::string("."),
        std::string(""), (scratch_.path() / "x.csv").string()}) {
    auto done = mover_->MoveToDone(name, kLastSecondOf2026Dec02);
    ASSERT_FALSE(done.ok()) << name;
    EXPECT_EQ(done.status().code(), StatusCode::kInvalidArgument) << name;
    auto quarantined = mover_->MoveToQuarantine(name, {"bad", 0, ""});
    ASSERT_FALSE(quarantined.ok()) << name;
    EXPECT_EQ(quarantined.status().code(), StatusCode::kInvalidArgument) << name;
  }
  EXPECT_EQ(Tree(scratch_.path()), before) << "nothing was moved or created";
}

TEST_F(FileMoverTest, MissingFileAndBadEventTimeAreErrors) {
  EXPECT_EQ(mover_->MoveToDone("absent.csv", kLastSecondOf2026Dec02).status().code(),
            StatusCode::kNotFound);
  WriteFile(drop_ / "S1.csv", "x\n");
  EXPECT_EQ(mover_->MoveToDone("S1.csv", -1).status().code(), StatusCode::kInvalidArgument);
  EXPECT_EQ(mover_->MoveToDone("S1.csv", std::nan("")).status().code(),
            StatusCode::kInvalidArgument);
  EXPECT_TRUE(fs::exists(drop_ / "S1.csv"));
}

}  // namespace
}  // namespace seston
