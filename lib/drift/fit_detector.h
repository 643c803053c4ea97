// FitDetector: do particles fit their groups worse than at baseline?
//
// Feeds each classified particle's distance to its assigned centre (z units) into a
// Page–Hinkley test for an upward change of the mean (drift/page_hinkley.h) with the
// parameters of FitOptions. Reading kind "fit": warn when the statistic exceeds λ/2,
// alarm when it exceeds λ, both only once min_particles distances were seen. A rising
// distance means a new kind of particle or an instrument change.
//
// With alpha = 1 the statistic does not come down by itself after a lasting change: the
// pipeline calls Reset() when the new normal is accepted (a refit, a new baseline), and
// the alert then resolves. Owned by the pipeline; one thread at a time.
#pragma once

#include <nlohmann/json.hpp>

#include "base/status.h"
#include "drift/detector_reading.h"
#include "drift/drift_options.h"
#include "drift/page_hinkley.h"

namespace seston {

class FitDetector {
 public:
  // Fails on parameters PageHinkley::Create refuses.
  static Result<FitDetector> Create(FitOptions options);

  // Distance of one particle to its assigned centre, z units.
  void Add(double distance);
  DetectorReading Evaluate() const;
  void Reset() { test_.Reset(); }
  const PageHinkley& test() const { return test_; }

  // {"page_hinkley": PageHinkley state}
  nlohmann::json ToJson() const;
  static Result<FitDetector> FromJson(const nlohmann::json& state, FitOptions options);

 private:
  explicit FitDetector(PageHinkley test) : test_(std::move(test)) {}

  PageHinkley test_;
};

}  // namespace seston
