#include "api/api_token.h"

#include <gtest/gtest.h>

#include <fstream>

#include "support/test_paths.h"

namespace seston {
namespace {

class ApiTokenTest : public ::testing::Test {
 protected:
  std::string Write(const std::string& content) {
    std::string path = (scratch_.path() / "token").string();
    std::ofstream(path, std::ios::binary) << content;
    return path;
  }

  testing::ScratchDirectory scratch_;
};

TEST_F(ApiTokenTest, TrimsSurroundingWhitespace) {
  Result<std::string> token =
      LoadApiToken(PosixFileSystem::Instance(), Write("  3f9a0c1e5b7d2468ace0\r\n\n"));
  ASSERT_TRUE(token.ok()) << token.status().ToString();
  EXPECT_EQ(*token, "3f9a0c1e5b7d2468ace0");
}

TEST_F(ApiTokenTest, RejectsShortSpacedOrEmptyTokensNamingTheFile) {
  for (const std::string& content :
       {std::string("short\n"), std::string("two words but long\n"), std::string("\n"),
        std::string("tab\tinside-long-token"), std::string(5000, 'a')}) {
    std::string path = Write(content);
    Result<std::string> token = LoadApiToken(PosixFileSystem::Instance(), path);
    ASSERT_FALSE(token.ok()) << content;
    EXPECT_NE(token.status().message().find(path), std::string::npos);
  }
}

TEST_F(ApiTokenTest, MissingFileIsAnErrorNamingIt) {
  std::string path = (scratch_.path() / "absent").string();
  Result<std::string> token = LoadApiToken(PosixFileSystem::Instance(), path);
  ASSERT_FALSE(token.ok());
  EXPECT_NE(token.status().message().find(path), std::string::npos);
}

}  // namespace
}  // namespace seston
