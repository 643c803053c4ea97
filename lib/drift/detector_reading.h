// DetectorReading: what one evaluation of one drift detector found.
//
// The drift module (lib/drift/) turns numbers the pipeline hands it — cluster counts,
// centres and spreads, distances, novelty counts — into readings. Detectors do no I/O,
// read no clock and know nothing of the model module; the pipeline owns them, feeds them
// on its one thread and passes each reading to the alert policy (lib/alerts/).
//
// Units: centres and spreads in z units (standardised features), shares in %, times
// never (event time is the policy's business). Every number a reading's text mentions
// carries its unit.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace seston {

enum class DriftLevel { kOk, kWarn, kAlarm };

// "ok", "warn", "alarm".
std::string_view DriftLevelName(DriftLevel level);

// Said with every change in the water's make-up (composition, novelty, population
// drift) and carried in every alert file. It lives here, in the lower of the two
// modules, because the detectors' advice needs it and alerts depends on drift.
inline constexpr std::string_view kScreeningAidCaution =
    "seston is a screening aid: where water quality is at stake, the local authority and "
    "accredited laboratory methods decide.";

struct DetectorReading {
  // Stable names: "composition", "centre_drift", "instrument_drift", "fit", "novelty".
  std::string kind;
  DriftLevel level = DriftLevel::kOk;
  double statistic = 0;        // in the unit statistic_name says
  double threshold = 0;        // the alarm threshold of `statistic`, same unit
  std::string statistic_name;  // e.g. "jensen_shannon_divergence_bits"
  // Cluster ids involved, most involved first (the alert policy keys on the first).
  // Empty when the reading concerns no cluster in particular, or all of them.
  std::vector<std::uint32_t> clusters;
  std::string what_changed;   // plain words with numbers and units
  std::string what_to_check;  // advice for the technician
};

}  // namespace seston
