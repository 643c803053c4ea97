#include "config/config_diff.h"

#include <gtest/gtest.h>

#include <string>

#include "config/config_loader.h"

namespace seston {
namespace {

constexpr std::string_view kBase = R"(station: "Skerry Sound mooring B"
features:
  - { column: area_um2, transform: log10 }
  - { column: aspect_ratio }
model: { k: 4, warmup_particles: 500 }
)";

Config Parse(std::string_view extra) {
  Result<Config> config =
      ParseConfig(std::string(kBase) + std::string(extra), "/srv/s/seston.yaml");
  EXPECT_TRUE(config.ok()) << config.status().message();
  return config.ok() ? *config : Config{};
}

std::vector<std::string> Keys(const std::vector<ConfigChange>& changes) {
  std::vector<std::string> keys;
  for (const ConfigChange& change : changes) keys.push_back(change.key);
  return keys;
}

TEST(ConfigDiff, FindsNothingBetweenEqualConfigs) {
  ConfigDiff diff = DiffConfigs(Parse(""), Parse(""));
  EXPECT_TRUE(diff.empty());
  EXPECT_FALSE(diff.refused());
  EXPECT_EQ(diff.RefusalMessage(), "");
}

TEST(ConfigDiff, AppliesThresholdsPolicyHookForwardingAndLoggingLive) {
  ConfigDiff diff = DiffConfigs(
      Parse(""), Parse("drift: { fit: { lambda: 80 }, composition: { alarm_jsd: 0.05 } }\n"
                       "alerts: { raise_after: 2, cooldown_seconds: 600, hook_command: /bin/true,\n"
                       "          alertmanager: { url: \"http://127.0.0.1:9093\" } }\n"
                       "logging: { level: debug }\n"
                       "input: { max_bad_row_fraction: 0.2 }\n"));
  EXPECT_FALSE(diff.refused());
  EXPECT_EQ(Keys(diff.Of(ReloadEffect::kLive)),
            (std::vector<std::string>{"alerts.alertmanager.url", "alerts.cooldown_seconds",
                                      "alerts.hook_command", "alerts.raise_after",
                                      "drift.composition.alarm_jsd", "drift.fit.lambda",
                                      "input.max_bad_row_fraction", "logging.level"}));
  EXPECT_TRUE(diff.Of(ReloadEffect::kRestart).empty());
  ASSERT_EQ(diff.changes.size(), 8u);
  EXPECT_EQ(diff.changes[3].old_value, "3");
  EXPECT_EQ(diff.changes[3].new_value, "2");
  EXPECT_EQ(diff.changes[7].old_value, "\"info\"");
  EXPECT_EQ(diff.changes[7].new_value, "\"debug\"");
}

TEST(ConfigDiff, RefusesModelChangesNamingEveryKeyWithItsValues) {
  ConfigDiff diff =
      DiffConfigs(Parse(""), Parse("standardize: false\ncounts: { bin_seconds: 300 }\n"
                                   "drift: { fit: { lambda: 80 } }\n"));
  EXPECT_TRUE(diff.refused());
  EXPECT_EQ(Keys(diff.Of(ReloadEffect::kRefused)),
            (std::vector<std::string>{"counts.bin_seconds", "standardize"}));
  EXPECT_EQ(Keys(diff.Of(ReloadEffect::kLive)), (std::vector<std::string>{"drift.fit.lambda"}));
  std::string message = diff.RefusalMessage();
  EXPECT_NE(message.find("counts.bin_seconds (60.0 -> 300.0)"), std::string::npos) << message;
  EXPECT_NE(message.find("standardize (true -> false)"), std::string::npos) << message;
  EXPECT_NE(message.find("running configuration is kept"), std::string::npos);
  EXPECT_EQ(message.find("lambda"), std::string::npos) << "only refused keys are named";
}

TEST(ConfigDiff, ComparesTheFeatureListAndKRangeWhole) {
  Result<Config> other = ParseConfig(R"(station: "Skerry Sound mooring B"
features:
  - { column: area_um2, transform: ln }
  - { column: aspect_ratio }
model: { k: auto, k_range: [2, 8], warmup_particles: 500 }
)",
                                     "/srv/s/seston.yaml");
  ASSERT_TRUE(other.ok()) << other.status().message();
  ConfigDiff diff = DiffConfigs(Parse(""), *other);
  EXPECT_EQ(Keys(diff.changes), (std::vector<std::string>{"features", "model.k", "model.k_range"}));
  EXPECT_TRUE(diff.refused());
  EXPECT_NE(diff.changes[0].new_value.find("\"ln\""), std::string::npos);
  EXPECT_EQ(diff.changes[1].old_value, "4");
  EXPECT_EQ(diff.changes[1].new_value, "\"auto\"");
  EXPECT_EQ(diff.changes[2].new_value, "[2,8]");
}

TEST(ConfigDiff, TakesAddressesAndDirectoriesAtTheNextStart) {
  ConfigDiff diff = DiffConfigs(
      Parse(""), Parse("api: { listen: \"127.0.0.1:7470\" }\nstate: { dir: /var/lib/x }\n"
                       "input: { settle_seconds: 9 }\ndrift: { enabled: false }\n"));
  EXPECT_FALSE(diff.refused());
  EXPECT_EQ(Keys(diff.Of(ReloadEffect::kRestart)),
            (std::vector<std::string>{"api.listen", "drift.enabled", "input.settle_seconds",
                                      "state.dir"}));
  EXPECT_EQ(diff.Describe(ReloadEffect::kRestart)
                .find("api.listen (\"127.0.0.1:7460\" -> "
                      "\"127.0.0.1:7470\")"),
            0u);
}

TEST(ConfigDiff, ClassifiesKeysByTheirSection) {
  EXPECT_EQ(ReloadEffectOf("drift.novelty.window_particles"), ReloadEffect::kLive);
  EXPECT_EQ(ReloadEffectOf("alerts.alertmanager.resend_seconds"), ReloadEffect::kLive);
  EXPECT_EQ(ReloadEffectOf("model.seed"), ReloadEffect::kRefused);
  EXPECT_EQ(ReloadEffectOf("model.warmup_particles"), ReloadEffect::kRefused);
  EXPECT_EQ(ReloadEffectOf("features"), ReloadEffect::kRefused);
  EXPECT_EQ(ReloadEffectOf("alerts.dir"), ReloadEffect::kRestart);
  EXPECT_EQ(ReloadEffectOf("drift.enabled"), ReloadEffect::kRestart);
  EXPECT_EQ(ReloadEffectOf("modelling.k"), ReloadEffect::kRestart) << "a prefix is a section";
  EXPECT_EQ(ReloadEffectName(ReloadEffect::kRefused), "refused");
}

}  // namespace
}  // namespace seston
