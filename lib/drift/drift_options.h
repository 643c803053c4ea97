// Options of the drift detectors. Each detector is evaluated every
// `evaluate_every_particles` classified particles (event-driven, so replay is
// deterministic).
#pragma once

#include <cstddef>

namespace seston {

struct CompositionOptions {
  std::size_t window_particles = 5000;  // recent window compared with the baseline
  double alpha = 0.001;                 // significance level of the G-test
  double warn_jsd = 0.01;               // Jensen–Shannon divergence (bits) for warn
  double alarm_jsd = 0.03;              // JSD (bits) for alarm (and p < alpha)
};

struct CentreDriftOptions {
  double warn_spreads = 0.5;  // centre displacement in units of the cluster's spread
  double alarm_spreads = 1.0;
  double common_fraction = 0.6;  // this share of centres moving the same way: instrument
  // Mean pairwise cosine of the moved centres' displacement vectors above which they are
  // taken to move "the same way" (default 0.7, i.e. within about 45 degrees; -1..1).
  double same_direction_cosine = 0.7;
};

struct FitOptions {  // Page–Hinkley on distance to the assigned centre
  // Tolerated change in mean distance, z units. Default 0.02 (about 3 % of the typical
  // mean distance of 0.6 z): at 0.005 the test drifted past lambda twice in 30 simulated
  // days of steady water (tests/pipeline/scenario_test.cc) as the centres follow the
  // water, while 0.02 still alarms within hours on a new group or a focus drift.
  double delta = 0.02;
  double lambda = 50.0;  // alarm threshold on the cumulative statistic, z units
  double alpha = 1.0;    // forgetting factor of the cumulative sum, 1 = none
  std::size_t min_particles = 30;
};

struct NoveltyRateOptions {
  std::size_t window_particles = 5000;
  double alpha = 0.001;     // one-sided binomial test against the baseline rate
  double warn_ratio = 2.0;  // recent rate / baseline rate
  double alarm_ratio = 4.0;
  // A baseline unclassified rate below this is raised to it (default 0.001, a fraction),
  // so that a spotless warm-up does not make every later stray particle significant.
  double min_baseline_rate = 0.001;
  std::size_t birth_min_particles = 200;  // a tight group this large in the novelty
                                          // buffer becomes a new cluster
};

// Analysed volume per sample against its baseline (drift/flow_detector.h). A falling
// volume with unchanged concentrations means fewer particles per sample but the same
// water: a clogging flow cell, a tired pump, a fouled inlet.
struct FlowOptions {
  std::size_t baseline_samples = 12;  // samples whose median volume becomes the baseline
  std::size_t window_samples = 5;     // recent samples whose median is compared with it
  double warn_ratio = 0.85;           // recent / baseline volume at or below this (or at or above
                                      // its inverse) warns; 0 < alarm_ratio <= warn_ratio < 1
  double alarm_ratio = 0.7;           // ... and at or below this (or its inverse) alarms
};

struct DriftOptions {
  bool enabled = true;
  std::size_t evaluate_every_particles = 1000;
  CompositionOptions composition;
  CentreDriftOptions centre;
  FitOptions fit;
  NoveltyRateOptions novelty;
  FlowOptions flow;
};

}  // namespace seston
