#include "seston-sim/station_model.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace seston::sim {

std::vector<ParticleGroup> SkerrySoundGroups() {
  // name, median ESD µm, ln sd, median aspect, logit sd, grey mean, grey sd, roughness, per mL
  return {
      {"small round cells", 4.0, 0.25, 0.90, 0.50, 70.0, 10.0, 0.01, 90.0},
      {"chain-forming diatoms", 18.0, 0.35, 0.25, 0.45, 120.0, 15.0, 0.08, 25.0},
      {"dinoflagellate-like", 28.0, 0.25, 0.75, 0.40, 95.0, 12.0, 0.04, 12.0},
      {"ciliate-like", 45.0, 0.30, 0.65, 0.40, 150.0, 14.0, 0.05, 4.0},
      {"detritus flakes", 12.0, 0.60, 0.50, 0.80, 185.0, 20.0, 0.12, 40.0},
      {"air bubbles", 60.0, 0.40, 0.97, 0.60, 235.0, 8.0, 0.005, 1.5},
      {"spiny colonies", 70.0, 0.20, 0.40, 0.30, 60.0, 10.0, 0.25, 0.0},
  };
}

namespace {

constexpr Scenario kScenarios[] = {Scenario::kSteady, Scenario::kBloom, Scenario::kNewGroup,
                                   Scenario::kFocusDrift, Scenario::kFlowDrop};

double DefaultRampHours(Scenario scenario) {
  switch (scenario) {
    case Scenario::kSteady:
      return 0.0;
    case Scenario::kBloom:
      return 3.0;
    case Scenario::kNewGroup:
      return 2.0;
    case Scenario::kFocusDrift:
      return 12.0;
    case Scenario::kFlowDrop:
      return 1.0;
  }
  return 0.0;
}

// "6", "0.4", "2.5": a magnitude as a person writes it.
std::string Number(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%g", value);
  return text;
}

}  // namespace

std::string_view ScenarioName(Scenario scenario) {
  switch (scenario) {
    case Scenario::kSteady:
      return "steady";
    case Scenario::kBloom:
      return "bloom";
    case Scenario::kNewGroup:
      return "new-group";
    case Scenario::kFocusDrift:
      return "focus-drift";
    case Scenario::kFlowDrop:
      return "flow-drop";
  }
  return "?";
}

std::optional<Scenario> ParseScenario(std::string_view name) {
  for (Scenario scenario : kScenarios) {
    if (ScenarioName(scenario) == name) return scenario;
  }
  return std::nullopt;
}

std::vector<Scenario> AllScenarios() { return {std::begin(kScenarios), std::end(kScenarios)}; }

Result<ScenarioModel> ScenarioModel::Create(ScenarioOptions options,
                                            std::vector<ParticleGroup> groups) {
  if (!std::isfinite(options.change_at_hours) || options.change_at_hours < 0) {
    return Status::InvalidArgument("change-at must be a finite number of hours >= 0, got " +
                                   std::to_string(options.change_at_hours));
  }
  double ramp = options.ramp_hours.value_or(DefaultRampHours(options.scenario));
  if (!std::isfinite(ramp) || ramp < 0) {
    return Status::InvalidArgument("ramp must be a finite number of hours >= 0, got " +
                                   std::to_string(ramp));
  }
  std::size_t target = groups.size();
  if (options.scenario == Scenario::kBloom || options.scenario == Scenario::kNewGroup) {
    std::string_view wanted = options.scenario == Scenario::kBloom ? kBloomGroup : kNewGroup;
    auto found = std::find_if(groups.begin(), groups.end(),
                              [&](const ParticleGroup& g) { return g.name == wanted; });
    if (found == groups.end()) {
      return Status::InvalidArgument("scenario " + std::string(ScenarioName(options.scenario)) +
                                     " needs a particle group named \"" + std::string(wanted) +
                                     "\", which the group list lacks");
    }
    target = static_cast<std::size_t>(found - groups.begin());
  }
  return ScenarioModel(options, std::move(groups), ramp, target);
}

double ScenarioModel::Progress(double hours) const {
  if (options_.scenario == Scenario::kSteady || hours < options_.change_at_hours) return 0.0;
  if (ramp_hours_ <= 0.0) return 1.0;
  return std::min(1.0, (hours - options_.change_at_hours) / ramp_hours_);
}

Conditions ScenarioModel::At(double hours) const {
  Conditions conditions;
  for (const ParticleGroup& group : groups_) {
    conditions.concentration_per_ml.push_back(group.concentration_per_ml);
  }
  double progress = Progress(hours);
  switch (options_.scenario) {
    case Scenario::kSteady:
      break;
    case Scenario::kBloom:
      conditions.concentration_per_ml[target_group_] *= 1.0 + (kBloomFactor - 1.0) * progress;
      break;
    case Scenario::kNewGroup:
      conditions.concentration_per_ml[target_group_] = kNewGroupPerMl * progress;
      break;
    case Scenario::kFocusDrift:
      conditions.esd_scale = 1.0 - (1.0 - kFocusDriftEsdScale) * progress;
      conditions.grey_shift = kFocusDriftGreyShift * progress;
      break;
    case Scenario::kFlowDrop:
      conditions.volume_fraction = 1.0 - (1.0 - kFlowDropFraction) * progress;
      break;
  }
  return conditions;
}

std::string ScenarioModel::DescribeChange() const {
  std::string over = " over " + Number(ramp_hours_) + " h";
  switch (options_.scenario) {
    case Scenario::kSteady:
      return "";
    case Scenario::kBloom:
      return "\"" + std::string(kBloomGroup) + "\" concentration rises " + Number(kBloomFactor) +
             "-fold" + over;
    case Scenario::kNewGroup:
      return "\"" + std::string(kNewGroup) + "\" appears, rising from 0 to " +
             Number(kNewGroupPerMl) + " per mL" + over;
    case Scenario::kFocusDrift:
      return "all diameters shrink by " + Number(100.0 * (1.0 - kFocusDriftEsdScale)) +
             " % and grey levels lighten by " + Number(kFocusDriftGreyShift) + over;
    case Scenario::kFlowDrop:
      return "analysed volume falls to " + Number(100.0 * kFlowDropFraction) + " % of nominal" +
             over + ", concentrations unchanged, so counts fall";
  }
  return "";
}

}  // namespace seston::sim
