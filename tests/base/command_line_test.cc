#include "base/command_line.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

CommandLine MakeCli() {
  CommandLine cli("tool", "Does a thing.");
  cli.AddOption("window", "SECONDS", "window length", "3600");
  cli.AddOption("out", "DIR", "output directory");
  cli.AddRepeatedOption("input", "FILE", "input file");
  cli.AddFlag("quiet", "no progress");
  cli.AddPositional("PATH", "files", true);
  return cli;
}

TEST(CommandLine, ParsesValuesFlagsAndPositionals) {
  CommandLine cli = MakeCli();
  ASSERT_TRUE(cli.Parse({"--out", "d", "--quiet", "a.csv", "--window=60", "--input", "x",
                         "--input", "y", "b.csv"})
                  .ok());
  EXPECT_EQ(*cli.Get("out"), "d");
  EXPECT_TRUE(cli.Flag("quiet"));
  EXPECT_EQ(*cli.GetInt("window", 1, 100), 60);
  EXPECT_EQ(cli.GetAll("input"), (std::vector<std::string>{"x", "y"}));
  EXPECT_EQ(cli.positionals(), (std::vector<std::string>{"a.csv", "b.csv"}));
}

TEST(CommandLine, DefaultsApplyWhenAbsent) {
  CommandLine cli = MakeCli();
  ASSERT_TRUE(cli.Parse(std::vector<std::string>{}).ok());
  EXPECT_EQ(*cli.GetDouble("window", 0, 1e6), 3600.0);
  EXPECT_FALSE(cli.Get("out").has_value());
  EXPECT_FALSE(cli.Flag("quiet"));
}

TEST(CommandLine, UnknownOptionSuggestsTheClosest) {
  CommandLine cli = MakeCli();
  Status status = cli.Parse({"--windw", "5"});
  ASSERT_FALSE(status.ok());
  EXPECT_NE(status.message().find("did you mean --window?"), std::string::npos);
}

TEST(CommandLine, OutOfRangeValueNamesOptionAndRange) {
  CommandLine cli = MakeCli();
  ASSERT_TRUE(cli.Parse({"--window", "six"}).ok());
  auto value = cli.GetInt("window", 1, 86400);
  ASSERT_FALSE(value.ok());
  EXPECT_EQ(value.status().message(),
            "tool: --window must be an integer from 1 to 86400, got \"six\"");
}

TEST(CommandLine, MissingValueAndHelp) {
  CommandLine cli = MakeCli();
  EXPECT_FALSE(cli.Parse({"--out"}).ok());
  CommandLine help = MakeCli();
  ASSERT_TRUE(help.Parse({"--help"}).ok());
  EXPECT_TRUE(help.help_requested());
  EXPECT_NE(help.Help().find("--window SECONDS"), std::string::npos);
  EXPECT_NE(help.Help().find("(default 3600)"), std::string::npos);
}

TEST(CommandLine, EditDistanceCountsEdits) {
  EXPECT_EQ(EditDistance("kitten", "sitting"), 3u);
  EXPECT_EQ(EditDistance("", "abc"), 3u);
  EXPECT_EQ(EditDistance("same", "same"), 0u);
}

}  // namespace
}  // namespace seston
