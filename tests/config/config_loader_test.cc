#include "config/config_loader.h"

#include <gtest/gtest.h>
#include <yaml-cpp/yaml.h>

#include <algorithm>
#include <fstream>
#include <string>
#include <vector>

#include "config/config_summary.h"
#include "support/test_paths.h"

namespace seston {
namespace {

std::filesystem::path ExampleConfigDirectory() {
  // tests/data/../../config: the example configs of the source tree.
  return std::filesystem::path(SESTON_TEST_DATA_DIR).parent_path().parent_path() / "config";
}

std::vector<ConfigProblem> Check(std::string_view yaml) { return CheckConfig(yaml, "config.yaml"); }

std::string AllText(const std::vector<ConfigProblem>& problems) {
  std::string text;
  for (const ConfigProblem& problem : problems) text += problem.ToString() + "\n";
  return text;
}

// The one problem about `key`; fails the test when there is not exactly one.
ConfigProblem OnlyProblemAbout(const std::vector<ConfigProblem>& problems, std::string_view key) {
  std::vector<ConfigProblem> matching;
  std::copy_if(problems.begin(), problems.end(), std::back_inserter(matching),
               [&](const ConfigProblem& problem) { return problem.key == key; });
  EXPECT_EQ(matching.size(), 1u) << "about " << key << " in:\n" << AllText(problems);
  return matching.empty() ? ConfigProblem{} : matching.front();
}

constexpr std::string_view kOneFeature = "features: [ { column: area_um2 } ]\n";

// Every key set to a value other than its default, so that each key is seen to reach its
// own field.
constexpr std::string_view kEveryKey = R"(station: "Skerry Sound mooring B"
input:
  time_column: t_utc
  sample_column: sample_id
  volume_column: vol
  default_volume_ml: 2.5
  delimiter: ";"
  drop_dir: /data/drop
  done_dir: /data/finished
  quarantine_dir: /data/bad
  settle_seconds: 7.5
  rescan_seconds: 45
  watch: poll
  file_suffix: .txt
  max_tracked_files: 50
  max_bad_row_fraction: 0.25
  max_line_bytes: 4096
  max_file_bytes: 5000000000
  socket:
    listen: "127.0.0.1:7461"
    unix_path: /run/seston/records.sock
    max_connections: 4
    max_queued_records: 1000
    max_queued_bytes: 100000
    max_pending_reply_bytes: 5000
    reply_linger_seconds: 0.5
features:
  - { column: area_um2, transform: log10 }
  - { column: aspect_ratio }
  - { column: perimeter_um, transform: ln }
  - { column: grey_level, transform: sqrt }
standardize: false
model:
  k: auto
  k_range: [3, 9]
  k_rule: silhouette
  warmup_particles: 3000
  restarts: 20
  max_iterations: 150
  batch_size: 128
  half_life_particles: 0
  half_life_seconds: 86400
  novelty_quantile: 1.0
  novelty_buffer: 1024
  seed: 18446744073709551615
  silhouette_sample: 500
counts:
  bin_seconds: 300
  output_dir: /data/counts
  retained_bins: 100
  bin_close_lag_seconds: 0
  retained_samples: 10
  open_count_files: 2
drift:
  enabled: false
  evaluate_every_particles: 250
  composition: { window_particles: 2000, alpha: 0.01, warn_jsd: 0.02, alarm_jsd: 0.05 }
  centre: { warn_spreads: 0.25, alarm_spreads: 2, common_fraction: 0.75,
            same_direction_cosine: -0.5 }
  fit: { delta: 0.01, lambda: 25, alpha: 0.99, min_particles: 50 }
  novelty: { window_particles: 3000, alpha: 0.05, warn_ratio: 1.5, alarm_ratio: 3,
             min_baseline_rate: 0.002, birth_min_particles: 100 }
  flow: { baseline_samples: 8, window_samples: 3, warn_ratio: 0.9, alarm_ratio: 0.6 }
alerts:
  dir: /data/alerts
  raise_after: 2
  resolve_after: 4
  cooldown_seconds: 60
  hook_command: "/usr/local/bin/page-technician --quiet"
  hook_timeout_seconds: 3
  recent_kept: 0
state:
  dir: /data/state
  checkpoint_seconds: 15
  start_fresh_if_unreadable: true
  max_checkpoint_bytes: 1000000
api:
  listen: "[::1]:8080"
  token_file: /etc/seston/token
  max_body_bytes: 1024
  max_header_bytes: 2048
  max_connections: 8
  request_timeout_seconds: 2.5
logging: { level: debug }
)";

TEST(ConfigLoader, EveryKeyReachesItsField) {
  Result<Config> loaded = ParseConfig(kEveryKey, "/etc/seston/station.yaml");
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  const Config& c = *loaded;
  EXPECT_EQ(c.station, "Skerry Sound mooring B");
  EXPECT_EQ(c.source_path, "/etc/seston/station.yaml");

  EXPECT_EQ(c.input.time_column, "t_utc");
  EXPECT_EQ(c.input.sample_column, "sample_id");
  EXPECT_EQ(c.input.volume_column, "vol");
  EXPECT_DOUBLE_EQ(c.input.default_volume_ml, 2.5);
  EXPECT_EQ(c.input.delimiter, ';');
  EXPECT_EQ(c.input.drop_dir, "/data/drop");
  EXPECT_EQ(c.input.done_dir, "/data/finished");
  EXPECT_EQ(c.input.quarantine_dir, "/data/bad");
  EXPECT_DOUBLE_EQ(c.input.settle_seconds, 7.5);
  EXPECT_DOUBLE_EQ(c.input.rescan_seconds, 45);
  EXPECT_EQ(c.input.watch, WatchMode::kPoll);
  EXPECT_EQ(c.input.file_suffix, ".txt");
  EXPECT_DOUBLE_EQ(c.input.max_bad_row_fraction, 0.25);
  EXPECT_EQ(c.input.max_line_bytes, 4096u);
  EXPECT_EQ(c.input.max_file_bytes, 5000000000ull);
  EXPECT_EQ(c.input.socket.listen, "127.0.0.1:7461");
  EXPECT_EQ(c.input.socket.unix_path, "/run/seston/records.sock");
  EXPECT_EQ(c.input.socket.max_connections, 4u);
  EXPECT_EQ(c.input.socket.max_queued_records, 1000u);
  EXPECT_EQ(c.input.socket.max_queued_bytes, 100000u);
  EXPECT_EQ(c.input.socket.max_pending_reply_bytes, 5000u);
  EXPECT_DOUBLE_EQ(c.input.socket.reply_linger_seconds, 0.5);
  EXPECT_EQ(c.input.max_tracked_files, 50u);

  ASSERT_EQ(c.features.features.size(), 4u);
  EXPECT_EQ(c.features.features[0].column, "area_um2");
  EXPECT_EQ(c.features.features[0].transform, Transform::kLog10);
  EXPECT_EQ(c.features.features[1].column, "aspect_ratio");
  EXPECT_EQ(c.features.features[1].transform, Transform::kNone);
  EXPECT_EQ(c.features.features[2].column, "perimeter_um");
  EXPECT_EQ(c.features.features[2].transform, Transform::kLn);
  EXPECT_EQ(c.features.features[3].column, "grey_level");
  EXPECT_EQ(c.features.features[3].transform, Transform::kSqrt);
  EXPECT_FALSE(c.features.standardize);

  EXPECT_EQ(c.model.k, 0);
  EXPECT_EQ(c.model.k_min, 3);
  EXPECT_EQ(c.model.k_max, 9);
  EXPECT_EQ(c.model.k_rule, KSelectionRule::kSilhouette);
  EXPECT_EQ(c.model.warmup_particles, 3000u);
  EXPECT_EQ(c.model.restarts, 20);
  EXPECT_EQ(c.model.max_iterations, 150);
  EXPECT_EQ(c.model.batch_size, 128u);
  EXPECT_DOUBLE_EQ(c.model.half_life_particles, 0);
  EXPECT_DOUBLE_EQ(c.model.half_life_seconds, 86400);
  EXPECT_DOUBLE_EQ(c.model.novelty_quantile, 1.0);
  EXPECT_EQ(c.model.novelty_buffer, 1024u);
  EXPECT_EQ(c.model.seed, 18446744073709551615ull);
  EXPECT_EQ(c.model.silhouette_sample, 500u);

  EXPECT_DOUBLE_EQ(c.counts.bin_seconds, 300);
  EXPECT_EQ(c.counts.output_dir, "/data/counts");
  EXPECT_EQ(c.counts.retained_bins, 100u);
  EXPECT_DOUBLE_EQ(c.counts.bin_close_lag_seconds, 0);
  EXPECT_EQ(c.counts.retained_samples, 10u);
  EXPECT_EQ(c.counts.open_count_files, 2u);

  EXPECT_FALSE(c.drift.enabled);
  EXPECT_EQ(c.drift.evaluate_every_particles, 250u);
  EXPECT_EQ(c.drift.composition.window_particles, 2000u);
  EXPECT_DOUBLE_EQ(c.drift.composition.alpha, 0.01);
  EXPECT_DOUBLE_EQ(c.drift.composition.warn_jsd, 0.02);
  EXPECT_DOUBLE_EQ(c.drift.composition.alarm_jsd, 0.05);
  EXPECT_DOUBLE_EQ(c.drift.centre.warn_spreads, 0.25);
  EXPECT_DOUBLE_EQ(c.drift.centre.alarm_spreads, 2);
  EXPECT_DOUBLE_EQ(c.drift.centre.common_fraction, 0.75);
  EXPECT_DOUBLE_EQ(c.drift.centre.same_direction_cosine, -0.5);
  EXPECT_DOUBLE_EQ(c.drift.fit.delta, 0.01);
  EXPECT_DOUBLE_EQ(c.drift.fit.lambda, 25);
  EXPECT_DOUBLE_EQ(c.drift.fit.alpha, 0.99);
  EXPECT_EQ(c.drift.fit.min_particles, 50u);
  EXPECT_EQ(c.drift.novelty.window_particles, 3000u);
  EXPECT_DOUBLE_EQ(c.drift.novelty.alpha, 0.05);
  EXPECT_DOUBLE_EQ(c.drift.novelty.warn_ratio, 1.5);
  EXPECT_DOUBLE_EQ(c.drift.novelty.alarm_ratio, 3);
  EXPECT_DOUBLE_EQ(c.drift.novelty.min_baseline_rate, 0.002);
  EXPECT_EQ(c.drift.novelty.birth_min_particles, 100u);
  EXPECT_EQ(c.drift.flow.baseline_samples, 8u);
  EXPECT_EQ(c.drift.flow.window_samples, 3u);
  EXPECT_DOUBLE_EQ(c.drift.flow.warn_ratio, 0.9);
  EXPECT_DOUBLE_EQ(c.drift.flow.alarm_ratio, 0.6);

  EXPECT_EQ(c.alerts.dir, "/data/alerts");
  EXPECT_EQ(c.alerts.raise_after, 2);
  EXPECT_EQ(c.alerts.resolve_after, 4);
  EXPECT_DOUBLE_EQ(c.alerts.cooldown_seconds, 60);
  EXPECT_EQ(c.alerts.hook_command, "/usr/local/bin/page-technician --quiet");
  EXPECT_DOUBLE_EQ(c.alerts.hook_timeout_seconds, 3);
  EXPECT_EQ(c.alerts.recent_kept, 0u);

  EXPECT_EQ(c.state.dir, "/data/state");
  EXPECT_DOUBLE_EQ(c.state.checkpoint_seconds, 15);
  EXPECT_TRUE(c.state.start_fresh_if_unreadable);
  EXPECT_EQ(c.state.max_checkpoint_bytes, 1000000u);

  EXPECT_EQ(c.api.listen, "[::1]:8080");
  EXPECT_EQ(c.api.token_file, "/etc/seston/token");
  EXPECT_EQ(c.api.max_body_bytes, 1024u);
  EXPECT_EQ(c.api.max_header_bytes, 2048u);
  EXPECT_EQ(c.api.max_connections, 8u);
  EXPECT_DOUBLE_EQ(c.api.request_timeout_seconds, 2.5);

  EXPECT_EQ(c.logging.level, "debug");
}

TEST(ConfigLoader, MissingKeysKeepTheOptionsDefaults) {
  Result<Config> loaded = ParseConfig(kOneFeature, "/srv/seston/minimal.yaml");
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  const Config defaults;
  EXPECT_EQ(loaded->station, defaults.station);
  EXPECT_EQ(loaded->model.k, defaults.model.k);
  EXPECT_EQ(loaded->model.k_min, defaults.model.k_min);
  EXPECT_EQ(loaded->model.k_max, defaults.model.k_max);
  EXPECT_DOUBLE_EQ(loaded->model.novelty_quantile, defaults.model.novelty_quantile);
  EXPECT_EQ(loaded->input.watch, defaults.input.watch);
  EXPECT_EQ(loaded->input.max_file_bytes, defaults.input.max_file_bytes);
  EXPECT_EQ(loaded->input.socket.listen, "");
  EXPECT_EQ(loaded->api.listen, defaults.api.listen);
  EXPECT_EQ(loaded->api.token_file, "");
  EXPECT_EQ(loaded->alerts.hook_command, "");
  EXPECT_EQ(loaded->logging.level, defaults.logging.level);
  EXPECT_TRUE(loaded->features.standardize);
  ASSERT_EQ(loaded->features.features.size(), 1u);
  EXPECT_EQ(loaded->features.features[0].transform, Transform::kNone);
  // Default relative paths are resolved like written ones, against the file's directory.
  EXPECT_EQ(loaded->input.drop_dir, "/srv/seston/var/drop");
  EXPECT_EQ(loaded->input.done_dir, "/srv/seston/var/drop/done");
  EXPECT_EQ(loaded->input.quarantine_dir, "/srv/seston/var/drop/quarantine");
  EXPECT_EQ(loaded->counts.output_dir, "/srv/seston/var/counts");
  EXPECT_EQ(loaded->alerts.dir, "/srv/seston/var/alerts");
  EXPECT_EQ(loaded->state.dir, "/srv/seston/var/state");
}

TEST(ConfigLoader, EmptySectionsKeepDefaults) {
  Result<Config> loaded = ParseConfig(std::string(kOneFeature) + "model:\ndrift:\n", "/x/c.yaml");
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  EXPECT_EQ(loaded->model.k, ModelOptions{}.k);
  EXPECT_TRUE(loaded->drift.enabled);
}

TEST(ConfigLoader, RelativePathsAreResolvedAgainstTheConfigDirectory) {
  Result<Config> loaded = ParseConfig(std::string(kOneFeature) +
                                          "input:\n"
                                          "  drop_dir: incoming\n"
                                          "  done_dir: ../archive/done\n"
                                          "  socket: { unix_path: run/records.sock }\n"
                                          "counts: { output_dir: ./out/counts }\n"
                                          "alerts: { dir: /var/lib/seston/alerts }\n"
                                          "state: { dir: state/ }\n"
                                          "api: { token_file: secrets/token }\n",
                                      "/opt/station/conf/seston.yaml");
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  EXPECT_EQ(loaded->input.drop_dir, "/opt/station/conf/incoming");
  EXPECT_EQ(loaded->input.done_dir, "/opt/station/archive/done");
  EXPECT_EQ(loaded->input.quarantine_dir, "/opt/station/conf/incoming/quarantine");
  EXPECT_EQ(loaded->input.socket.unix_path, "/opt/station/conf/run/records.sock");
  EXPECT_EQ(loaded->counts.output_dir, "/opt/station/conf/out/counts");
  EXPECT_EQ(loaded->alerts.dir, "/var/lib/seston/alerts");
  EXPECT_EQ(loaded->state.dir, "/opt/station/conf/state/");
  EXPECT_EQ(loaded->api.token_file, "/opt/station/conf/secrets/token");
}

TEST(ConfigLoader, LoadConfigResolvesAgainstTheFileNotTheWorkingDirectory) {
  testing::ScratchDirectory scratch;
  const std::filesystem::path file = scratch.path() / "site" / "seston.yaml";
  std::filesystem::create_directories(file.parent_path());
  std::ofstream(file) << kOneFeature << "state: { dir: ./var/state }\n";
  Result<Config> loaded = LoadConfig(file);
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  EXPECT_EQ(loaded->state.dir, (scratch.path() / "site" / "var" / "state").string());
  EXPECT_EQ(loaded->source_path, file.string());
}

TEST(ConfigLoader, MissingFileKeepsTheFileSystemCodeAndNamesThePath) {
  testing::ScratchDirectory scratch;
  const std::filesystem::path file = scratch.path() / "absent.yaml";
  Result<Config> loaded = LoadConfig(file);
  ASSERT_FALSE(loaded.ok());
  EXPECT_NE(loaded.status().code(), StatusCode::kInvalidArgument);
  EXPECT_NE(loaded.status().message().find(file.string()), std::string::npos)
      << loaded.status().message();
  const std::vector<ConfigProblem> problems = CheckConfigFile(PosixFileSystem::Instance(), file);
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_EQ(problems[0].line, 0);
  EXPECT_EQ(problems[0].file, file.string());
}

TEST(ConfigLoader, UnknownKeyNamesLineAndSuggestsTheClosestKey) {
  const auto problems = Check(std::string(kOneFeature) +
                              "model:\n"
                              "  k: 6\n"
                              "  restart: 5\n");
  const ConfigProblem problem = OnlyProblemAbout(problems, "model.restart");
  EXPECT_EQ(problem.line, 4);
  EXPECT_EQ(problem.column, 3);
  EXPECT_EQ(problem.ToString().rfind("config.yaml:4: model.restart is not a known key in model; "
                                     "did you mean \"restarts\"? Accepted keys: k, k_range, ",
                                     0),
            0u)
      << problem.ToString();
}

TEST(ConfigLoader, UnknownTopLevelKeyWithoutCloseSpellingListsKeys) {
  const auto problems = Check(std::string(kOneFeature) + "colours: bright\n");
  const ConfigProblem problem = OnlyProblemAbout(problems, "colours");
  EXPECT_EQ(problem.line, 2);
  EXPECT_EQ(problem.message.find("did you mean"), std::string::npos) << problem.message;
  EXPECT_NE(problem.message.find("Accepted keys: station, input, features, standardize, model"),
            std::string::npos)
      << problem.message;
}

TEST(ConfigLoader, WordKForKIsAnErrorNamingLineKeyAndRange) {
  const auto problems = Check(std::string(kOneFeature) +
                              "model:\n"
                              "  k: six\n");
  const ConfigProblem problem = OnlyProblemAbout(problems, "model.k");
  EXPECT_EQ(problem.line, 3);
  EXPECT_EQ(problem.ToString().rfind(
                "config.yaml:3: model.k must be an integer from 2 to 256, got \"six\"", 0),
            0u)
      << problem.ToString();
}

TEST(ConfigLoader, OutOfRangeValuesNameWhatIsAccepted) {
  const auto problems = Check(std::string(kOneFeature) +
                              "model:\n"
                              "  novelty_quantile: 0\n"
                              "  batch_size: 0\n"
                              "input:\n"
                              "  max_bad_row_fraction: 1.5\n"
                              "counts: { bin_seconds: -60 }\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "model.novelty_quantile").ToString(),
            "config.yaml:3: model.novelty_quantile must be a number greater than 0 and at most "
            "1, got \"0\"");
  EXPECT_EQ(OnlyProblemAbout(problems, "model.batch_size").ToString(),
            "config.yaml:4: model.batch_size must be an integer of at least 1, got \"0\"");
  EXPECT_EQ(OnlyProblemAbout(problems, "input.max_bad_row_fraction").ToString(),
            "config.yaml:6: input.max_bad_row_fraction must be a number from 0 to 1, got \"1.5\"");
  EXPECT_EQ(OnlyProblemAbout(problems, "counts.bin_seconds").ToString(),
            "config.yaml:7: counts.bin_seconds must be a number greater than 0 and at most "
            "86400, got \"-60\"");
}

TEST(ConfigLoader, WrongShapesAreErrors) {
  const auto problems = Check(std::string(kOneFeature) +
                              "standardize: yes\n"
                              "model: 6\n"
                              "alerts:\n"
                              "  dir: [a, b]\n"
                              "  raise_after: 2.5\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "standardize").ToString(),
            "config.yaml:2: standardize must be true or false, got \"yes\"");
  EXPECT_EQ(OnlyProblemAbout(problems, "model").line, 3);
  EXPECT_NE(OnlyProblemAbout(problems, "model")
                .message.find("model must be a mapping with the "
                              "keys k, k_range"),
            std::string::npos);
  EXPECT_EQ(OnlyProblemAbout(problems, "alerts.dir").ToString(),
            "config.yaml:5: alerts.dir must be a non-empty text value, got a list");
  EXPECT_EQ(OnlyProblemAbout(problems, "alerts.raise_after").ToString(),
            "config.yaml:6: alerts.raise_after must be an integer from 1 to 1000000, got \"2.5\"");
}

TEST(ConfigLoader, BadTransformNameListsTheTransforms) {
  const auto problems = Check(
      "features:\n"
      "  - { column: area_um2, transform: log10 }\n"
      "  - { column: perimeter_um, transform: log1O }\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "features[1].transform").ToString(),
            "config.yaml:3: features[1].transform must be one of none | log10 | ln | sqrt, got "
            "\"log1O\" (did you mean \"log10\"?)");
}

TEST(ConfigLoader, DuplicateFeatureColumnIsAnError) {
  const auto problems = Check(
      "features:\n"
      "  - { column: area_um2, transform: log10 }\n"
      "  - { column: aspect_ratio }\n"
      "  - { column: area_um2 }\n");
  const ConfigProblem problem = OnlyProblemAbout(problems, "features[2].column");
  EXPECT_EQ(problem.line, 4);
  EXPECT_EQ(problem.message,
            "features[2].column repeats \"area_um2\", already used by features[0] on line 2; "
            "each column may be a feature once");
}

TEST(ConfigLoader, FeatureMustNotBeTheTimeSampleOrVolumeColumn) {
  const auto problems = Check(
      "input: { volume_column: ml }\n"
      "features:\n"
      "  - { column: area_um2 }\n"
      "  - { column: ml }\n");
  const ConfigProblem problem = OnlyProblemAbout(problems, "features[1].column");
  EXPECT_EQ(problem.line, 4);
  EXPECT_NE(problem.message.find("is the column named by input.volume_column"), std::string::npos)
      << problem.message;
}

TEST(ConfigLoader, FeaturesAreRequiredAndNeedAColumn) {
  const auto missing = Check("station: x\n");
  EXPECT_EQ(OnlyProblemAbout(missing, "features").line, 0);
  const auto empty = Check("features: []\n");
  EXPECT_EQ(OnlyProblemAbout(empty, "features").line, 1);
  const auto no_column = Check("features:\n  - { transform: log10 }\n");
  EXPECT_EQ(OnlyProblemAbout(no_column, "features[0].column").line, 2);
}

TEST(ConfigLoader, MalformedYamlReportsItsLine) {
  const auto problems = Check(
      "station: x\n"
      "features: [ { column: a }\n"
      "model:\n"
      "  k: 3\n");
  ASSERT_EQ(problems.size(), 1u) << AllText(problems);
  EXPECT_EQ(problems[0].key, "");
  EXPECT_GE(problems[0].line, 2);
  EXPECT_LE(problems[0].line, 3);
  EXPECT_NE(problems[0].message.find("YAML syntax error"), std::string::npos);

  const auto indented = Check("station: x\n  model: 3\n");
  ASSERT_EQ(indented.size(), 1u) << AllText(indented);
  EXPECT_EQ(indented[0].line, 2);
  EXPECT_EQ(indented[0].ToString().rfind("config.yaml:2: YAML syntax error: ", 0), 0u);
}

TEST(ConfigLoader, BadListenAddressesAreErrors) {
  const auto problems = Check(std::string(kOneFeature) +
                              "api:\n"
                              "  listen: \"localhost:7460\"\n"
                              "input:\n"
                              "  socket:\n"
                              "    listen: \"127.0.0.1:70000\"\n");
  const ConfigProblem name = OnlyProblemAbout(problems, "api.listen");
  EXPECT_EQ(name.line, 3);
  EXPECT_EQ(name.message.rfind("api.listen must be HOST:PORT", 0), 0u) << name.message;
  EXPECT_NE(name.message.find("not a name"), std::string::npos) << name.message;
  const ConfigProblem port = OnlyProblemAbout(problems, "input.socket.listen");
  EXPECT_EQ(port.line, 6);
  EXPECT_NE(port.message.find("the port must be a number from 1 to 65535"), std::string::npos)
      << port.message;

  for (const char* bad : {"127.0.0.1", "::1:7460", "localhost:7460", "127.0.0.1:0",
                          "[127.0.0.1]:80", "10.0.0.1:+80", ":http"}) {
    const auto one = Check(std::string(kOneFeature) + "api: { listen: \"" + bad + "\" }\n");
    EXPECT_EQ(OnlyProblemAbout(one, "api.listen").line, 2) << bad;
  }
  for (const char* good : {"0.0.0.0:1", "[::]:65535", "192.0.2.7:7460", ":7470"}) {
    EXPECT_TRUE(Check(std::string(kOneFeature) + "api: { listen: \"" + good + "\" }\n").empty())
        << good;
  }
}

TEST(ConfigLoader, SameListenAddressForApiAndSocketIsAnError) {
  const auto problems =
      Check(std::string(kOneFeature) + "input: { socket: { listen: \"127.0.0.1:7460\" } }\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "input.socket.listen").line, 2);
}

TEST(ConfigLoader, AutoKTakesItsRangeFromKRange) {
  Result<Config> loaded =
      ParseConfig(std::string(kOneFeature) + "model: { k: auto, k_range: [1, 4] }\n", "/c.yaml");
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  EXPECT_EQ(loaded->model.k, 0);
  EXPECT_EQ(loaded->model.k_min, 1);
  EXPECT_EQ(loaded->model.k_max, 4);
}

TEST(ConfigLoader, AutoKWithABadRangeIsAnError) {
  for (const char* range : {"[9, 3]", "[0, 5]", "[4, 4]", "[2, 300]", "[2]", "5", "[a, 6]"}) {
    const auto problems = Check(std::string(kOneFeature) +
                                "model:\n"
                                "  k: auto\n"
                                "  k_range: " +
                                range + "\n");
    const ConfigProblem problem = OnlyProblemAbout(problems, "model.k_range");
    EXPECT_EQ(problem.line, 4) << range;
    EXPECT_NE(problem.message.find("1 <= k_min < k_max <= 256"), std::string::npos)
        << problem.message;
  }
}

TEST(ConfigLoader, WarmupMustCoverTheLargestK) {
  const auto fixed = Check(std::string(kOneFeature) + "model: { k: 8, warmup_particles: 5 }\n");
  EXPECT_EQ(OnlyProblemAbout(fixed, "model.warmup_particles").message,
            "model.warmup_particles must be at least model.k (8) so that every cluster can be "
            "seeded, got 5");
  const auto automatic = Check(std::string(kOneFeature) +
                               "model:\n  k: auto\n  k_range: [2, 40]\n  warmup_particles: 30\n");
  const ConfigProblem problem = OnlyProblemAbout(automatic, "model.warmup_particles");
  EXPECT_EQ(problem.line, 5);
  EXPECT_NE(problem.message.find("the largest k in model.k_range (40)"), std::string::npos);
}

TEST(ConfigLoader, ThresholdPairsMustBeOrdered) {
  const auto problems = Check(std::string(kOneFeature) +
                              "drift:\n"
                              "  composition: { warn_jsd: 0.1, alarm_jsd: 0.05 }\n"
                              "  centre: { warn_spreads: 3 }\n"
                              "  novelty: { warn_ratio: 5, birth_min_particles: 5000 }\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "drift.composition.warn_jsd").line, 3);
  EXPECT_EQ(OnlyProblemAbout(problems, "drift.centre.warn_spreads").line, 4);
  EXPECT_EQ(OnlyProblemAbout(problems, "drift.novelty.warn_ratio").line, 5);
  EXPECT_NE(OnlyProblemAbout(problems, "drift.novelty.birth_min_particles")
                .message.find("must not exceed model.novelty_buffer (4096)"),
            std::string::npos);
}

TEST(ConfigLoader, FlowRatiosAreFractionsWithTheAlarmBelowTheWarning) {
  const auto crossed = Check(std::string(kOneFeature) +
                             "drift:\n"
                             "  flow: { warn_ratio: 0.6, alarm_ratio: 0.8 }\n");
  EXPECT_EQ(OnlyProblemAbout(crossed, "drift.flow.alarm_ratio").line, 3);
  const auto out_of_range = Check(std::string(kOneFeature) +
                                  "drift:\n"
                                  "  flow:\n"
                                  "    warn_ratio: 1.2\n"
                                  "    window_samples: 0\n");
  EXPECT_EQ(OnlyProblemAbout(out_of_range, "drift.flow.warn_ratio").line, 4);
  EXPECT_EQ(OnlyProblemAbout(out_of_range, "drift.flow.window_samples").line, 5);
}

TEST(ConfigLoader, DirectoriesOfTheDropTreeMustDiffer) {
  const auto problems = Check(std::string(kOneFeature) +
                              "input: { drop_dir: /d, done_dir: /d/x, quarantine_dir: /d/x }\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "input.quarantine_dir").line, 2);
}

TEST(ConfigLoader, DuplicateKeyNamesBothLines) {
  const auto problems = Check(std::string(kOneFeature) +
                              "model:\n"
                              "  k: 4\n"
                              "  k: 5\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "model.k").ToString(),
            "config.yaml:4: model.k appears twice; the first is on line 3 (write each key once)");
}

TEST(ConfigLoader, BadEnumAndLevelWordsAreErrors) {
  const auto problems = Check(std::string(kOneFeature) +
                              "input: { watch: fanotify }\n"
                              "model: { k_rule: gap }\n"
                              "logging: { level: verbose }\n");
  EXPECT_EQ(OnlyProblemAbout(problems, "input.watch").ToString(),
            "config.yaml:2: input.watch must be one of inotify | poll, got \"fanotify\" (did "
            "you mean \"inotify\"?)");
  EXPECT_EQ(OnlyProblemAbout(problems, "model.k_rule").ToString(),
            "config.yaml:3: model.k_rule must be one of elbow | silhouette, got \"gap\"");
  EXPECT_EQ(OnlyProblemAbout(problems, "logging.level").ToString(),
            "config.yaml:4: logging.level must be one of trace | debug | info | warn | error, "
            "got \"verbose\"");
}

TEST(ConfigLoader, TabDelimiterIsAccepted) {
  Result<Config> loaded =
      ParseConfig(std::string(kOneFeature) + "input: { delimiter: \"\\t\" }\n", "/c.yaml");
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  EXPECT_EQ(loaded->input.delimiter, '\t');
  EXPECT_EQ(OnlyProblemAbout(Check(std::string(kOneFeature) + "input: { delimiter: \";;\" }\n"),
                             "input.delimiter")
                .line,
            2);
}

TEST(ConfigLoader, CheckConfigReturnsEveryProblemInFileOrder) {
  const auto problems = Check(
      "station: \"\"\n"
      "features:\n"
      "  - { column: area_um2, transform: cube }\n"
      "model:\n"
      "  k: six\n"
      "  seeed: 3\n"
      "api: { listen: nowhere }\n");
  ASSERT_EQ(problems.size(), 5u) << AllText(problems);
  EXPECT_EQ(problems[0].key, "station");
  EXPECT_EQ(problems[1].key, "features[0].transform");
  EXPECT_EQ(problems[2].key, "model.k");
  EXPECT_EQ(problems[3].key, "model.seeed");
  EXPECT_NE(problems[3].message.find("did you mean \"seed\"?"), std::string::npos);
  EXPECT_EQ(problems[4].key, "api.listen");
  std::vector<int> lines;
  for (const ConfigProblem& problem : problems) lines.push_back(problem.line);
  EXPECT_EQ(lines, (std::vector<int>{1, 3, 5, 6, 7}));

  Result<Config> parsed = ParseConfig(
      "station: \"\"\nfeatures:\n  - { column: area_um2, transform: cube }\nmodel:\n  k: six\n"
      "  seeed: 3\napi: { listen: nowhere }\n",
      "config.yaml");
  ASSERT_FALSE(parsed.ok());
  EXPECT_EQ(parsed.status().code(), StatusCode::kInvalidArgument);
  EXPECT_EQ(parsed.status().message(), AllText(problems).substr(0, AllText(problems).size() - 1));
}

TEST(ConfigLoader, MoreThanOneDocumentIsAnError) {
  const auto problems = Check(std::string(kOneFeature) + "---\nstation: other\n");
  ASSERT_EQ(problems.size(), 1u) << AllText(problems);
  EXPECT_NE(problems[0].message.find("2 YAML documents"), std::string::npos);
}

TEST(ExampleConfigs, DemoLoadsWithTheSimulatedStationsFeatures) {
  const std::filesystem::path file = ExampleConfigDirectory() / "demo.yaml";
  Result<Config> loaded = LoadConfig(file);
  ASSERT_TRUE(loaded.ok()) << loaded.status().message();
  EXPECT_EQ(loaded->model.k, 0);
  EXPECT_EQ(loaded->model.k_min, 3);
  EXPECT_EQ(loaded->model.k_max, 9);
  EXPECT_EQ(loaded->model.warmup_particles, 3000u);
  ASSERT_EQ(loaded->features.features.size(), 4u);
  EXPECT_EQ(loaded->features.features[0].column, "area_um2");
  EXPECT_EQ(loaded->features.features[0].transform, Transform::kLog10);
  EXPECT_EQ(loaded->features.features[2].column, "perimeter_um");
  EXPECT_EQ(loaded->features.features[2].transform, Transform::kLog10);
  const std::filesystem::path directory = std::filesystem::absolute(file).parent_path();
  EXPECT_EQ(loaded->input.drop_dir, (directory / "var/demo/drop").lexically_normal().string());
  EXPECT_EQ(loaded->state.dir, (directory / "var/demo/state").lexically_normal().string());
}

// Collects the dotted keys of every leaf of a config-shaped JSON object.
void LeafKeys(const nlohmann::json& object, const std::string& prefix,
              std::vector<std::string>& keys) {
  for (const auto& [name, value] : object.items()) {
    const std::string key = prefix.empty() ? name : prefix + "." + name;
    if (value.is_object()) {
      LeafKeys(value, key, keys);
    } else {
      keys.push_back(key);
    }
  }
}

// Whether `node` has the dotted key; const lookups, so the document is not changed.
bool HasKey(const YAML::Node& node, const std::string& dotted) {
  const std::size_t dot = dotted.find('.');
  const YAML::Node child = node[dotted.substr(0, dot)];
  if (!child.IsDefined()) return false;
  return dot == std::string::npos || HasKey(child, dotted.substr(dot + 1));
}

TEST(ExampleConfigs, FullExampleNamesEveryKeyAtItsDefault) {
  const std::filesystem::path file = ExampleConfigDirectory() / "seston.example.yaml";
  Result<Config> example = LoadConfig(file);
  ASSERT_TRUE(example.ok()) << example.status().message();

  // Every key the loader knows (ConfigToJson has the file's shape) is written out.
  std::vector<std::string> keys;
  LeafKeys(ConfigToJson(*example), "", keys);
  const YAML::Node document = YAML::LoadFile(file.string());
  for (const std::string& key : keys) {
    EXPECT_TRUE(HasKey(document, key)) << key << " missing from " << file;
  }
  for (const YAML::Node& feature : document["features"]) {
    EXPECT_TRUE(feature["column"].IsDefined() && feature["transform"].IsDefined());
  }

  // And every value it states is the true default: the same file with only station and
  // features, in the same directory, gives the same Config.
  Config defaults;
  const std::string minimal = "station: \"Skerry Sound mooring B\"\n" +
                              std::string(
                                  "features:\n  - { column: area_um2, transform: log10 }\n"
                                  "  - { column: aspect_ratio, transform: none }\n");
  ASSERT_TRUE(CheckConfig(minimal, std::filesystem::absolute(file).string(), &defaults).empty());
  EXPECT_EQ(ConfigToJson(*example).dump(2), ConfigToJson(defaults).dump(2));
}

}  // namespace
}  // namespace seston
