// Scenario tests: the real Pipeline, fed the simulated station of seston-sim sample by
// sample on simulated event time, must raise the right kind of alert after each
// scenario's change, and almost nothing on steady water.
//
// Simulated water: seston-sim's Skerry Sound groups at concentration_scale 0.1 (about 86
// particles per 5 mL sample, one sample every 300 s), so 30 days of steady water cost
// under a million particles. Configuration: kConfigYaml below (the demo's features and
// model, every drift and alert option at its default). The detection delay printed is
// event hours from the scenario's change (its change_at) to the first alert of the
// expected kind.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdio>
#include <map>
#include <memory>
#include <set>
#include <string>
#include <vector>

#include "alerts/alert_event.h"
#include "base/file_system.h"
#include "config/config_loader.h"
#include "pipeline/pipeline.h"
#include "seston-sim/sample_generator.h"
#include "support/test_paths.h"

namespace seston {
namespace {

constexpr double kConcentrationScale = 0.1;
constexpr double kChangeAtHours = 6;

// The demo's features and model (config/demo.yaml); drift and alerts keep their defaults.
constexpr const char* kConfigYaml = R"yaml(
station: "Skerry Sound mooring B (simulated)"
features:
  - { column: area_um2, transform: log10 }
  - { column: aspect_ratio }
  - { column: perimeter_um, transform: log10 }
  - { column: grey_level }
standardize: true
model:
  k: auto
  k_range: [3, 9]
  k_rule: elbow
  warmup_particles: 3000
  half_life_particles: 0
  half_life_seconds: 18000
counts:
  output_dir: COUNTS_DIR
alerts:
  dir: ALERTS_DIR
)yaml";

std::string Replaced(std::string text, const std::string& from, const std::string& to) {
  text.replace(text.find(from), from.size(), to);
  return text;
}

struct ScenarioRun {
  std::vector<AlertEvent> raised;                 // every "raised" event, in order
  std::map<std::string, DetectorReading> latest;  // the detectors' last readings
  double change_seconds = 0;
  double end_seconds = 0;
};

ScenarioRun RunScenario(sim::Scenario scenario, double hours) {
  testing::ScratchDirectory scratch;
  std::string yaml = Replaced(kConfigYaml, "COUNTS_DIR", (scratch.path() / "counts").string());
  yaml = Replaced(yaml, "ALERTS_DIR", (scratch.path() / "alerts").string());
  auto config = ParseConfig(yaml, (scratch.path() / "scenario.yaml").string());
  EXPECT_TRUE(config.ok()) << config.status().message();
  PosixFileSystem fs;
  auto pipeline = Pipeline::Create(*config, fs);
  EXPECT_TRUE(pipeline.ok()) << pipeline.status().message();

  sim::SimulatorOptions options;
  options.concentration_scale = kConcentrationScale;
  options.scenario.scenario = scenario;
  options.scenario.change_at_hours = kChangeAtHours;
  auto generator = sim::SampleGenerator::Create(options);
  EXPECT_TRUE(generator.ok()) << generator.status().message();

  ScenarioRun run;
  run.change_seconds = options.start_seconds + kChangeAtHours * 3600;
  const auto samples = static_cast<std::uint64_t>(hours * 3600 / options.sample_interval_seconds);
  for (std::uint64_t n = 0; n < samples; ++n) {
    const sim::SimulatedSample sample = generator->Generate(n);
    const std::string csv = sim::FormatCsv(sample, options.groups, false);
    auto outcome = (*pipeline)->ProcessFile(sample.file_name, csv, nullptr);
    EXPECT_TRUE(outcome.ok()) << outcome.status().message();
    for (const auto& path : (*pipeline)->TakeNewAlertFiles()) {
      auto text = fs.ReadFile(path, 1 << 20);
      EXPECT_TRUE(text.ok());
      auto event = AlertEventFromJson(nlohmann::json::parse(*text));
      EXPECT_TRUE(event.ok());
      const nlohmann::json file = nlohmann::json::parse(*text);
      EXPECT_FALSE(file.at("caution").get<std::string>().empty()) << path;
      if (event->event == "raised") run.raised.push_back(*event);
    }
    run.end_seconds = sample.start_seconds;
  }
  run.latest = (*pipeline)->drift().latest_readings();
  return run;
}

std::string KindsText(const std::vector<AlertEvent>& events) {
  std::set<std::string> kinds;
  for (const auto& event : events) kinds.insert(event.kind);
  std::string text;
  for (const auto& kind : kinds) text += (text.empty() ? "" : ", ") + kind;
  return text.empty() ? "none" : text;
}

// Hours from the change to the first raised alert of one of `kinds` after it; negative
// when there is none.
double DelayHours(const ScenarioRun& run, const std::set<std::string>& kinds) {
  for (const auto& event : run.raised) {
    if (kinds.count(event.kind) > 0 && event.time_seconds >= run.change_seconds) {
      return (event.time_seconds - run.change_seconds) / 3600;
    }
  }
  return -1;
}

int RaisedBefore(const ScenarioRun& run) {
  return static_cast<int>(std::count_if(run.raised.begin(), run.raised.end(), [&](const auto& e) {
    return e.time_seconds < run.change_seconds;
  }));
}

void Report(const char* name, const ScenarioRun& run, double delay) {
  const std::string delay_text =
      delay >= 0 ? std::to_string(delay).substr(0, std::to_string(delay).find('.') + 3) + " h"
                 : "-";
  std::printf("scenario %-12s raised: %-45s delay %s, alerts before the change: %d\n", name,
              KindsText(run.raised).c_str(), delay_text.c_str(), RaisedBefore(run));
  for (const auto& event : run.raised) {
    std::printf("  %-16s at %+7.2f h from the change: %s\n", event.kind.c_str(),
                (event.time_seconds - run.change_seconds) / 3600, event.message.c_str());
  }
  for (const auto& [kind, reading] : run.latest) {
    std::printf("  last %-16s %-5s %s = %.4g (alarm %.4g)\n", kind.c_str(),
                std::string(DriftLevelName(reading.level)).c_str(), reading.statistic_name.c_str(),
                reading.statistic, reading.threshold);
  }
}

TEST(Scenario, BloomRaisesCompositionWithinHours) {
  ScenarioRun run = RunScenario(sim::Scenario::kBloom, 36);
  const double delay = DelayHours(run, {"composition"});
  Report("bloom", run, delay);
  EXPECT_GE(delay, 0);
  EXPECT_LT(delay, 12);
  EXPECT_EQ(RaisedBefore(run), 0);
}

TEST(Scenario, NewGroupIsBornAsANewCluster) {
  ScenarioRun run = RunScenario(sim::Scenario::kNewGroup, 36);
  const double delay = DelayHours(run, {"new_cluster", "novelty"});
  Report("new-group", run, delay);
  EXPECT_GE(delay, 0);
  EXPECT_LT(delay, 12);
  EXPECT_GE(DelayHours(run, {"new_cluster"}), 0);
  EXPECT_EQ(RaisedBefore(run), 0);
}

TEST(Scenario, FocusDriftRaisesInstrumentDrift) {
  ScenarioRun run = RunScenario(sim::Scenario::kFocusDrift, 48);
  const double delay = DelayHours(run, {"instrument_drift"});
  Report("focus-drift", run, delay);
  EXPECT_GE(delay, 0);
  EXPECT_LT(delay, 36);  // the drift ramps in over 12 h; centres follow with a 5 h half-life
  EXPECT_EQ(RaisedBefore(run), 0);
}

// A flow drop leaves concentrations, and so the mix, unchanged: fewer particles are
// counted in less water. The flow detector sees it; composition must stay quiet.
TEST(Scenario, FlowDropRaisesFlowAndNotComposition) {
  ScenarioRun run = RunScenario(sim::Scenario::kFlowDrop, 24);
  const double delay = DelayHours(run, {"flow"});
  Report("flow-drop", run, delay);
  EXPECT_GE(delay, 0);
  EXPECT_LT(delay, 6);
  EXPECT_LT(DelayHours(run, {"composition"}), 0);
  EXPECT_EQ(RaisedBefore(run), 0);
}

TEST(Scenario, SteadyWaterForThirtyDaysRaisesAtMostOneAlert) {
  ScenarioRun run = RunScenario(sim::Scenario::kSteady, 30 * 24);
  Report("steady", run, -1);
  std::printf("scenario steady over %.1f simulated days: %zu false alerts\n",
              (run.end_seconds - run.change_seconds) / 86400 + kChangeAtHours / 24,
              run.raised.size());
  EXPECT_LE(run.raised.size(), 1u);
}

}  // namespace
}  // namespace seston
