// sestonctl's commands run in-process against a real HttpServer over a FakeBackend, and
// the real binary once for its environment variable and exit code.
#include "sestonctl/sestonctl.h"

#include <gtest/gtest.h>
#include <sys/wait.h>

#include <boost/asio/ip/tcp.hpp>
#include <cstdio>
#include <fstream>
#include <sstream>

#include "server_harness.h"
#include "support/test_paths.h"

namespace seston::ctl {
namespace {

using seston::testing::Harness;
using seston::testing::kHarnessToken;

struct Outcome {
  int exit_code;
  std::string out, err;
};

Outcome RunCtl(std::vector<std::string> args, std::optional<std::string> environment_api = {}) {
  std::ostringstream out, err;
  int code = RunSestonctl(args, environment_api, out, err);
  return {code, out.str(), err.str()};
}

ApiOptions Options() {
  ApiOptions options;
  options.request_timeout_seconds = 2;
  return options;
}

// A port on 127.0.0.1 where nothing listens (bound once, then released).
std::uint16_t ClosedPort() {
  boost::asio::io_context io_context;
  boost::asio::ip::tcp::acceptor probe(io_context, {boost::asio::ip::make_address("127.0.0.1"), 0});
  return probe.local_endpoint().port();
}

class SestonctlTest : public ::testing::Test {
 protected:
  SestonctlTest() : harness(Options()) {
    harness.backend.health.state = "running";
    harness.backend.health.station = "Skerry Sound mooring B";
    harness.backend.clusters = {{3, "", 120, {{"esd_um", 12.5}}, 0.9, 1764633600, false}};
    std::ofstream(scratch.path() / "token") << kHarnessToken << "\n";
  }

  std::string api() const { return harness.address(); }
  std::string token_file() const { return (scratch.path() / "token").string(); }

  Harness harness;
  seston::testing::ScratchDirectory scratch;
};

TEST_F(SestonctlTest, StatusPrintsATableAndJsonOnRequest) {
  Outcome table = RunCtl({"--api", api(), "status"});
  EXPECT_EQ(table.exit_code, kExitOk) << table.err;
  EXPECT_NE(table.out.find("station          Skerry Sound mooring B\n"), std::string::npos)
      << table.out;
  Outcome json = RunCtl({"status", "--json", "--api", api()});
  ASSERT_EQ(json.exit_code, kExitOk) << json.err;
  EXPECT_EQ(nlohmann::json::parse(json.out)["state"], "running");
}

TEST_F(SestonctlTest, ApiComesFromTheEnvironmentWhenNotGiven) {
  Outcome outcome = RunCtl({"clusters"}, api());
  EXPECT_EQ(outcome.exit_code, kExitOk) << outcome.err;
  EXPECT_NE(outcome.out.find("(unlabelled)"), std::string::npos) << outcome.out;
}

TEST_F(SestonctlTest, CountsPassesWindowAndEncodedTimes) {
  Outcome window = RunCtl({"--api", api(), "counts", "--window", "90m"});
  ASSERT_EQ(window.exit_code, kExitOk) << window.err;
  EXPECT_NE(window.out.find("conc. /mL"), std::string::npos);
  Outcome range = RunCtl({"--api", api(), "counts", "--from", "2025-12-02T00:00:00+00:00", "--to",
                          "2025-12-02T01:00:00Z"});
  ASSERT_EQ(range.exit_code, kExitOk) << range.err;
  std::lock_guard lock(harness.backend.mutex);
  ASSERT_EQ(harness.backend.counts_calls.size(), 2u);
  EXPECT_EQ(harness.backend.counts_calls[0].window, 5400.0);
  EXPECT_EQ(harness.backend.counts_calls[1].from, 1764633600.0);  // the '+' survived
  EXPECT_EQ(harness.backend.counts_calls[1].to, 1764637200.0);
}

TEST_F(SestonctlTest, ServerErrorsPrintTheServersMessageAndExitOne) {
  Outcome bad_window = RunCtl({"--api", api(), "counts", "--window", "0"});
  EXPECT_EQ(bad_window.exit_code, kExitServerError);
  EXPECT_NE(bad_window.err.find("sestond answered 400: window: \"0\" is not a duration"),
            std::string::npos)
      << bad_window.err;
  Outcome no_token = RunCtl({"--api", api(), "label", "3", "ciliates"});
  EXPECT_EQ(no_token.exit_code, kExitServerError);
  EXPECT_NE(no_token.err.find("401"), std::string::npos);
  EXPECT_NE(no_token.err.find("pass --token-file FILE"), std::string::npos) << no_token.err;
  Outcome unknown = RunCtl({"--api", api(), "--token-file", token_file(), "label", "99", "x"});
  EXPECT_EQ(unknown.exit_code, kExitServerError);
  EXPECT_NE(unknown.err.find("no cluster with id 99"), std::string::npos) << unknown.err;
}

TEST_F(SestonctlTest, LabelAndBaselineWriteWithTheTokenFile) {
  Outcome label =
      RunCtl({"--api", api(), "--token-file", token_file(), "label", "3", "small flagellates"});
  ASSERT_EQ(label.exit_code, kExitOk) << label.err;
  EXPECT_EQ(label.out, "cluster 3 is now labelled \"small flagellates\"\n");
  Outcome baseline = RunCtl({"baseline", "accept", "--api", api(), "--token-file", token_file()});
  EXPECT_EQ(baseline.exit_code, kExitOk) << baseline.err;
  std::lock_guard lock(harness.backend.mutex);
  EXPECT_EQ(harness.backend.clusters[0].label, "small flagellates");
  EXPECT_EQ(harness.backend.baselines_accepted, 1);
}

TEST_F(SestonctlTest, UsageErrorsExitTwo) {
  const std::vector<std::vector<std::string>> cases = {
      {},
      {"stauts"},
      {"status", "--colour"},
      {"status", "extra"},
      {"label", "3"},
      {"label", "three", "x"},
      {"baseline"},
      {"baseline", "reject"},
      {"status", "--timeout", "0"},
      {"label", "3", "x", "--token-file", "/nonexistent/token"},
  };
  for (const auto& args : cases) {
    Outcome outcome = RunCtl(args, api());
    EXPECT_EQ(outcome.exit_code, kExitUsage) << ::testing::PrintToString(args);
    EXPECT_FALSE(outcome.err.empty());
  }
  EXPECT_NE(RunCtl({"stauts"}).err.find("did you mean status?"), std::string::npos);
}

TEST_F(SestonctlTest, HelpEverywhereExitsZero) {
  Outcome global = RunCtl({"--help"});
  EXPECT_EQ(global.exit_code, kExitOk);
  EXPECT_NE(global.out.find("baseline accept"), std::string::npos);
  Outcome counts = RunCtl({"counts", "--help"});
  EXPECT_EQ(counts.exit_code, kExitOk);
  EXPECT_NE(counts.out.find("--window DURATION"), std::string::npos) << counts.out;
  EXPECT_NE(RunCtl({"label", "-h"}).out.find("ID"), std::string::npos);
}

TEST(Sestonctl, UnreachableDaemonExitsThreeWithAHint) {
  std::string address = "127.0.0.1:" + std::to_string(ClosedPort());
  Outcome outcome = RunCtl({"--api", address, "status"});
  EXPECT_EQ(outcome.exit_code, kExitUnreachable);
  EXPECT_EQ(outcome.err, "cannot reach sestond at " + address +
                             ": connection refused \u2014 is it running? (systemctl status "
                             "sestond)\n");
}

TEST(Sestonctl, RealBinaryReadsSestonApiAndExitsThreeWhenUnreachable) {
  std::string command = "SESTON_API=127.0.0.1:" + std::to_string(ClosedPort()) + " " +
                        SESTONCTL_BINARY + " status 2>&1";
  FILE* pipe = popen(command.c_str(), "r");
  ASSERT_NE(pipe, nullptr);
  std::string output;
  char chunk[256];
  while (std::fgets(chunk, sizeof chunk, pipe) != nullptr) output += chunk;
  int status = pclose(pipe);
  ASSERT_TRUE(WIFEXITED(status));
  EXPECT_EQ(WEXITSTATUS(status), kExitUnreachable) << output;
  EXPECT_NE(output.find("cannot reach sestond at 127.0.0.1:"), std::string::npos) << output;
}

}  // namespace
}  // namespace seston::ctl
