#include "alerts/alert_hook.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <chrono>
#include <fstream>
#include <thread>

#include "support/test_paths.h"

namespace seston {
namespace {

std::filesystem::path WriteScript(const std::filesystem::path& dir, const std::string& body) {
  std::filesystem::path path = dir / "hook.sh";
  std::ofstream(path) << "#!/bin/sh\n" << body;
  ::chmod(path.c_str(), 0755);
  return path;
}

std::string ReadAll(const std::filesystem::path& path) {
  std::ifstream in(path);
  return std::string(std::istreambuf_iterator<char>(in), {});
}

TEST(AlertHook, RunsTheCommandWithItsWordsAndTheFilePathLast) {
  testing::ScratchDirectory scratch;
  const auto script =
      WriteScript(scratch.path(), "echo \"$#:$1:$2:$3\" > \"$(dirname \"$0\")/args\"\n");
  auto hook = AlertHook::Create(script.string() + "  first second", 5, SystemClock::Instance());
  ASSERT_TRUE(hook.ok());
  EXPECT_TRUE(hook->enabled());
  const auto alert = scratch.path() / "20261202T000000Z-000001-raised-fit.json";
  Status status = hook->Run(alert);
  ASSERT_TRUE(status.ok()) << status.ToString();
  EXPECT_EQ(ReadAll(scratch.path() / "args"), "3:first:second:" + alert.string() + "\n");
}

TEST(AlertHook, HookThatSleepsIsKilledAfterTheTimeout) {
  testing::ScratchDirectory scratch;
  const auto script = WriteScript(scratch.path(), "sleep 30\n");
  auto hook = AlertHook::Create(script.string(), 0.3, SystemClock::Instance());
  ASSERT_TRUE(hook.ok());
  const auto started = std::chrono::steady_clock::now();
  Status status = hook->Run("/nonexistent/alert.json");
  const double waited =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  EXPECT_EQ(status.code(), StatusCode::kUnavailable) << status.ToString();
  EXPECT_NE(status.message().find("killed"), std::string::npos);
  EXPECT_GE(waited, 0.3);
  EXPECT_LT(waited, 10.0);  // far below the 30 s sleep: the child was killed
}

TEST(AlertHook, ScriptChildrenAreKilledWithIt) {
  // The script leaves a background child that would write "done" after 1 s. It shares
  // the hook's process group, so killing the group at the timeout ends it too; killing
  // only the script would leave it running.
  testing::ScratchDirectory scratch;
  const auto script = WriteScript(
      scratch.path(), "(sleep 1; echo finished > \"$(dirname \"$0\")/done\") &\nwait\n");
  auto hook = AlertHook::Create(script.string(), 0.2, SystemClock::Instance());
  ASSERT_TRUE(hook.ok());
  EXPECT_EQ(hook->Run("x.json").code(), StatusCode::kUnavailable);
  std::this_thread::sleep_for(std::chrono::milliseconds(1500));
  EXPECT_FALSE(std::filesystem::exists(scratch.path() / "done"));
}

TEST(AlertHook, FailingOrMissingCommandIsAnError) {
  auto failing = AlertHook::Create("false", 5, SystemClock::Instance());
  ASSERT_TRUE(failing.ok());
  Status failed = failing->Run("a.json");
  EXPECT_EQ(failed.code(), StatusCode::kIoError);
  EXPECT_NE(failed.message().find("exited with status 1"), std::string::npos) << failed.ToString();
  auto missing = AlertHook::Create("/nonexistent/seston-hook", 5, SystemClock::Instance());
  ASSERT_TRUE(missing.ok());
  Status not_started = missing->Run("a.json");
  EXPECT_EQ(not_started.code(), StatusCode::kIoError);
  EXPECT_NE(not_started.message().find("could not start"), std::string::npos)
      << not_started.ToString();
}

TEST(AlertHook, EmptyCommandMeansNoHook) {
  auto hook = AlertHook::Create("   ", 5, SystemClock::Instance());
  ASSERT_TRUE(hook.ok());
  EXPECT_FALSE(hook->enabled());
  EXPECT_TRUE(hook->Run("a.json").ok());
  EXPECT_EQ(AlertHook::Create("true", 0, SystemClock::Instance()).status().code(),
            StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace seston
