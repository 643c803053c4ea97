// StationService: the commit protocol of the live daemon, driven without sockets or
// threads. A crash is simulated by dropping the service at the instant a chosen write
// fails (a file system wrapper refuses it), then creating a new service on the same
// directories, as a restart would.
//
// Data: invented two-feature particles in two well separated groups (x, y around (1, 1)
// and (9, 9)), 10 per sample file, so every count below is known from the rows written.
#include "pipeline/station_service.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

#include "base/clock.h"
#include "base/file_system.h"
#include "config/config_loader.h"
#include "support/test_paths.h"

namespace seston {
namespace {

namespace fs = std::filesystem;

constexpr const char* kConfigYaml = R"(station: "test bench"
input:
  drop_dir: ./drop
  settle_seconds: 0
features:
  - { column: x }
  - { column: y }
model:
  k: 2
  warmup_particles: 20
  batch_size: 16
counts:
  bin_seconds: 60
  output_dir: ./counts
drift:
  enabled: false
alerts:
  dir: ./alerts
state:
  dir: ./state
  checkpoint_seconds: 30
)";

constexpr int kRowsPerFile = 10;
constexpr double kFirstSeconds = 1780000000;  // 2026-05-28T20:26:40Z

// A sample file of kRowsPerFile particles, half in each group, one per second.
std::string SampleFile(int index, int bad_rows = 0) {
  std::ostringstream out;
  out << "time,sample,volume_ml,x,y\n";
  for (int row = 0; row < kRowsPerFile; ++row) {
    double t = kFirstSeconds + index * 100 + row;
    double base = row % 2 == 0 ? 1.0 : 9.0;
    double jitter = 0.01 * ((row * 7 + index * 3) % 11);
    out.precision(17);
    out << t << ",S" << index << ",5," << base + jitter << "," << base - jitter << "\n";
  }
  for (int row = 0; row < bad_rows; ++row)
    out << kFirstSeconds + index * 100 << ",S" << index << ",5,abc,1\n";
  return out.str();
}

// Fails the operations `fails` picks (by kind and path) until told otherwise.
class PickyFileSystem final : public FileSystem {
 public:
  using Picker = std::function<bool(std::string_view operation, const fs::path& path)>;
  void FailWhen(Picker picker) { picker_ = std::move(picker); }

  Result<std::string> ReadFile(const fs::path& path, std::uint64_t max_bytes) override {
    return base_.ReadFile(path, max_bytes);
  }
  Result<std::unique_ptr<WritableFile>> OpenForWrite(const fs::path& path, bool append) override {
    if (Fails("open", path)) return Status::ResourceExhausted("injected: no space left on device");
    return base_.OpenForWrite(path, append);
  }
  Status Rename(const fs::path& from, const fs::path& to) override {
    if (Fails("rename", to)) return Status::ResourceExhausted("injected: no space left on device");
    return base_.Rename(from, to);
  }
  Status Remove(const fs::path& path) override { return base_.Remove(path); }
  Status Truncate(const fs::path& path, std::uint64_t size) override {
    return base_.Truncate(path, size);
  }
  Status SyncDirectory(const fs::path& directory) override {
    return base_.SyncDirectory(directory);
  }
  Status CreateDirectories(const fs::path& directory) override {
    return base_.CreateDirectories(directory);
  }
  Result<FileInfo> Stat(const fs::path& path) override { return base_.Stat(path); }
  bool Exists(const fs::path& path) override { return base_.Exists(path); }
  Result<std::vector<DirectoryEntry>> ListDirectory(const fs::path& directory) override {
    return base_.ListDirectory(directory);
  }
  Result<SpaceInfo> Space(const fs::path& path) override { return base_.Space(path); }

 private:
  bool Fails(std::string_view operation, const fs::path& path) {
    return picker_ && picker_(operation, path);
  }
  PosixFileSystem base_;
  Picker picker_;
};

class CollectingChannel final : public ReplyChannel {
 public:
  void Send(Reply reply) override { replies.push_back(std::move(reply.text)); }
  std::vector<std::string> replies;
};

class StationServiceTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::ofstream(dir_.path() / "seston.yaml") << kConfigYaml;
    auto config = LoadConfig(PosixFileSystem::Instance(), (dir_.path() / "seston.yaml").string());
    ASSERT_TRUE(config.ok()) << config.status().message();
    config_ = *config;
  }

  std::unique_ptr<StationService> Start() {
    auto service = StationService::Create(config_, fs_, clock_, "test");
    if (!service.ok()) {
      ADD_FAILURE() << service.status().message();
      return nullptr;
    }
    return std::move(*service);
  }

  fs::path Drop(const std::string& name, const std::string& text) {
    fs::path path = fs::path(config_.input.drop_dir) / name;
    fs::create_directories(path.parent_path());
    std::ofstream(path, std::ios::binary) << text;
    return path;
  }

  // Data rows in every count file of one kind, header rows excluded, totals summed.
  std::uint64_t CountFileTotal(const std::string& prefix) const {
    std::uint64_t total = 0;
    for (const auto& entry : fs::directory_iterator(config_.counts.output_dir)) {
      const std::string name = entry.path().filename().string();
      if (name.rfind(prefix, 0) != 0) continue;
      std::ifstream in(entry.path());
      std::string header;
      std::getline(in, header);
      // total_count is the sixth column of samples files, the fourth of bins files.
      const int column = prefix == "samples_" ? 5 : 3;
      for (std::string line; std::getline(in, line);) {
        std::stringstream fields(line);
        std::string field;
        for (int i = 0; i <= column; ++i) std::getline(fields, field, ',');
        total += std::stoull(field);
      }
    }
    return total;
  }

  std::vector<std::string> DoneFiles() const {
    std::vector<std::string> names;
    fs::path done = fs::path(config_.input.drop_dir) / "done";
    if (!fs::exists(done)) return names;
    for (const auto& entry : fs::recursive_directory_iterator(done)) {
      if (entry.is_regular_file()) names.push_back(entry.path().filename().string());
    }
    std::sort(names.begin(), names.end());
    return names;
  }

  testing::ScratchDirectory dir_;
  Config config_;
  PickyFileSystem fs_;
  ManualClock clock_{kFirstSeconds + 3600, 100};
};

TEST_F(StationServiceTest, CountsEveryRowOnceAndFilesItUnderItsEventDay) {
  auto service = Start();
  for (int i = 0; i < 3; ++i) {
    Drop("f" + std::to_string(i) + ".csv", SampleFile(i));
    EXPECT_EQ(service->ProcessReadyFile("f" + std::to_string(i) + ".csv"), FileDisposition::kDone);
  }
  EXPECT_EQ(service->pipeline().counters().accepted, 3u * kRowsPerFile);
  EXPECT_FALSE(service->pipeline().warming_up());
  // 1780000000 s is 2026-05-28 (UTC), the day of each file's first particle.
  EXPECT_TRUE(fs::exists(fs::path(config_.input.drop_dir) / "done" / "2026-05-28" / "f2.csv"));
  EXPECT_EQ(service->board().Latest()->files_done, 3u);
  EXPECT_EQ(CountFileTotal("samples_"), 3u * kRowsPerFile);
}

TEST_F(StationServiceTest, QuarantinesAHeaderOnlyFileWithItsReasonAndCountsNothing) {
  auto service = Start();
  Drop("empty.csv", "time,sample,volume_ml,x,y\n");
  Drop("nocolumn.csv", "time,sample,volume_ml,x\n1780000000,S1,5,1\n");
  EXPECT_EQ(service->ProcessReadyFile("empty.csv"), FileDisposition::kQuarantined);
  EXPECT_EQ(service->ProcessReadyFile("nocolumn.csv"), FileDisposition::kQuarantined);
  fs::path quarantine = fs::path(config_.input.drop_dir) / "quarantine";
  EXPECT_TRUE(fs::exists(quarantine / "empty.csv"));
  EXPECT_TRUE(fs::exists(quarantine / "nocolumn.csv.reason"));
  EXPECT_EQ(service->pipeline().counters().rows, 0u);
  EXPECT_EQ(service->board().Latest()->files_quarantined, 2u);
}

TEST_F(StationServiceTest, FileCommittedButNotMovedIsMovedWithoutRecountAfterRestart) {
  {
    auto service = Start();
    Drop("a.csv", SampleFile(0));
    Drop("b.csv", SampleFile(1));
    ASSERT_EQ(service->ProcessReadyFile("a.csv"), FileDisposition::kDone);
    // The checkpoint of b is written, then the move to done/ fails: the crash window.
    fs_.FailWhen([](std::string_view op, const fs::path& path) {
      return op == "rename" && path.string().find("/done/") != std::string::npos;
    });
    EXPECT_EQ(service->ProcessReadyFile("b.csv"), FileDisposition::kCommitted);
    EXPECT_FALSE(service->accepting_work());
  }  // crash: the service is dropped
  fs_.FailWhen(nullptr);
  auto restarted = Start();
  EXPECT_FALSE(fs::exists(fs::path(config_.input.drop_dir) / "b.csv"));
  EXPECT_EQ(DoneFiles(), (std::vector<std::string>{"a.csv", "b.csv"}));
  EXPECT_EQ(restarted->pipeline().counters().accepted, 2u * kRowsPerFile);
  EXPECT_EQ(CountFileTotal("samples_"), 2u * kRowsPerFile);
}

TEST_F(StationServiceTest, FileWhoseCheckpointFailedIsCountedFromItsStartAfterRestart) {
  {
    auto service = Start();
    for (int i = 0; i < 3; ++i) {
      Drop("f" + std::to_string(i) + ".csv", SampleFile(i));
      ASSERT_EQ(service->ProcessReadyFile("f" + std::to_string(i) + ".csv"),
                FileDisposition::kDone);
    }
    Drop("f3.csv", SampleFile(3));
    // Count rows of f3 are appended, then its checkpoint cannot be written.
    fs_.FailWhen([](std::string_view, const fs::path& path) {
      return path.string().find("checkpoint") != std::string::npos;
    });
    EXPECT_EQ(service->ProcessReadyFile("f3.csv"), FileDisposition::kCommitted);
    EXPECT_EQ(CountFileTotal("samples_"), 4u * kRowsPerFile);  // on disk, not yet committed
  }
  fs_.FailWhen(nullptr);
  auto restarted = Start();
  // The count files are cut back to the checkpoint, f3 waits in the drop directory.
  EXPECT_EQ(CountFileTotal("samples_"), 3u * kRowsPerFile);
  EXPECT_EQ(restarted->pipeline().counters().accepted, 3u * kRowsPerFile);
  EXPECT_EQ(restarted->ProcessReadyFile("f3.csv"), FileDisposition::kDone);
  EXPECT_EQ(restarted->pipeline().counters().accepted, 4u * kRowsPerFile);
  EXPECT_EQ(CountFileTotal("samples_"), 4u * kRowsPerFile);
}

TEST_F(StationServiceTest, FullDiskStopsTakingFilesAndResumesByItselfWhenSpaceReturns) {
  auto service = Start();
  Drop("a.csv", SampleFile(0));
  fs_.FailWhen([](std::string_view, const fs::path& path) {
    return path.string().find("checkpoint") != std::string::npos;
  });
  EXPECT_EQ(service->ProcessReadyFile("a.csv"), FileDisposition::kCommitted);
  Drop("b.csv", SampleFile(1));
  EXPECT_EQ(service->ProcessReadyFile("b.csv"), FileDisposition::kRetryLater);
  EXPECT_TRUE(fs::exists(fs::path(config_.input.drop_dir) / "b.csv"));
  auto degraded = service->board().Latest();
  EXPECT_TRUE(degraded->degraded);
  EXPECT_NE(degraded->problem.find("no space left"), std::string::npos);

  service->Tick();  // before the back-off: no retry
  EXPECT_FALSE(service->accepting_work());
  fs_.FailWhen(nullptr);
  clock_.Advance(1.5);
  service->Tick();
  EXPECT_TRUE(service->accepting_work());
  EXPECT_EQ(service->ProcessReadyFile("b.csv"), FileDisposition::kDone);
  EXPECT_EQ(DoneFiles(), (std::vector<std::string>{"a.csv", "b.csv"}));
  EXPECT_EQ(service->pipeline().counters().accepted, 2u * kRowsPerFile);
  // The first problem stays visible after recovery.
  EXPECT_NE(service->board().Latest()->problem.find("no space left"), std::string::npos);
}

TEST_F(StationServiceTest, LabelsPersistAcrossRestart) {
  {
    auto service = Start();
    for (int i = 0; i < 3; ++i) {
      Drop("f" + std::to_string(i) + ".csv", SampleFile(i));
      ASSERT_EQ(service->ProcessReadyFile("f" + std::to_string(i) + ".csv"),
                FileDisposition::kDone);
    }
    ASSERT_TRUE(service->SetLabel(1, "small round").ok());
    EXPECT_EQ(service->SetLabel(99, "nobody").code(), StatusCode::kNotFound);
  }
  auto restarted = Start();
  EXPECT_EQ(restarted->pipeline().LabelOf(1), "small round");
  EXPECT_EQ(restarted->board().Latest()->clusters.front().label, "small round");
}

// Socket lines as the server queues them: one connection, numbered from 1.
std::vector<QueuedLine> Lines(const std::vector<std::string>& texts, std::uint64_t connection,
                              const std::shared_ptr<ReplyChannel>& channel,
                              std::uint64_t first_line = 1) {
  std::vector<QueuedLine> lines;
  for (const auto& text : texts) {
    QueuedLine line;
    line.line = text;
    line.line_number = first_line++;
    line.connection = connection;
    line.source = std::make_shared<const std::string>("socket:test");
    line.reply_to = channel;
    lines.push_back(std::move(line));
  }
  return lines;
}

std::vector<std::string> SocketSample(const std::string& sample, int particles, int first = 0) {
  std::vector<std::string> lines;
  for (int i = first; i < first + particles; ++i) {
    double base = i % 2 == 0 ? 1.0 : 9.0;
    std::ostringstream line;
    line.precision(17);
    line << R"({"time":)" << kFirstSeconds + i << R"(,"sample":")" << sample << R"(","x":)"
         << base + 0.001 * i << R"(,"y":)" << base << "}";
    lines.push_back(line.str());
  }
  return lines;
}

TEST_F(StationServiceTest, SocketCloseIsAnsweredOnlyAfterItsCheckpoint) {
  auto service = Start();
  auto channel = std::make_shared<CollectingChannel>();
  auto texts = SocketSample("S1", 30);
  texts.push_back(R"({"time":1780000000,"sample":"S1","x":"abc","y":1})");
  texts.push_back(R"({"close_sample":"S1","volume_ml":5})");
  auto lines = Lines(texts, 1, channel);
  service->ProcessLines(lines, /*more_waiting=*/true);
  ASSERT_EQ(channel->replies.size(), 1u);  // only the rejection so far
  EXPECT_NE(channel->replies[0].find(R"("rejected":31)"), std::string::npos);
  clock_.Advance(StationService::kAckDelaySeconds);
  service->Tick();
  ASSERT_EQ(channel->replies.size(), 2u);
  EXPECT_EQ(channel->replies[1], R"({"committed":"S1","particles":30})");
  EXPECT_EQ(service->pipeline().counters().accepted, 30u);
  EXPECT_EQ(service->pipeline().counters().rejected, 1u);
}

TEST_F(StationServiceTest, SampleResentAfterACrashIsCountedOnce) {
  auto channel = std::make_shared<CollectingChannel>();
  {
    auto service = Start();
    auto first = Lines(SocketSample("S7", 25), 1, channel);
    service->ProcessLines(first, false);
    clock_.Advance(config_.state.checkpoint_seconds);
    service->Tick();  // a periodic checkpoint holds 25 records of S7
    auto more = Lines(SocketSample("S7", 10, 25), 1, channel, 26);
    service->ProcessLines(more, false);  // taken, not yet durable
  }                                      // crash before any commit was answered
  EXPECT_TRUE(channel->replies.empty());
  auto restarted = Start();
  EXPECT_EQ(restarted->pipeline().counters().accepted, 25u);
  // The client sends the whole sample again on a new connection, then the close.
  auto again = SocketSample("S7", 40);
  again.push_back(R"({"close_sample":"S7","volume_ml":5})");
  auto lines = Lines(again, 2, channel);
  restarted->ProcessLines(lines, false);
  ASSERT_EQ(channel->replies.size(), 1u);
  EXPECT_EQ(channel->replies[0], R"({"committed":"S7","particles":40})");
  EXPECT_EQ(restarted->pipeline().counters().accepted, 40u);
  // The answer was lost: the client sends it all once more; nothing is counted again.
  auto once_more = Lines(again, 3, channel);
  restarted->ProcessLines(once_more, false);
  ASSERT_EQ(channel->replies.size(), 2u);
  EXPECT_EQ(channel->replies[1], R"({"committed":"S7","particles":40})");
  EXPECT_EQ(restarted->pipeline().counters().accepted, 40u);
  EXPECT_EQ(CountFileTotal("samples_"), 40u);
}

}  // namespace
}  // namespace seston
