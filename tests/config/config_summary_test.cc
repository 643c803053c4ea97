#include "config/config_summary.h"

#include <gtest/gtest.h>

#include <string>

#include "config/config_loader.h"

namespace seston {
namespace {

constexpr std::string_view kStation = R"(station: "Skerry Sound mooring B"
input: { drop_dir: incoming, delimiter: "\t", max_file_bytes: 123456789012,
         socket: { listen: "127.0.0.1:7461" } }
features:
  - { column: area_um2, transform: log10 }
  - { column: aspect_ratio }
model: { k: auto, k_range: [3, 9], warmup_particles: 3000, novelty_quantile: 0.995,
         half_life_seconds: 0.1, seed: 18446744073709551615 }
drift: { centre: { same_direction_cosine: -0.25 } }
alerts: { hook_command: "/usr/bin/logger -t seston" }
api: { token_file: token }
)";

TEST(ConfigSummary, JsonIsAConfigThatReadsBackToTheSameValues) {
  Result<Config> original = ParseConfig(kStation, "/srv/site/seston.yaml");
  ASSERT_TRUE(original.ok()) << original.status().message();
  const nlohmann::json json = ConfigToJson(*original);
  // JSON is YAML: the summary is itself a config. Its paths are already absolute, so
  // the file name given to the second parse does not matter.
  Result<Config> again = ParseConfig(json.dump(), "/elsewhere/copy.yaml");
  ASSERT_TRUE(again.ok()) << again.status().message();
  EXPECT_EQ(ConfigToJson(*again), json);
  EXPECT_EQ(again->model.seed, 18446744073709551615ull);
  EXPECT_EQ(again->model.half_life_seconds, 0.1);  // exact: doubles round-trip
  EXPECT_EQ(again->input.delimiter, '\t');
  EXPECT_EQ(again->input.drop_dir, "/srv/site/incoming");
}

TEST(ConfigSummary, JsonSpellsEnumsAndAutoKAsTheFileDoes) {
  Result<Config> config = ParseConfig(kStation, "/srv/site/seston.yaml");
  ASSERT_TRUE(config.ok()) << config.status().message();
  const nlohmann::json json = ConfigToJson(*config);
  EXPECT_EQ(json["model"]["k"], "auto");
  EXPECT_EQ(json["model"]["k_range"], nlohmann::json::array({3, 9}));
  EXPECT_EQ(json["model"]["k_rule"], "elbow");
  EXPECT_EQ(json["input"]["watch"], "inotify");
  EXPECT_EQ(json["features"][0]["transform"], "log10");
  EXPECT_EQ(json["features"][1]["transform"], "none");
  EXPECT_EQ(json["api"]["token_file"], "/srv/site/token");
  EXPECT_FALSE(json.contains("source_path"));
}

TEST(ConfigSummary, DescriptionShowsHowTheFileWasUnderstood) {
  Result<Config> config = ParseConfig(kStation, "/srv/site/seston.yaml");
  ASSERT_TRUE(config.ok()) << config.status().message();
  const std::string text = DescribeConfig(*config);
  for (const char* expected :
       {"station \"Skerry Sound mooring B\", read from /srv/site/seston.yaml",
        "in /srv/site/incoming (inotify", "done files to /srv/site/incoming/done",
        "delimiter \"\\t\"", "record socket: tcp 127.0.0.1:7461",
        "features (2): log10(area_um2), aspect_ratio; standardised",
        "k chosen from 3 to 9 by the elbow rule, fitted after 3000 warm-up particles",
        "half-life 200000 particles and half-life 0.1 s", "beyond the 99.5 % distance quantile",
        "hook: \"/usr/bin/logger -t seston\"", "writes need the token in /srv/site/token"}) {
    EXPECT_NE(text.find(expected), std::string::npos) << "missing: " << expected << "\n" << text;
  }
}

TEST(ConfigSummary, DescriptionNamesWhatIsOff) {
  Result<Config> config = ParseConfig(
      "features: [ { column: a } ]\n"
      "model: { k: 4, half_life_particles: 0, novelty_quantile: 1 }\n"
      "drift: { enabled: false }\n",
      "/c.yaml");
  ASSERT_TRUE(config.ok()) << config.status().message();
  const std::string text = DescribeConfig(*config);
  for (const char* expected : {"model: k = 4,", "forgetting: never", "novelty: off", "drift: off",
                               "record socket: off", "writes refused"}) {
    EXPECT_NE(text.find(expected), std::string::npos) << "missing: " << expected << "\n" << text;
  }
}

}  // namespace
}  // namespace seston
