// SampleGenerator: turns a seed and options into simulated samples, one at a time.
//
// Sample n (0-based) starts at start_seconds + n·sample_interval_seconds of event time
// and lasts acquisition_seconds; its particles' times are spread uniformly over that
// span and sorted. Its analysed volume is nominal_volume_ml × (1 + volume_noise·Z),
// Z a standard normal clamped to ±3, times the scenario's volume fraction. Each group
// contributes Poisson(concentration_per_ml × concentration_scale × volume_ml) particles.
//
// Generate(n) depends only on the options and n (each sample has its own random stream
// derived from the seed), so a live run, a batch run and a test all see the same sample
// n, and event times come only from this simulated clock, never from the wall clock.
//
// Written values are rounded once, here, and every writer prints exactly these values:
// time to 1 ms, volume_ml to 0.001 mL, area_um2 to 0.01 µm², esd_um to 0.001 µm (from the
// rounded area: ESD = 2·sqrt(A/π), common practice), aspect_ratio to 0.0001,
// perimeter_um to 0.01 µm, grey_level an integer 0..255.
//
// Thread safety: Generate is const and may be called from several threads.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "base/status.h"
#include "seston-sim/station_model.h"

namespace seston::sim {

// 2026-06-01T00:00:00Z, the default start of event time.
inline constexpr double kDefaultStartSeconds = 1780272000.0;

struct SimulatorOptions {
  std::string station_slug = "skerry-sound-b";  // file name prefix; [a-z0-9-]+
  double start_seconds = kDefaultStartSeconds;  // event time of sample 0, s since epoch UTC
  std::uint64_t seed = 1;
  double sample_interval_seconds = 300.0;  // s between sample starts; > 0
  double acquisition_seconds = 120.0;      // s; 0 < acquisition <= interval
  double nominal_volume_ml = 5.0;          // mL analysed per sample; > 0
  double volume_noise = 0.02;              // relative sd of the volume; 0..0.3
  double concentration_scale = 1.0;        // multiplies every concentration; > 0
  std::uint64_t first_sample_number = 1;   // sample 0 is called S<first>, e.g. S000001
  ScenarioOptions scenario;
  std::vector<ParticleGroup> groups = SkerrySoundGroups();
};

struct SimulatedParticle {
  double time_seconds = 0;  // event time, s since epoch UTC, whole milliseconds
  double area_um2 = 0;
  double esd_um = 0;
  double aspect_ratio = 0;  // minor/major, (0, 1]
  double perimeter_um = 0;
  int grey_level = 0;     // 0..255
  std::size_t group = 0;  // index into SimulatorOptions::groups
};

struct SimulatedSample {
  std::uint64_t index = 0;                   // 0-based position in the run
  std::string id;                            // "S000123"
  double start_seconds = 0;                  // event time the acquisition began
  double volume_ml = 0;                      // analysed volume, mL
  std::vector<SimulatedParticle> particles;  // sorted by time
  std::string file_name;                     // "<slug>_<YYYYMMDDTHHMMSSZ>_<id>.csv"
};

class SampleGenerator {
 public:
  // Checks every option; the message names the option and what is accepted.
  static Result<SampleGenerator> Create(SimulatorOptions options);

  SimulatedSample Generate(std::uint64_t index) const;

  // Index of the first sample starting at or after change-at (the scenario's change
  // begins there); nullopt for the steady scenario.
  std::optional<std::uint64_t> ChangeSampleIndex() const;
  // "scenario bloom begins at 2026-06-01T06:00:00Z (sample S000073): ..." for the sample
  // at ChangeSampleIndex().
  std::string ChangeNotice() const;

  const SimulatorOptions& options() const { return options_; }
  const ScenarioModel& scenario() const { return scenario_; }

 private:
  SampleGenerator(SimulatorOptions options, ScenarioModel scenario)
      : options_(std::move(options)), scenario_(std::move(scenario)) {}

  std::string SampleId(std::uint64_t index) const;
  double SampleStart(std::uint64_t index) const;

  SimulatorOptions options_;
  ScenarioModel scenario_;
};

// The CSV text of one sample: header
// "time,sample,volume_ml,area_um2,esd_um,aspect_ratio,perimeter_um,grey_level" (plus
// ",group" with `truth`), then one row per particle; time as ISO 8601 UTC with ms.
std::string FormatCsv(const SimulatedSample& sample, const std::vector<ParticleGroup>& groups,
                      bool truth);

// The NDJSON text of one sample: one object per particle with the CSV's field names
// (time an ISO 8601 string), then {"close_sample":"<id>","volume_ml":<volume>}.
std::string FormatNdjson(const SimulatedSample& sample, const std::vector<ParticleGroup>& groups,
                         bool truth);

}  // namespace seston::sim
