#include "ingest/drop_directory_watcher.h"

#include <gtest/gtest.h>

#include <boost/asio/post.hpp>
#include <chrono>
#include <condition_variable>
#include <filesystem>
#include <fstream>
#include <mutex>
#include <thread>

#include "ingest/drop_file_name.h"
#include "support/test_paths.h"

namespace seston {
namespace {

using Names = std::vector<std::string>;

void WriteFile(const std::filesystem::path& path, const std::string& content) {
  std::ofstream out(path, std::ios::binary | std::ios::app);
  out << content;
}

// Writes under a temporary name, then renames into place, as a careful instrument does.
void DropByRename(const std::filesystem::path& dir, const std::string& name) {
  WriteFile(dir / (name + ".part"), "time,area_um2\n1764633600,310.5\n");
  std::filesystem::rename(dir / (name + ".part"), dir / name);
}

InputOptions OptionsFor(const std::filesystem::path& dir, WatchMode mode) {
  InputOptions options;
  options.drop_dir = dir.string();
  options.settle_seconds = 5.0;
  options.rescan_seconds = 30.0;
  options.watch = mode;
  return options;
}

// The decisions, driven by hand: the io_context never runs, time is a ManualClock.
class WatcherDecisions : public ::testing::Test {
 protected:
  std::unique_ptr<DropDirectoryWatcher> Make(InputOptions options) {
    auto made = DropDirectoryWatcher::Create(io_, options, PosixFileSystem::Instance(), clock_,
                                             [this] { ++ready_calls_; });
    EXPECT_TRUE(made.ok()) << made.status().ToString();
    return made.ok() ? std::move(*made) : nullptr;
  }
  std::unique_ptr<DropDirectoryWatcher> Make() {
    return Make(OptionsFor(scratch_.path(), WatchMode::kPoll));
  }

  testing::ScratchDirectory scratch_;
  boost::asio::io_context io_;
  ManualClock clock_;
  int ready_calls_ = 0;
};

TEST_F(WatcherDecisions, RenamedInFileIsReadyAtOnce) {
  auto watcher = Make();
  DropByRename(scratch_.path(), "S0001.csv");
  watcher->Observe({WatchEventKind::kMovedIn, "S0001.csv"});
  EXPECT_EQ(watcher->ReadyFiles(), Names{"S0001.csv"});
  EXPECT_EQ(ready_calls_, 1);
  EXPECT_TRUE(watcher->ReadyFiles().empty()) << "a name is handed out once";
}

TEST_F(WatcherDecisions, FileWrittenInPlaceIsReadyOnlyAfterSettling) {
  auto watcher = Make();
  WriteFile(scratch_.path() / "S0001.csv", "time\n1\n");
  watcher->Observe({WatchEventKind::kWritten, "S0001.csv"});
  watcher->Rescan();
  EXPECT_TRUE(watcher->ReadyFiles().empty());
  clock_.Advance(4.9);
  watcher->Rescan();
  EXPECT_TRUE(watcher->ReadyFiles().empty()) << "4.9 s unchanged is less than the 5 s settle";
  clock_.Advance(0.2);
  watcher->Rescan();
  EXPECT_EQ(watcher->ReadyFiles(), Names{"S0001.csv"});
}

TEST_F(WatcherDecisions, GrowingFileIsNotTakenUntilItStops) {
  auto watcher = Make();
  auto path = scratch_.path() / "S0001.csv";
  WriteFile(path, "time\n");
  watcher->Rescan();
  for (int i = 0; i < 4; ++i) {  // 12 s of writing, a row every 3 s
    clock_.Advance(3.0);
    WriteFile(path, std::to_string(i) + "\n");
    watcher->Rescan();
    EXPECT_TRUE(watcher->ReadyFiles().empty()) << "still growing after " << 3 * (i + 1) << " s";
  }
  clock_.Advance(4.0);
  watcher->Rescan();
  EXPECT_TRUE(watcher->ReadyFiles().empty()) << "4 s since the last row";
  clock_.Advance(1.0);
  watcher->Rescan();
  EXPECT_EQ(watcher->ReadyFiles(), Names{"S0001.csv"});
}

TEST_F(WatcherDecisions, TemporaryForeignAndLinkedNamesAreIgnored) {
  auto watcher = Make();
  const auto& dir = scratch_.path();
  for (const char* name : {".S1.csv", "S2.csv.part", "S3.tmp", "S4.csv~", "S5.txt", ".csv"}) {
    WriteFile(dir / name, "x\n");
  }
  WriteFile(dir / "S6.csv", "x\n");
  std::filesystem::create_directory(dir / "done");
  std::filesystem::create_directory(dir / "S8.csv");  // a directory with a taken name
  testing::ScratchDirectory outside;
  WriteFile(outside.path() / "secret.csv", "x\n");
  std::filesystem::create_symlink(outside.path() / "secret.csv", dir / "S7.csv");

  watcher->Observe({WatchEventKind::kMovedIn, ".S1.csv"});
  watcher->Observe({WatchEventKind::kMovedIn, "S2.csv.part"});
  watcher->Observe({WatchEventKind::kMovedIn, "S7.csv"});
  EXPECT_TRUE(watcher->ReadyFiles().empty());
  watcher->Rescan();
  clock_.Advance(5.0);
  watcher->Rescan();
  EXPECT_EQ(watcher->ReadyFiles(), Names{"S6.csv"});
  // Six temporary or foreign names and the link; directories are not counted.
  EXPECT_EQ(watcher->ignored_names(), 7u);
}

TEST(DropFileName, AcceptsOnlySafeNamesWithTheSuffix) {
  EXPECT_TRUE(IsDropFileName("S20261202T030405Z.csv", ".csv"));
  EXPECT_TRUE(IsDropFileName("a b.csv", ".csv"));
  EXPECT_TRUE(IsDropFileName("line\nbreak.csv", ".csv"));
  EXPECT_FALSE(IsDropFileName("S1.CSV", ".csv")) << "the suffix is case-sensitive";
  EXPECT_FALSE(IsDropFileName("../S1.csv", ".csv"));
  EXPECT_FALSE(IsDropFileName("sub/S1.csv", ".csv"));
  EXPECT_FALSE(IsSafeEntryName(".."));
  EXPECT_FALSE(IsSafeEntryName("."));
  EXPECT_FALSE(IsSafeEntryName(""));
  EXPECT_FALSE(IsSafeEntryName(std::string("a\0b", 3)));
  EXPECT_EQ(EscapeNameForText("a\nb\\\xff.csv"), "a\\nb\\\\\\xff.csv");
}

TEST_F(WatcherDecisions, ReadyFilesComeInNameOrder) {
  auto watcher = Make();
  // Written out of order; names carry the acquisition time, so name order is time order.
  for (const char* name : {"S20261202T0300Z.csv", "S20261202T0100Z.csv", "S20261202T0200Z.csv"}) {
    WriteFile(scratch_.path() / name, "x\n");
  }
  watcher->Rescan();
  clock_.Advance(5.0);
  watcher->Rescan();
  EXPECT_EQ(watcher->ReadyFiles(),
            (Names{"S20261202T0100Z.csv", "S20261202T0200Z.csv", "S20261202T0300Z.csv"}));
}

TEST_F(WatcherDecisions, OverflowListsTheDirectoryAtOnce) {
  auto watcher = Make();
  WriteFile(scratch_.path() / "S0001.csv", "x\n");  // its events were lost
  EXPECT_EQ(watcher->tracked_files(), 0u);
  watcher->Observe({WatchEventKind::kOverflow, ""});
  EXPECT_EQ(watcher->inotify_overflows(), 1u);
  EXPECT_EQ(watcher->rescans(), 1u);
  EXPECT_EQ(watcher->tracked_files(), 1u);
  clock_.Advance(5.0);
  watcher->Observe({WatchEventKind::kOverflow, ""});
  EXPECT_EQ(watcher->ReadyFiles(), Names{"S0001.csv"});
}

TEST_F(WatcherDecisions, HandledFileIsNotHandedOutAgainButForgottenOneIs) {
  auto watcher = Make();
  DropByRename(scratch_.path(), "S1.csv");
  DropByRename(scratch_.path(), "S2.csv");
  watcher->Observe({WatchEventKind::kMovedIn, "S1.csv"});
  watcher->Observe({WatchEventKind::kMovedIn, "S2.csv"});
  ASSERT_EQ(watcher->ReadyFiles(), (Names{"S1.csv", "S2.csv"}));
  watcher->MarkHandled("S1.csv");  // e.g. committed, but the move to done/ failed
  watcher->Forget("S2.csv");       // e.g. a transient read error: try again
  for (int i = 0; i < 3; ++i) {
    watcher->Rescan();
    clock_.Advance(5.0);
  }
  EXPECT_EQ(watcher->ReadyFiles(), Names{"S2.csv"});
}

TEST_F(WatcherDecisions, VanishedFilesAreDropped) {
  auto watcher = Make();
  DropByRename(scratch_.path(), "S1.csv");
  DropByRename(scratch_.path(), "S2.csv");
  watcher->Rescan();
  EXPECT_EQ(watcher->tracked_files(), 2u);
  std::filesystem::remove(scratch_.path() / "S1.csv");
  watcher->Rescan();
  EXPECT_EQ(watcher->tracked_files(), 1u);
  watcher->Observe({WatchEventKind::kRemoved, "S2.csv"});
  EXPECT_EQ(watcher->tracked_files(), 0u);
}

TEST_F(WatcherDecisions, BacklogBeyondTheBoundWaitsInNameOrder) {
  InputOptions options = OptionsFor(scratch_.path(), WatchMode::kPoll);
  options.max_tracked_files = 2;
  auto watcher = Make(options);
  for (const char* name : {"S5.csv", "S4.csv", "S3.csv", "S2.csv", "S1.csv"}) {
    WriteFile(scratch_.path() / name, "x\n");
  }
  watcher->Rescan();
  EXPECT_EQ(watcher->tracked_files(), 2u);
  clock_.Advance(5.0);
  watcher->Rescan();
  ASSERT_EQ(watcher->ReadyFiles(), (Names{"S1.csv", "S2.csv"}));
  std::filesystem::remove(scratch_.path() / "S1.csv");  // moved to done/ by the pipeline
  std::filesystem::remove(scratch_.path() / "S2.csv");
  watcher->Rescan();
  clock_.Advance(5.0);
  watcher->Rescan();
  EXPECT_EQ(watcher->ReadyFiles(), (Names{"S3.csv", "S4.csv"}));
}

TEST_F(WatcherDecisions, CreateRefusesAMissingDirectoryAndBadTimes) {
  InputOptions options = OptionsFor(scratch_.path() / "missing", WatchMode::kPoll);
  auto missing =
      DropDirectoryWatcher::Create(io_, options, PosixFileSystem::Instance(), clock_, nullptr);
  ASSERT_FALSE(missing.ok());
  EXPECT_NE(missing.status().message().find("missing"), std::string::npos);
  options = OptionsFor(scratch_.path(), WatchMode::kPoll);
  options.rescan_seconds = 0;
  EXPECT_EQ(DropDirectoryWatcher::Create(io_, options, PosixFileSystem::Instance(), clock_, nullptr)
                .status()
                .code(),
            StatusCode::kInvalidArgument);
}

TEST_F(WatcherDecisions, PollIntervalIsAtMostTwoSeconds) {
  EXPECT_EQ(Make()->poll_interval_seconds(), 2.0);
  EXPECT_EQ(Make(OptionsFor(scratch_.path(), WatchMode::kInotify))->poll_interval_seconds(), 30.0);
}

// The OS part with a real io_context, real inotify and the system clock.
class WatcherOnTheSystem : public ::testing::Test {
 protected:
  void StartWatching(InputOptions options) {
    auto made = DropDirectoryWatcher::Create(io_, options, PosixFileSystem::Instance(),
                                             SystemClock::Instance(), [this] {
                                               std::lock_guard lock(mutex_);
                                               ++ready_calls_;
                                               ready_.notify_all();
                                             });
    ASSERT_TRUE(made.ok()) << made.status().ToString();
    watcher_ = std::move(*made);
    ASSERT_TRUE(watcher_->Start().ok());
    thread_ = std::thread([this] { io_.run(); });
  }

  // Seconds until on_ready was called, or a negative number after `limit` seconds.
  double SecondsUntilReady(double limit) {
    auto start = std::chrono::steady_clock::now();
    std::unique_lock lock(mutex_);
    bool got = ready_.wait_for(lock, std::chrono::duration<double>(limit),
                               [this] { return ready_calls_ > 0; });
    if (!got) return -1;
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  }

  void TearDown() override {
    if (!watcher_) return;
    boost::asio::post(io_, [this] { watcher_->Stop(); });
    thread_.join();
  }

  testing::ScratchDirectory scratch_;
  boost::asio::io_context io_;
  std::unique_ptr<DropDirectoryWatcher> watcher_;
  std::thread thread_;
  std::mutex mutex_;
  std::condition_variable ready_;
  int ready_calls_ = 0;
};

TEST_F(WatcherOnTheSystem, RenamedInFileWakesThePipelineAtOnce) {
  // Settle and rescan far longer than the wait: only the inotify event can make it ready.
  StartWatching(OptionsFor(scratch_.path(), WatchMode::kInotify));
  DropByRename(scratch_.path(), "S0001.csv");
  double seconds = SecondsUntilReady(3.0);
  ASSERT_GE(seconds, 0) << "no on_ready within 3 s";
  EXPECT_EQ(watcher_->ReadyFiles(), Names{"S0001.csv"});
  EXPECT_GE(watcher_->watch_events(), 1u);
}

TEST_F(WatcherOnTheSystem, FileWrittenInPlaceAndLeftAloneBecomesReadyByTheSettleTimer) {
  InputOptions options = OptionsFor(scratch_.path(), WatchMode::kInotify);
  options.settle_seconds = 0.3;
  StartWatching(options);
  auto start = std::chrono::steady_clock::now();
  WriteFile(scratch_.path() / "S0001.csv", "time\n1\n");
  ASSERT_GE(SecondsUntilReady(3.0), 0) << "no on_ready within 3 s (rescan is 30 s)";
  EXPECT_GE(std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count(), 0.3);
  EXPECT_EQ(watcher_->ReadyFiles(), Names{"S0001.csv"});
}

TEST_F(WatcherOnTheSystem, FilesArrivingWhileStoppedAreFoundByTheFirstListing) {
  InputOptions options = OptionsFor(scratch_.path(), WatchMode::kInotify);
  options.settle_seconds = 0.2;
  auto made = DropDirectoryWatcher::Create(io_, options, PosixFileSystem::Instance(),
                                           SystemClock::Instance(), nullptr);
  ASSERT_TRUE(made.ok());
  ASSERT_TRUE((*made)->Start().ok());
  (*made)->Stop();  // the inotify watch is closed: no event is recorded for this file
  DropByRename(scratch_.path(), "S0001.csv");
  made->reset();
  StartWatching(options);
  ASSERT_GE(SecondsUntilReady(3.0), 0);
  EXPECT_GE(watcher_->rescans(), 1u);
  EXPECT_EQ(watcher_->ReadyFiles(), Names{"S0001.csv"});
}

TEST_F(WatcherOnTheSystem, PollModeWorksWithoutInotify) {
  InputOptions options = OptionsFor(scratch_.path(), WatchMode::kPoll);
  options.rescan_seconds = 0.1;
  options.settle_seconds = 0.2;
  StartWatching(options);
  DropByRename(scratch_.path(), "S0001.csv");
  ASSERT_GE(SecondsUntilReady(3.0), 0);
  EXPECT_EQ(watcher_->ReadyFiles(), Names{"S0001.csv"});
  EXPECT_EQ(watcher_->watch_events(), 0u);
  EXPECT_GE(watcher_->rescans(), 2u) << "a rename seen only by listings must settle";
}

}  // namespace
}  // namespace seston
