#include "alerts/alert_writer.h"

#include <gtest/gtest.h>

#include <algorithm>

#include "support/test_paths.h"

namespace seston {
namespace {

// Records which paths are opened for writing and renamed, then passes every call on to
// the real file system.
class RecordingFileSystem final : public FileSystem {
 public:
  Result<std::string> ReadFile(const std::filesystem::path& path,
                               std::uint64_t max_bytes) override {
    return real_.ReadFile(path, max_bytes);
  }
  Result<std::unique_ptr<WritableFile>> OpenForWrite(const std::filesystem::path& path,
                                                     bool append) override {
    opened.push_back(path);
    return real_.OpenForWrite(path, append);
  }
  Status Rename(const std::filesystem::path& from, const std::filesystem::path& to) override {
    renamed.emplace_back(from, to);
    return real_.Rename(from, to);
  }
  Status Remove(const std::filesystem::path& path) override { return real_.Remove(path); }
  Status Truncate(const std::filesystem::path& path, std::uint64_t size_bytes) override {
    return real_.Truncate(path, size_bytes);
  }
  Status SyncDirectory(const std::filesystem::path& directory) override {
    return real_.SyncDirectory(directory);
  }
  Status CreateDirectories(const std::filesystem::path& directory) override {
    return real_.CreateDirectories(directory);
  }
  Result<FileInfo> Stat(const std::filesystem::path& path) override { return real_.Stat(path); }
  bool Exists(const std::filesystem::path& path) override { return real_.Exists(path); }
  Result<std::vector<DirectoryEntry>> ListDirectory(
      const std::filesystem::path& directory) override {
    return real_.ListDirectory(directory);
  }
  Result<SpaceInfo> Space(const std::filesystem::path& path) override { return real_.Space(path); }

  std::vector<std::filesystem::path> opened;
  std::vector<std::pair<std::filesystem::path, std::filesystem::path>> renamed;

 private:
  PosixFileSystem& real_ = PosixFileSystem::Instance();
};

AlertEvent Event(std::uint64_t sequence, double time, std::string event = "raised",
                 std::string kind = "composition") {
  AlertEvent alert;
  alert.sequence = sequence;
  alert.event = std::move(event);
  alert.kind = std::move(kind);
  alert.severity = "alarm";
  alert.time_seconds = time;
  alert.since_seconds = time - 180;
  alert.clusters = {{3, "diatom chains"}};
  alert.statistic = 0.05;
  alert.statistic_name = "jensen_shannon_divergence_bits";
  alert.threshold = 0.03;
  alert.message = "cluster 3 rose";
  alert.what_to_check = "look at cluster 3";
  alert.station = "Skerry Sound mooring B";
  return alert;
}

constexpr double kDay = 1796169600.0;  // 2026-12-02T00:00:00Z

TEST(AlertWriter, CreatesTheDirectoryAndWritesSortedNames) {
  testing::ScratchDirectory scratch;
  auto& fs = PosixFileSystem::Instance();
  auto writer = AlertWriter::Create(fs, scratch.path() / "var" / "alerts");
  ASSERT_TRUE(writer.ok()) << writer.status().ToString();
  // Written out of order: a later event first, two in the same second.
  ASSERT_TRUE(writer->Write(Event(3, kDay + 7200, "resolved")).ok());
  ASSERT_TRUE(writer->Write(Event(1, kDay + 3725)).ok());
  ASSERT_TRUE(writer->Write(Event(2, kDay + 3725, "raised", "fit")).ok());
  ASSERT_TRUE(writer->Write(Event(1234567, kDay + 86400)).ok());
  auto entries = fs.ListDirectory(writer->dir());
  ASSERT_TRUE(entries.ok());
  std::vector<std::string> names;
  for (const DirectoryEntry& entry : *entries) names.push_back(entry.name);
  std::sort(names.begin(), names.end());
  // kDay + 3725 s = 01:02:05; + 7200 s = 02:00:00.
  EXPECT_EQ(names, (std::vector<std::string>{
                       "20261202T010205Z-000001-raised-composition.json",
                       "20261202T010205Z-000002-raised-fit.json",
                       "20261202T020000Z-000003-resolved-composition.json",
                       "20261203T000000Z-1234567-raised-composition.json",
                   }));
}

TEST(AlertWriter, FileHoldsEveryRequiredFieldAndWasRenamedIntoPlace) {
  testing::ScratchDirectory scratch;
  RecordingFileSystem fs;
  auto writer = AlertWriter::Create(fs, scratch.path());
  ASSERT_TRUE(writer.ok());
  auto path = writer->Write(Event(7, kDay + 60));
  ASSERT_TRUE(path.ok()) << path.status().ToString();
  // Atomic: the final name is never opened for writing, only renamed onto.
  ASSERT_EQ(fs.opened.size(), 1u);
  EXPECT_NE(fs.opened[0], *path);
  ASSERT_EQ(fs.renamed.size(), 1u);
  EXPECT_EQ(fs.renamed[0].first, fs.opened[0]);
  EXPECT_EQ(fs.renamed[0].second, *path);
  EXPECT_FALSE(fs.Exists(fs.opened[0]));

  auto text = fs.ReadFile(*path, 1 << 20);
  ASSERT_TRUE(text.ok());
  EXPECT_NE(text->find("\n  \"caution\""), std::string::npos) << "not pretty-printed";
  const nlohmann::json json = nlohmann::json::parse(*text);
  for (const char* field :
       {"event", "kind", "severity", "time", "since", "clusters", "statistic", "statistic_name",
        "threshold", "message", "what_to_check", "caution", "station", "sequence"}) {
    EXPECT_TRUE(json.contains(field)) << field;
  }
  EXPECT_EQ(json["time"], "2026-12-02T00:01:00Z");
  EXPECT_EQ(json["since"], "2026-12-01T23:58:00Z");
}

TEST(AlertWriter, HostileLabelMessageAndStationDoNotChangeTheFileName) {
  testing::ScratchDirectory scratch;
  auto& fs = PosixFileSystem::Instance();
  auto writer = AlertWriter::Create(fs, scratch.path());
  ASSERT_TRUE(writer.ok());
  AlertEvent hostile = Event(9, kDay);
  hostile.clusters = {{3, "../../etc/passwd\n\"; rm -rf /"}};
  hostile.message = "/tmp/evil";
  hostile.station = "../../../root";
  auto plain_name = AlertWriter::FileNameOf(Event(9, kDay));
  auto path = writer->Write(hostile);
  ASSERT_TRUE(path.ok() && plain_name.ok());
  EXPECT_EQ(path->filename().string(), *plain_name);
  EXPECT_EQ(path->parent_path(), scratch.path());
  auto text = fs.ReadFile(*path, 1 << 20);
  ASSERT_TRUE(text.ok());
  EXPECT_EQ(nlohmann::json::parse(*text)["clusters"][0]["label"], "../../etc/passwd\n\"; rm -rf /");
}

TEST(AlertWriter, RefusesEventOrKindThatIsNotALowerCaseWord) {
  testing::ScratchDirectory scratch;
  auto writer = AlertWriter::Create(PosixFileSystem::Instance(), scratch.path());
  ASSERT_TRUE(writer.ok());
  EXPECT_EQ(writer->Write(Event(1, kDay, "raised", "../x")).status().code(),
            StatusCode::kInvalidArgument);
  EXPECT_EQ(writer->Write(Event(1, kDay, "Raised")).status().code(), StatusCode::kInvalidArgument);
  EXPECT_EQ(writer->Write(Event(1, kDay, "raised", "")).status().code(),
            StatusCode::kInvalidArgument);
  auto entries = PosixFileSystem::Instance().ListDirectory(scratch.path());
  ASSERT_TRUE(entries.ok());
  EXPECT_TRUE(entries->empty());
}

TEST(AlertWriter, CreateFailsWhereNoDirectoryCanBe) {
  testing::ScratchDirectory scratch;
  auto& fs = PosixFileSystem::Instance();
  ASSERT_TRUE(WriteFileAtomically(fs, scratch.path() / "file", "x").ok());
  auto writer = AlertWriter::Create(fs, scratch.path() / "file" / "alerts");
  ASSERT_FALSE(writer.ok());
  EXPECT_NE(writer.status().message().find("alert directory"), std::string::npos);
}

}  // namespace
}  // namespace seston
