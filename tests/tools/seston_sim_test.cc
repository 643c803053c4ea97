// Tests of the simulated instrument: determinism, the written columns, the configured
// concentrations, each scenario's change, file naming, the live and socket modes, and
// the real binary's command line.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <algorithm>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/read_until.hpp>
#include <boost/asio/streambuf.hpp>
#include <boost/asio/write.hpp>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <numbers>
#include <random>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "base/file_system.h"
#include "base/time_format.h"
#include "seston-sim/command_line.h"
#include "seston-sim/random_source.h"
#include "seston-sim/run_simulation.h"
#include "seston-sim/sample_generator.h"
#include "support/test_paths.h"

namespace seston::sim {
namespace {

using Table = std::vector<std::vector<std::string>>;

std::vector<std::string> Split(const std::string& text, char separator) {
  std::vector<std::string> parts;
  std::stringstream stream(text);
  std::string part;
  while (std::getline(stream, part, separator)) parts.push_back(part);
  return parts;
}

Table ParseCsv(const std::string& text) {
  Table rows;
  for (const std::string& line : Split(text, '\n')) rows.push_back(Split(line, ','));
  return rows;
}

std::string ReadAll(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

// File name -> contents of every regular file in `directory`.
std::map<std::string, std::string> ReadDirectory(const std::filesystem::path& directory) {
  std::map<std::string, std::string> files;
  for (const auto& entry : std::filesystem::directory_iterator(directory)) {
    files[entry.path().filename().string()] = ReadAll(entry.path());
  }
  return files;
}

CommandLine ParseOrDie(const std::vector<std::string>& args) {
  auto parsed = ParseCommandLine(args);
  EXPECT_TRUE(parsed.ok()) << parsed.status().ToString();
  return parsed.ok() ? *parsed : CommandLine{};
}

SampleGenerator MakeGenerator(SimulatorOptions options) {
  auto generator = SampleGenerator::Create(std::move(options));
  EXPECT_TRUE(generator.ok()) << generator.status().ToString();
  return std::move(generator).value();
}

SimulatorOptions ScenarioOptionsFor(Scenario scenario, double change_at_hours, double ramp_hours) {
  SimulatorOptions options;
  options.seed = 20260601;
  options.scenario.scenario = scenario;
  options.scenario.change_at_hours = change_at_hours;
  options.scenario.ramp_hours = ramp_hours;
  return options;
}

double Median(std::vector<double> values) {
  std::sort(values.begin(), values.end());
  return values[values.size() / 2];
}

std::size_t GroupIndex(const SimulatorOptions& options, std::string_view name) {
  for (std::size_t g = 0; g < options.groups.size(); ++g) {
    if (options.groups[g].name == name) return g;
  }
  ADD_FAILURE() << "no group " << name;
  return 0;
}

// Runs the binary with `arguments`; returns its exit code, stdout and stderr in `output`.
int RunBinary(const std::string& arguments, std::string& output) {
  std::string command = std::string(SESTON_SIM_BINARY) + " " + arguments + " 2>&1";
  FILE* pipe = ::popen(command.c_str(), "r");
  if (pipe == nullptr) return -1;
  char buffer[4096];
  std::size_t got = 0;
  while ((got = std::fread(buffer, 1, sizeof buffer, pipe)) > 0) output.append(buffer, got);
  int status = ::pclose(pipe);
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

TEST(RandomSource, UniformIsTheTopBitsOfTheStandardEngine) {
  // C++ standard [rand.predef]: the 10000th output of a default-constructed
  // std::mt19937_64 (seed 5489) is 9981545732273789042. Uniform() must be its top 53
  // bits over 2^53, whatever the standard library.
  RandomSource random(5489);
  for (int i = 0; i < 9999; ++i) random.Uniform();
  EXPECT_EQ(random.Uniform(), static_cast<double>(9981545732273789042ULL >> 11) * 0x1.0p-53);
}

TEST(RandomSource, PoissonAndNormalMomentsMatchWithinFourStandardErrors) {
  RandomSource random(7);
  constexpr int kDraws = 5000;
  for (double mean : {0.5, 12.0, 1500.0}) {
    double sum = 0, sum_squares = 0;
    for (int i = 0; i < kDraws; ++i) {
      double x = static_cast<double>(random.Poisson(mean));
      sum += x;
      sum_squares += x * x;
    }
    double sample_mean = sum / kDraws;
    double sample_variance = sum_squares / kDraws - sample_mean * sample_mean;
    // Poisson: mean = variance = λ; standard error of the mean sqrt(λ/n); of the variance
    // about λ·sqrt(2/n) (the normal approximation, from memory).
    EXPECT_NEAR(sample_mean, mean, 4 * std::sqrt(mean / kDraws)) << "λ = " << mean;
    EXPECT_NEAR(sample_variance, mean,
                4 * mean * std::sqrt(2.0 / kDraws) + 4 * std::sqrt(mean / kDraws))
        << "λ = " << mean;
  }
  double sum = 0, sum_squares = 0;
  for (int i = 0; i < kDraws; ++i) {
    double z = random.Normal();
    sum += z;
    sum_squares += z * z;
  }
  EXPECT_NEAR(sum / kDraws, 0.0, 4 * std::sqrt(1.0 / kDraws));
  EXPECT_NEAR(sum_squares / kDraws, 1.0, 4 * std::sqrt(2.0 / kDraws));
}

TEST(SestonSim, SameSeedWritesByteIdenticalFilesAndAnotherSeedDoesNot) {
  testing::ScratchDirectory scratch;
  auto run = [&](const std::string& dir, const std::string& seed) {
    CommandLine command =
        ParseOrDie({"--out", (scratch.path() / dir).string(), "--samples", "12", "--seed", seed,
                    "--scenario", "bloom", "--change-at", "0.5", "--truth"});
    std::ostringstream log;
    Status status = RunSimulation(command, PosixFileSystem::Instance(), log, false);
    EXPECT_TRUE(status.ok()) << status.ToString();
    return ReadDirectory(scratch.path() / dir);
  };
  auto first = run("a", "42");
  auto second = run("b", "42");
  auto other = run("c", "43");
  ASSERT_EQ(first.size(), 12u);
  EXPECT_EQ(first, second);
  ASSERT_EQ(other.size(), 12u);
  EXPECT_NE(first.begin()->second, other.begin()->second);
}

TEST(SestonSim, EveryRowHasEsdFromAreaAndAPerimeterNoShorterThanACircles) {
  SimulatorOptions options;
  options.scenario.scenario = Scenario::kFocusDrift;
  options.scenario.change_at_hours = 0;
  SampleGenerator generator = MakeGenerator(options);
  std::size_t rows = 0;
  for (std::uint64_t n = 0; n < 40; n += 13) {  // before, during and after the drift
    Table table = ParseCsv(FormatCsv(generator.Generate(n), options.groups, false));
    ASSERT_EQ(table[0],
              (std::vector<std::string>{"time", "sample", "volume_ml", "area_um2", "esd_um",
                                        "aspect_ratio", "perimeter_um", "grey_level"}));
    for (std::size_t i = 1; i < table.size(); ++i, ++rows) {
      ASSERT_EQ(table[i].size(), 8u) << "row " << i;
      double area = std::stod(table[i][3]);
      double esd = std::stod(table[i][4]);
      double aspect = std::stod(table[i][5]);
      double perimeter = std::stod(table[i][6]);
      int grey = std::stoi(table[i][7]);
      // ESD = 2·sqrt(A/π) (common practice), to the 0.001 µm the column is written in.
      EXPECT_NEAR(esd, 2.0 * std::sqrt(area / std::numbers::pi), 0.0005 + 1e-9) << "row " << i;
      // Isoperimetric inequality: no closed outline of area A is shorter than the circle's
      // 2·sqrt(π·A).
      EXPECT_GE(perimeter, 2.0 * std::sqrt(std::numbers::pi * area)) << "row " << i;
      EXPECT_GT(aspect, 0.0);
      EXPECT_LE(aspect, 1.0);
      EXPECT_GE(grey, 0);
      EXPECT_LE(grey, 255);
    }
  }
  EXPECT_GT(rows, 1000u);
}

TEST(SestonSim, GroupConcentrationsMatchTheConfiguredOnesWithinPoissonFourSigma) {
  SimulatorOptions options;
  options.seed = 99;
  SampleGenerator generator = MakeGenerator(options);
  constexpr std::uint64_t kSamples = 150;
  std::vector<double> counts(options.groups.size(), 0.0);
  double volume_ml = 0;
  for (std::uint64_t n = 0; n < kSamples; ++n) {
    SimulatedSample sample = generator.Generate(n);
    volume_ml += sample.volume_ml;
    for (const SimulatedParticle& p : sample.particles) counts[p.group] += 1;
  }
  // Given the volumes, a group's total count is Poisson(concentration × total volume):
  // accept it within 4 standard deviations, sqrt(expected).
  for (std::size_t g = 0; g < counts.size(); ++g) {
    double expected = options.groups[g].concentration_per_ml * volume_ml;
    EXPECT_NEAR(counts[g], expected, 4 * std::sqrt(expected)) << options.groups[g].name;
  }
  EXPECT_NEAR(volume_ml / kSamples, options.nominal_volume_ml, 0.01);
}

TEST(SestonSim, SamplesBeforeTheChangeAreTheSteadyOnes) {
  SimulatorOptions steady = ScenarioOptionsFor(Scenario::kSteady, 0, 0);
  for (Scenario scenario : AllScenarios()) {
    SampleGenerator changed = MakeGenerator(ScenarioOptionsFor(scenario, 1.0, 1.0));
    SampleGenerator reference = MakeGenerator(steady);
    for (std::uint64_t n : {0, 11}) {  // 11 starts at 0:55, before change-at 1 h
      EXPECT_EQ(FormatCsv(changed.Generate(n), steady.groups, true),
                FormatCsv(reference.Generate(n), steady.groups, true))
          << ScenarioName(scenario) << " sample " << n;
    }
  }
}

TEST(SestonSim, BloomRaisesTheDiatomShareAtLeastThreefold) {
  SimulatorOptions options = ScenarioOptionsFor(Scenario::kBloom, 2.0, 1.0);
  SampleGenerator generator = MakeGenerator(options);
  std::size_t diatoms = GroupIndex(options, ScenarioModel::kBloomGroup);
  auto share = [&](std::uint64_t from, std::uint64_t to) {
    double hits = 0, total = 0;
    for (std::uint64_t n = from; n < to; ++n) {
      for (const SimulatedParticle& p : generator.Generate(n).particles) {
        hits += p.group == diatoms;
        total += 1;
      }
    }
    return hits / total;
  };
  // 12 samples per hour: before = hours 0..2, after = from the end of the ramp (3 h).
  double before = share(0, 24);
  double after = share(36, 60);
  EXPECT_GE(after / before, 3.0) << "before " << before << ", after " << after;
  // Change begins with the first sample at or after 2 h: index 24, id S000025.
  EXPECT_EQ(generator.ChangeSampleIndex(), 24u);
  EXPECT_NE(generator.ChangeNotice().find("2026-06-01T02:00:00Z (sample S000025)"),
            std::string::npos)
      << generator.ChangeNotice();
}

TEST(SestonSim, NewGroupIsAbsentBeforeTheChangeAndInEverySampleAfterTheRamp) {
  SimulatorOptions options = ScenarioOptionsFor(Scenario::kNewGroup, 2.0, 1.0);
  SampleGenerator generator = MakeGenerator(options);
  std::size_t spiny = GroupIndex(options, ScenarioModel::kNewGroup);
  auto count = [&](std::uint64_t n) {
    auto particles = generator.Generate(n).particles;
    return std::count_if(particles.begin(), particles.end(),
                         [&](const SimulatedParticle& p) { return p.group == spiny; });
  };
  for (std::uint64_t n = 0; n < 24; ++n) EXPECT_EQ(count(n), 0) << "sample " << n;
  // 8 per mL × 5 mL = 40 expected; P(0) = e^-40.
  for (std::uint64_t n = 36; n < 48; ++n) EXPECT_GT(count(n), 10) << "sample " << n;
}

TEST(SestonSim, FocusDriftShrinksMedianEsdAndLightensGreyLevels) {
  SimulatorOptions options = ScenarioOptionsFor(Scenario::kFocusDrift, 1.0, 2.0);
  SampleGenerator generator = MakeGenerator(options);
  auto medians = [&](std::uint64_t from, std::uint64_t to) {
    std::vector<double> esd, grey;
    for (std::uint64_t n = from; n < to; ++n) {
      for (const SimulatedParticle& p : generator.Generate(n).particles) {
        esd.push_back(p.esd_um);
        grey.push_back(p.grey_level);
      }
    }
    return std::pair(Median(esd), Median(grey));
  };
  auto [esd_before, grey_before] = medians(0, 12);
  auto [esd_mid, grey_mid] = medians(24, 26);  // halfway along the ramp
  auto [esd_after, grey_after] = medians(36, 48);
  // Configured: diameters × 0.75, grey + 40 at the ramp's end; halfway, half of that.
  EXPECT_NEAR(esd_after / esd_before, ScenarioModel::kFocusDriftEsdScale, 0.05);
  EXPECT_LT(esd_mid, esd_before);
  EXPECT_GT(esd_mid, esd_after);
  EXPECT_NEAR(grey_after - grey_before, ScenarioModel::kFocusDriftGreyShift, 6.0);
  EXPECT_GT(grey_mid, grey_before);
}

TEST(SestonSim, FlowDropCutsVolumeAndCountsInProportion) {
  SimulatorOptions options = ScenarioOptionsFor(Scenario::kFlowDrop, 1.0, 0.5);
  SampleGenerator generator = MakeGenerator(options);
  double total_per_ml = 0;
  for (const ParticleGroup& g : options.groups) total_per_ml += g.concentration_per_ml;
  auto tally = [&](std::uint64_t from, std::uint64_t to) {
    double volume = 0, count = 0;
    for (std::uint64_t n = from; n < to; ++n) {
      SimulatedSample sample = generator.Generate(n);
      volume += sample.volume_ml;
      count += static_cast<double>(sample.particles.size());
    }
    return std::pair(volume, count);
  };
  auto [volume_before, count_before] = tally(0, 12);
  auto [volume_after, count_after] = tally(18, 30);
  EXPECT_NEAR(volume_after / volume_before, ScenarioModel::kFlowDropFraction, 0.02);
  // Concentrations are unchanged, so each count is Poisson(Σ concentration × volume):
  // within 4 sigma on both sides of the drop.
  EXPECT_NEAR(count_before, total_per_ml * volume_before,
              4 * std::sqrt(total_per_ml * volume_before));
  EXPECT_NEAR(count_after, total_per_ml * volume_after, 4 * std::sqrt(total_per_ml * volume_after));
}

TEST(SestonSim, FileNamesSortByTimeAcrossYearEndAndSampleIdWidth) {
  SimulatorOptions options;
  options.start_seconds = *ParseEventTime("2026-12-31T23:00:00Z");
  options.first_sample_number = 999990;  // ids grow from 6 to 7 digits on the way
  SampleGenerator generator = MakeGenerator(options);
  std::vector<std::string> names;
  for (std::uint64_t n = 0; n < 24; ++n) names.push_back(generator.Generate(n).file_name);
  EXPECT_EQ(names.front(), "skerry-sound-b_20261231T230000Z_S999990.csv");
  EXPECT_EQ(names.back(), "skerry-sound-b_20270101T005500Z_S1000013.csv");
  std::vector<std::string> sorted = names;
  std::sort(sorted.begin(), sorted.end());
  EXPECT_EQ(sorted, names);
}

TEST(SestonSim, ParticleTimesLieInsideTheAcquisitionInOrder) {
  SampleGenerator generator = MakeGenerator(SimulatorOptions{});
  SimulatedSample sample = generator.Generate(5);
  ASSERT_FALSE(sample.particles.empty());
  EXPECT_EQ(sample.start_seconds, kDefaultStartSeconds + 5 * 300.0);
  EXPECT_GE(sample.particles.front().time_seconds, sample.start_seconds);
  EXPECT_LT(sample.particles.back().time_seconds, sample.start_seconds + 120.0);
  EXPECT_TRUE(
      std::is_sorted(sample.particles.begin(), sample.particles.end(),
                     [](const auto& a, const auto& b) { return a.time_seconds < b.time_seconds; }));
}

TEST(SestonSim, LiveModesLeaveOnlyFinishedFilesEqualToBatchOnes) {
  testing::ScratchDirectory scratch;
  std::string common = "--samples=3 --seed=5 --concentration-scale=0.2";
  auto run = [&](std::vector<std::string> args) {
    for (const std::string& word : Split(common, ' ')) args.push_back(word);
    std::ostringstream log;
    Status status = RunSimulation(ParseOrDie(args), PosixFileSystem::Instance(), log, false);
    EXPECT_TRUE(status.ok()) << status.ToString();
    return log.str();
  };
  run({"--out", (scratch.path() / "batch").string()});
  // At 36000 event s per wall s, three 300 s samples take about 25 ms of wall time.
  std::string live_log =
      run({"--out", (scratch.path() / "live").string(), "--live", "--speed", "36000"});
  run({"--out", (scratch.path() / "slow").string(), "--live", "--speed", "36000", "--slow-write",
       "--slow-write-seconds", "0.05"});
  auto batch = ReadDirectory(scratch.path() / "batch");
  EXPECT_EQ(batch.size(), 3u);
  EXPECT_EQ(ReadDirectory(scratch.path() / "live"), batch);  // no ".part" left behind
  EXPECT_EQ(ReadDirectory(scratch.path() / "slow"), batch);
  EXPECT_NE(live_log.find("S000003"), std::string::npos) << live_log;
}

TEST(SestonSim, SocketModeSendsRecordsAndCloseLinesAndPrintsAnswers) {
  namespace asio = boost::asio;
  asio::io_context context;
  asio::ip::tcp::acceptor acceptor(context, {asio::ip::make_address("127.0.0.1"), 0});
  std::vector<std::string> received;
  std::thread server([&] {
    asio::ip::tcp::socket socket(context);
    acceptor.accept(socket);
    asio::streambuf buffer;
    boost::system::error_code error;
    bool answered = false;
    while (asio::read_until(socket, buffer, '\n', error) > 0 || !error) {
      std::istream in(&buffer);
      std::string line;
      while (std::getline(in, line)) {
        if (in.eof()) {  // partial line: put it back for the next read
          std::ostream(&buffer) << line;
          break;
        }
        received.push_back(line);
      }
      if (!answered) {
        asio::write(socket, asio::buffer(std::string("rejected line 1: just testing\n")));
        answered = true;
      }
      if (error) break;
    }
  });
  std::string address = "127.0.0.1:" + std::to_string(acceptor.local_endpoint().port());
  CommandLine command = ParseOrDie({"--live", "--socket", address, "--samples", "2", "--speed",
                                    "36000", "--concentration-scale", "0.1", "--seed", "3"});
  std::ostringstream log;
  Status status = RunSimulation(command, PosixFileSystem::Instance(), log, false);
  server.join();
  ASSERT_TRUE(status.ok()) << status.ToString();
  EXPECT_NE(log.str().find("server answered: rejected line 1: just testing"), std::string::npos)
      << log.str();

  SampleGenerator generator = MakeGenerator(command.simulator);
  std::vector<std::string> expected;
  for (std::uint64_t n = 0; n < 2; ++n) {
    SimulatedSample sample = generator.Generate(n);
    for (const std::string& line :
         Split(FormatNdjson(sample, command.simulator.groups, false), '\n')) {
      expected.push_back(line);
    }
    // The CSV and NDJSON carry the same values under the same names.
    Table csv = ParseCsv(FormatCsv(sample, command.simulator.groups, false));
    ASSERT_GT(csv.size(), 1u);
    nlohmann::json first =
        nlohmann::json::parse(expected[expected.size() - sample.particles.size() - 1]);
    EXPECT_EQ(first["time"], csv[1][0]);
    EXPECT_EQ(first["sample"], csv[1][1]);
    EXPECT_DOUBLE_EQ(first["area_um2"].get<double>(), std::stod(csv[1][3]));
    EXPECT_DOUBLE_EQ(first["esd_um"].get<double>(), std::stod(csv[1][4]));
    EXPECT_EQ(first["grey_level"].get<int>(), std::stoi(csv[1][7]));
    nlohmann::json close = nlohmann::json::parse(expected.back());
    EXPECT_EQ(close["close_sample"], sample.id);
    EXPECT_DOUBLE_EQ(close["volume_ml"].get<double>(), sample.volume_ml);
  }
  EXPECT_EQ(received, expected);
}

TEST(SestonSimCommandLine, RejectsBadValuesNamingTheOptionAndWhatIsAccepted) {
  auto message = [](std::vector<std::string> args) {
    auto parsed = ParseCommandLine(args);
    return parsed.ok() ? std::string("accepted") : parsed.status().message();
  };
  EXPECT_NE(message({"--out", "d", "--samples", "3", "--scenario", "storm"})
                .find("--scenario must be one of steady|bloom|new-group|focus-drift|flow-drop"),
            std::string::npos);
  EXPECT_NE(message({"--out", "d"}).find("--samples"), std::string::npos);
  EXPECT_NE(message({"--out", "d", "--samples", "3", "--speed", "0"}).find("--speed"),
            std::string::npos);
  EXPECT_NE(message({"--out", "d", "--samples", "3", "--start", "June"}).find("ISO 8601"),
            std::string::npos);
  EXPECT_NE(message({"--live", "--socket", "localhost"}).find("HOST:PORT"), std::string::npos);
  EXPECT_NE(
      message({"--out", "d", "--samples", "3", "--colour", "red"}).find("unknown option --colour"),
      std::string::npos);
  EXPECT_EQ(message({"--out=d", "--samples=3", "--ramp=0", "--truth"}), "accepted");
}

TEST(SestonSimBinary, HelpExitsZeroAndNamesEveryScenario) {
  std::string output;
  ASSERT_EQ(RunBinary("--help", output), 0) << output;
  for (Scenario scenario : AllScenarios()) {
    EXPECT_NE(output.find(ScenarioName(scenario)), std::string::npos) << ScenarioName(scenario);
  }
  for (const char* option :
       {"--out", "--samples", "--start", "--seed", "--scenario", "--change-at", "--ramp",
        "--sample-interval", "--live", "--speed", "--slow-write", "--socket", "--truth"}) {
    EXPECT_NE(output.find(option), std::string::npos) << option;
  }
}

TEST(SestonSimBinary, BadOptionExitsTwoWithAMessage) {
  std::string output;
  EXPECT_EQ(RunBinary("--out /nonexistent-never --samples many", output), 2);
  EXPECT_NE(output.find("--samples must be a whole number"), std::string::npos) << output;
}

}  // namespace
}  // namespace seston::sim
