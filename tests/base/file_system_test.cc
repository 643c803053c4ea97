#include "base/file_system.h"

#include <gtest/gtest.h>

#include "support/test_paths.h"

namespace seston {
namespace {

TEST(FileSystem, WriteFileAtomicallyReplacesContentAndLeavesNoTemp) {
  testing::ScratchDirectory scratch;
  auto& fs = PosixFileSystem::Instance();
  auto path = scratch.path() / "state.json";
  ASSERT_TRUE(WriteFileAtomically(fs, path, "first").ok());
  ASSERT_TRUE(WriteFileAtomically(fs, path, "second").ok());
  auto content = fs.ReadFile(path, 1024);
  ASSERT_TRUE(content.ok());
  EXPECT_EQ(*content, "second");
  EXPECT_FALSE(fs.Exists(scratch.path() / "state.json.tmp"));
}

TEST(FileSystem, ReadFileRefusesFilesOverTheLimit) {
  testing::ScratchDirectory scratch;
  auto& fs = PosixFileSystem::Instance();
  auto path = scratch.path() / "big";
  ASSERT_TRUE(WriteFileAtomically(fs, path, std::string(100, 'x')).ok());
  auto content = fs.ReadFile(path, 99);
  ASSERT_FALSE(content.ok());
  EXPECT_EQ(content.status().code(), StatusCode::kResourceExhausted);
}

TEST(FileSystem, MissingFileIsNotFoundWithItsPath) {
  auto result = PosixFileSystem::Instance().ReadFile("/nonexistent/seston/x", 10);
  ASSERT_FALSE(result.ok());
  EXPECT_EQ(result.status().code(), StatusCode::kNotFound);
  EXPECT_NE(result.status().message().find("/nonexistent/seston/x"), std::string::npos);
}

}  // namespace
}  // namespace seston
