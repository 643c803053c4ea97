// The fictional station the simulator pretends to watch, "Skerry Sound mooring B", and
// the scenarios that change it.
//
// A ParticleGroup is one kind of particle as an ecologist would sort them by eye. The
// names and every number below are invented for demos and tests; they are plausible,
// not measured.
//
// Conventions and units:
//   - equivalent spherical diameter (ESD) in µm, log-normal: ln(ESD) ~ N(ln(median), sd²);
//   - aspect_ratio = minor axis / major axis, in (0, 1] (1 is round), logit-normal:
//     logit(aspect) ~ N(logit(median), sd²), so it never leaves (0, 1);
//   - grey level 0 (black) .. 255 (white), normal, clamped and rounded;
//   - perimeter = Ramanujan's ellipse perimeter times exp(roughness·|Z|), Z standard
//     normal: rough outlines are longer than the smooth ellipse, never shorter;
//   - concentration in particles per mL of analysed water.
//
// Scenarios take effect at `change_at_hours` of event time after the simulation's start
// and ramp in linearly over `ramp_hours`; the magnitudes are the constants documented
// on ScenarioModel.
//
// Thread safety: plain values and a const model; use from any thread.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "base/status.h"

namespace seston::sim {

struct ParticleGroup {
  std::string name;                    // no commas: written unquoted into CSV
  double median_esd_um = 10.0;         // µm
  double esd_log_sd = 0.3;             // sd of ln(ESD)
  double median_aspect_ratio = 0.8;    // minor/major, in (0, 1)
  double aspect_logit_sd = 0.4;        // sd of logit(aspect_ratio)
  double grey_mean = 128.0;            // 0..255
  double grey_sd = 12.0;               // grey levels
  double perimeter_roughness = 0.03;   // sd of ln(perimeter / ellipse perimeter), half-normal
  double concentration_per_ml = 10.0;  // particles per mL before any scenario
};

// The six resident groups of Skerry Sound mooring B, followed by "spiny colonies",
// which has concentration 0 unless the new-group scenario brings it in. Summed
// concentration 172.5 per mL: about 860 particles in a 5 mL sample.
std::vector<ParticleGroup> SkerrySoundGroups();

enum class Scenario { kSteady, kBloom, kNewGroup, kFocusDrift, kFlowDrop };

// "steady", "bloom", "new-group", "focus-drift", "flow-drop".
std::string_view ScenarioName(Scenario scenario);
std::optional<Scenario> ParseScenario(std::string_view name);
// All scenarios, in the order above (for usage text and tests).
std::vector<Scenario> AllScenarios();

struct ScenarioOptions {
  Scenario scenario = Scenario::kSteady;
  double change_at_hours = 6.0;  // event hours after the start; >= 0
  // Hours over which the change ramps in linearly; nullopt: the scenario's default
  // (bloom 3, new-group 2, focus-drift 12, flow-drop 1). 0 is a step.
  std::optional<double> ramp_hours;
};

// What the instrument sees at one moment.
struct Conditions {
  std::vector<double> concentration_per_ml;  // one per group, particles per mL
  double esd_scale = 1.0;                    // every diameter is multiplied by this
  double grey_shift = 0.0;                   // added to every grey level
  double volume_fraction = 1.0;              // analysed volume relative to nominal
};

class ScenarioModel {
 public:
  // Magnitudes at the end of the ramp.
  static constexpr double kBloomFactor = 6.0;           // bloom group concentration ×6
  static constexpr double kNewGroupPerMl = 8.0;         // spiny colonies, per mL
  static constexpr double kFocusDriftEsdScale = 0.75;   // diameters shrink by 25 %
  static constexpr double kFocusDriftGreyShift = 40.0;  // grey levels lighten by 40
  static constexpr double kFlowDropFraction = 0.4;      // volume falls to 40 %
  static constexpr std::string_view kBloomGroup = "chain-forming diatoms";
  static constexpr std::string_view kNewGroup = "spiny colonies";

  // Fails when a group the scenario needs is missing, or hours are negative/not finite.
  static Result<ScenarioModel> Create(ScenarioOptions options, std::vector<ParticleGroup> groups);

  // Conditions `hours` of event time after the start.
  Conditions At(double hours) const;
  // 0 before change_at, rising linearly to 1 at change_at + ramp.
  double Progress(double hours) const;
  // One line saying what changes, by how much, over how long ("" for steady).
  std::string DescribeChange() const;

  Scenario scenario() const { return options_.scenario; }
  double change_at_hours() const { return options_.change_at_hours; }
  double ramp_hours() const { return ramp_hours_; }
  const std::vector<ParticleGroup>& groups() const { return groups_; }

 private:
  ScenarioModel(ScenarioOptions options, std::vector<ParticleGroup> groups, double ramp_hours,
                std::size_t target_group)
      : options_(options),
        groups_(std::move(groups)),
        ramp_hours_(ramp_hours),
        target_group_(target_group) {}

  ScenarioOptions options_;
  std::vector<ParticleGroup> groups_;
  double ramp_hours_;
  std::size_t target_group_;  // the bloom or new group; unused otherwise
};

}  // namespace seston::sim
