#include "drift/fit_detector.h"

#include <string>

#include "drift/reading_text.h"

namespace seston {
namespace {

PageHinkleyParameters ParametersOf(const FitOptions& options) {
  return {options.delta, options.lambda, options.alpha, options.min_particles};
}

}  // namespace

Result<FitDetector> FitDetector::Create(FitOptions options) {
  Result<PageHinkley> test = PageHinkley::Create(ParametersOf(options));
  if (!test.ok()) return test.status().WithContext("drift.fit");
  return FitDetector(std::move(test).value());
}

void FitDetector::Add(double distance) { test_.Add(distance); }

DetectorReading FitDetector::Evaluate() const {
  const PageHinkleyParameters& parameters = test_.parameters();
  DetectorReading reading;
  reading.kind = "fit";
  reading.statistic_name = "page_hinkley_distance_z";
  reading.statistic = test_.statistic();
  reading.threshold = parameters.lambda;
  const bool enough = test_.n() >= parameters.min_n;
  if (enough && reading.statistic > parameters.lambda) {
    reading.level = DriftLevel::kAlarm;
  } else if (enough && reading.statistic > parameters.lambda / 2) {
    reading.level = DriftLevel::kWarn;
  }
  reading.what_changed =
      "Page-Hinkley statistic on the distance of particles to their assigned centre is " +
      FormatFixed(reading.statistic, 3) + " z units (warn above " +
      FormatFixed(parameters.lambda / 2, 3) + ", alarm above " + FormatFixed(parameters.lambda, 3) +
      ") after " + std::to_string(test_.n()) + " particles; mean distance so far " +
      FormatFixed(test_.mean(), 3) + " z units." +
      (enough ? "" : " Too few particles to judge yet.");
  if (reading.level != DriftLevel::kOk) {
    reading.what_changed =
        "Particles fit their groups worse than at baseline. " + reading.what_changed;
    reading.what_to_check =
        "Either a new kind of particle is arriving or the instrument changed (focus, "
        "fouling, flow rate): look at recent images far from every group and check the "
        "instrument. Once the change is understood and accepted, refit the model.";
  }
  return reading;
}

nlohmann::json FitDetector::ToJson() const { return {{"page_hinkley", test_.ToJson()}}; }

Result<FitDetector> FitDetector::FromJson(const nlohmann::json& state, FitOptions options) {
  if (!state.is_object() || !state.contains("page_hinkley")) {
    return Status::Corruption("fit detector state: field \"page_hinkley\" is missing");
  }
  SESTON_ASSIGN_OR_RETURN(PageHinkley test,
                          PageHinkley::FromJson(state["page_hinkley"], ParametersOf(options)));
  return FitDetector(std::move(test));
}

}  // namespace seston
