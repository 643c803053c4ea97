#include "pipeline/file_prefetcher.h"

#include <gtest/gtest.h>

#include <chrono>
#include <fstream>
#include <string>
#include <thread>
#include <tuple>
#include <vector>

#include "support/test_paths.h"

namespace seston {
namespace {

namespace fs = std::filesystem;

CsvReader MakeReader() {
  InputOptions input;
  input.time_column = "time";
  input.sample_column = "sample";
  input.volume_column = "volume_ml";
  auto reader = CsvReader::Create(input, {"area_um2"});
  EXPECT_TRUE(reader.ok()) << reader.status().message();
  return *reader;
}

// Files f000..f(n-1); file i holds i + 1 rows, so the row count names the file.
std::vector<fs::path> WriteFiles(const fs::path& dir, int n) {
  std::vector<fs::path> files;
  for (int i = 0; i < n; ++i) {
    std::string text = "time,sample,volume_ml,area_um2\n";
    for (int row = 0; row <= i; ++row)
      text += std::to_string(1000 + row) + ",S1,5," + std::to_string(row + 1) + "\n";
    char name[16];
    std::snprintf(name, sizeof name, "f%03d.csv", i);
    files.push_back(dir / name);
    std::ofstream(files.back()) << text;
  }
  return files;
}

// (read-ahead depth, workers)
class FilePrefetcherDepth
    : public ::testing::TestWithParam<std::tuple<std::size_t, std::size_t>> {
 protected:
  std::size_t depth() const { return std::get<0>(GetParam()); }
  std::size_t workers() const { return std::get<1>(GetParam()); }
};

TEST_P(FilePrefetcherDepth, HandsOutEveryFileOnceInListOrderWithItsFailure) {
  testing::ScratchDirectory scratch;
  std::vector<fs::path> files = WriteFiles(scratch.path(), 40);
  files.insert(files.begin() + 7, scratch.path() / "missing.csv");
  const fs::path bad = scratch.path() / "bad.csv";
  std::ofstream(bad) << "time,sample\n1,a\n";
  files.insert(files.begin() + 20, bad);
  const CsvReader reader = MakeReader();
  auto prefetcher =
      FilePrefetcher::Create(PosixFileSystem::Instance(), reader, files, 1 << 20, depth(), workers());
  ASSERT_TRUE(prefetcher.ok());

  std::size_t index = 0;
  int good = 0;
  while (auto file = (*prefetcher)->Next()) {
    ASSERT_LT(index, files.size());
    EXPECT_EQ(file->path, files[index]);
    if (file->path.filename() == "missing.csv") {
      EXPECT_EQ(file->failure, PrefetchedFile::Failure::kRead);
      EXPECT_FALSE(file->status.ok());
    } else if (file->path == bad) {
      EXPECT_EQ(file->failure, PrefetchedFile::Failure::kParse);
      EXPECT_EQ(file->status.code(), StatusCode::kInvalidArgument);
      EXPECT_GT(file->bytes, 0u);
    } else {
      ASSERT_EQ(file->failure, PrefetchedFile::Failure::kNone) << file->status.message();
      EXPECT_EQ(file->parsed.data_rows, static_cast<std::uint64_t>(good + 1));
      EXPECT_EQ(file->parsed.batch.source, file->path.string());
      ++good;
    }
    ++index;
  }
  EXPECT_EQ(index, files.size());
  EXPECT_EQ(good, 40);
  EXPECT_FALSE((*prefetcher)->Next().has_value());
}

class FilePrefetcherAhead : public FilePrefetcherDepth {};  // depth >= 1 only

TEST_P(FilePrefetcherAhead, ReadsAtMostDepthPlusWorkersFilesAhead) {
  testing::ScratchDirectory scratch;
  const std::vector<fs::path> files = WriteFiles(scratch.path(), 20);
  const CsvReader reader = MakeReader();
  auto prefetcher = FilePrefetcher::Create(PosixFileSystem::Instance(), reader, files, 1 << 20,
                                           depth(), workers());
  ASSERT_TRUE(prefetcher.ok());
  ASSERT_TRUE((*prefetcher)->Next().has_value());
  // Give the workers time to fill up, then remove the files: only those already read
  // arrive parsed, so their number is the read-ahead actually held.
  std::this_thread::sleep_for(std::chrono::milliseconds(300));
  for (std::size_t i = 1; i < files.size(); ++i) fs::remove(files[i]);
  std::size_t read_ahead = 0;
  while (auto file = (*prefetcher)->Next()) {
    if (file->failure == PrefetchedFile::Failure::kNone) ++read_ahead;
  }
  EXPECT_GE(read_ahead, 1u);
  EXPECT_LE(read_ahead, depth() + workers());
}

INSTANTIATE_TEST_SUITE_P(InLineAndAhead, FilePrefetcherDepth,
                         ::testing::Combine(::testing::Values(0, 1, 2, 4),
                                            ::testing::Values(1, 2, 3)));
INSTANTIATE_TEST_SUITE_P(Ahead, FilePrefetcherAhead,
                         ::testing::Combine(::testing::Values(1, 2, 4),
                                            ::testing::Values(1, 2, 3)));

TEST(FilePrefetcher, StopsCleanlyWhenDroppedBeforeTheEnd) {
  testing::ScratchDirectory scratch;
  const std::vector<fs::path> files = WriteFiles(scratch.path(), 30);
  const CsvReader reader = MakeReader();
  auto prefetcher =
      FilePrefetcher::Create(PosixFileSystem::Instance(), reader, files, 1 << 20, 2, 3);
  ASSERT_TRUE(prefetcher.ok());
  auto first = (*prefetcher)->Next();
  ASSERT_TRUE(first.has_value());
  EXPECT_EQ(first->parsed.data_rows, 1u);
  // Must join the workers, blocked on the read-ahead limit, without hanging.
  prefetcher->reset();
  EXPECT_EQ(prefetcher->get(), nullptr);
}

TEST(FilePrefetcher, FileOverTheSizeLimitIsAReadFailure) {
  testing::ScratchDirectory scratch;
  const std::vector<fs::path> files = WriteFiles(scratch.path(), 3);
  const CsvReader reader = MakeReader();
  auto prefetcher = FilePrefetcher::Create(PosixFileSystem::Instance(), reader, files, 60, 1);
  ASSERT_TRUE(prefetcher.ok());
  std::vector<PrefetchedFile::Failure> failures;
  while (auto file = (*prefetcher)->Next()) failures.push_back(file->failure);
  // 31 header bytes + 12 per row: one row fits in 60 bytes, two do, three do not.
  EXPECT_EQ(failures, (std::vector<PrefetchedFile::Failure>{PrefetchedFile::Failure::kNone,
                                                            PrefetchedFile::Failure::kNone,
                                                            PrefetchedFile::Failure::kRead}));
}

}  // namespace
}  // namespace seston
