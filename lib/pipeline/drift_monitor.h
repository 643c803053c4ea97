// DriftMonitor: watches the classified stream for change and turns detector readings
// into alert events.
//
// It owns the detectors of drift/ (composition, centre drift, fit, novelty rate), their
// baseline, the birth and retirement of clusters, and the AlertPolicy. The Pipeline feeds
// it every classified batch in order and writes the events it returns; it does no I/O
// itself, so replay and the live daemon give the same events for the same input.
//
// Baseline: set when warm-up ends (proportions of the warm-up sample's assignments,
// centres and spreads, the distance distribution, the unclassified rate), and again
// whenever a technician accepts a new one (Pipeline::AcceptBaseline).
//
// Recent windows: the ids of the last `drift.composition.window_particles` classified
// particles (id 0, unclassified, is left out: novelty has its own detector), and whether
// each of the last `drift.novelty.window_particles` particles was unclassified.
//
// Evaluation is event-driven: after every `drift.evaluate_every_particles` observed
// particles (classified or not), every detector is evaluated and its reading goes to the
// alert policy at the event time of the particle that completed the count:
//   composition       recent window counts against the baseline counts (a cluster born
//                     since counts 0 in the baseline);
//   instrument_drift, centre_drift   current centres against the baseline centres, in
//                     units of each cluster's baseline spread;
//   fit               Page–Hinkley on every particle's distance to its nearest centre;
//   novelty           the recent window's unclassified rate against the baseline rate.
// The flow detector (analysed volume per sample) is fed by ObserveSample instead, and
// evaluated at each sample.
// The birth and retirement rules below run at the same moments, before the detectors.
//
// Births: see pipeline/birth_finder.h for what makes a group in the novelty buffer
// "tight" and "far" (at least drift.novelty.birth_min_particles points, arrived within
// the last kBirthLookbackWindows × drift.novelty.window_particles particles). A group found is
// added to the model (AddCluster, with a new id that is never reused, weight = its
// size, born at the evaluation's event time) and its points leave the novelty buffer.
// At most one birth per evaluation, and a search only once the buffer has gained
// birth_min_particles / kBirthSearchStepDivisor new points since the previous search.
// Retirement: an active cluster whose decayed weight fell below kRetireWeightFloor
// particles (it has received practically nothing for many half-lives) is retired
// (RetireCluster); the last active cluster is never retired.
//
// Events: the policy's "raised" (severity "alarm") and "resolved" events, plus two
// one-off events of the monitor's own, which are never resolved and so never active:
//   "new_cluster"      event "raised", severity "warning": a new group appeared; names
//                      its id, its size and its centre;
//   "cluster_retired"  event "raised", severity "warning": a group faded away; names
//                      its id and when it last had weight.
// The monitor numbers every event it returns (sequence 1, 2, ...), so the numbers of
// policy and one-off events never collide, and keeps the active and recent lists itself
// from the events it returned.
//
// Units: event time in s since the Unix epoch (UTC); distances in z units; weights in
// (decayed) particles.
// Thread safety: owned by the pipeline thread.
#pragma once

#include <cstdint>
#include <deque>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "alerts/alert_event.h"
#include "alerts/alert_options.h"
#include "alerts/alert_policy.h"
#include "base/status.h"
#include "drift/centre_drift_detector.h"
#include "drift/composition_detector.h"
#include "drift/detector_reading.h"
#include "drift/drift_options.h"
#include "drift/fit_detector.h"
#include "drift/flow_detector.h"
#include "drift/novelty_rate_detector.h"
#include "model/mini_batch_kmeans.h"

namespace seston {

// A cluster whose decayed weight is below this many particles is retired.
inline constexpr double kRetireWeightFloor = 1.0;

class DriftMonitor {
 public:
  using LabelOf = std::function<std::string(std::uint32_t)>;
  // A cluster's centre in the input's own units as text, e.g.
  // "area_um2 = 412.3, aspect_ratio = 0.41"; used in the new_cluster message.
  using CentreText = std::function<std::string(std::uint32_t)>;

  // Fails on any detector or policy option those classes refuse.
  static Result<DriftMonitor> Create(const DriftOptions& drift, const AlertOptions& alerts,
                                     std::string station);

  // (Re)sets the baseline from the model and the counts of the particles that define it
  // (id 0 = unclassified). Resets the fit test and the recent windows; the flow baseline
  // is the median volume of the next drift.flow.baseline_samples samples. Fails when no
  // particle was classified into a cluster.
  Status SetBaseline(const MiniBatchKMeans& model,
                     const std::map<std::uint32_t, std::uint64_t>& counts_by_cluster,
                     double event_seconds);

  // Observes one classified batch (ids 0 = unclassified, distances in z, event times)
  // in stream order; the three spans have the same length. May add clusters to `model`
  // (a birth from the novelty buffer) and retire faded ones. Returns the alert events
  // raised or resolved by evaluations inside this batch. Before a baseline, only the
  // windows are filled.
  std::vector<AlertEvent> Observe(MiniBatchKMeans& model, std::span<const std::uint32_t> ids,
                                  std::span<const double> distances,
                                  std::span<const double> seconds, const LabelOf& label_of,
                                  const CentreText& centre_text = {});

  // Observes one finalised sample's analysed volume (mL) at its event time (s) and
  // evaluates the flow detector. Returns the events that caused. Ignored before a
  // baseline.
  std::vector<AlertEvent> ObserveSample(double volume_ml, double seconds);

  // A technician's "this is normal now": the baseline becomes the current centres and the
  // recent window's proportions, unclassified rate and sample volume; the fit test
  // restarts.
  // FailedPrecondition when the recent window is empty.
  Status AcceptCurrentAsBaseline(const MiniBatchKMeans& model, double event_seconds);

  bool has_baseline() const { return composition_.has_baseline(); }
  // The latest reading of each detector kind, for the health and metrics endpoints.
  const std::map<std::string, DetectorReading>& latest_readings() const { return latest_; }
  // Raised and not yet resolved, ordered by (kind, primary cluster).
  std::vector<AlertEvent> active_alerts() const;
  // The last alerts.recent_kept resolved and one-off events, oldest first.
  const std::deque<AlertEvent>& recent_alerts() const { return recent_; }
  // Sequence number of the last event returned (0 before any).
  std::uint64_t last_sequence() const { return sequence_; }

  // Everything needed to continue exactly: detector baselines, windows, policy, counters.
  nlohmann::json ToJson() const;
  static Result<DriftMonitor> FromJson(const nlohmann::json& state, const DriftOptions& drift,
                                       const AlertOptions& alerts, std::string station);

 private:
  using AlertKey = std::pair<std::string, std::uint32_t>;  // kind, primary cluster or 0

  DriftMonitor(DriftOptions drift, AlertOptions alerts, std::string station,
               CompositionDetector composition, CentreDriftDetector centre, FitDetector fit,
               NoveltyRateDetector novelty, FlowDetector flow, AlertPolicy policy)
      : drift_(drift),
        alerts_(std::move(alerts)),
        station_(std::move(station)),
        composition_(std::move(composition)),
        centre_(std::move(centre)),
        fit_(std::move(fit)),
        novelty_(std::move(novelty)),
        flow_(std::move(flow)),
        policy_(std::move(policy)) {}

  void PushRecent(std::uint32_t id);
  void ClearWindows();
  // Births, retirements and every detector at `seconds`; appends events to `events`.
  void Evaluate(MiniBatchKMeans& model, double seconds, const LabelOf& label_of,
                const CentreText& centre_text, std::vector<AlertEvent>* events);
  void Births(MiniBatchKMeans& model, double seconds, const LabelOf& label_of,
              const CentreText& centre_text, std::vector<AlertEvent>* events);
  void Retirements(MiniBatchKMeans& model, double seconds, const LabelOf& label_of,
                   std::vector<AlertEvent>* events);
  void ObserveReading(const DetectorReading& reading, double seconds, const LabelOf& label_of,
                      std::vector<AlertEvent>* events);
  // Numbers `event`, files it in the active or recent list and appends it to `events`.
  void Emit(AlertEvent event, std::vector<AlertEvent>* events);
  AlertEvent OneOffEvent(std::string kind, double seconds) const;

  DriftOptions drift_;
  AlertOptions alerts_;
  std::string station_;
  CompositionDetector composition_;
  CentreDriftDetector centre_;
  FitDetector fit_;
  NoveltyRateDetector novelty_;
  FlowDetector flow_;
  AlertPolicy policy_;

  std::deque<std::uint32_t> recent_ids_;           // classified ids (not 0), oldest first
  // Counts of recent_ids_ by id (a cluster's id is its index; ids are small and dense):
  // two map updates per particle cost more than the rest of the window bookkeeping.
  std::vector<std::uint64_t> recent_counts_;
  void CountRecent(std::uint32_t id);
  std::map<std::uint32_t, double> RecentCounts() const;  // ids with a count > 0
  std::deque<bool> recent_unclassified_;           // per particle, oldest first
  std::uint64_t recent_unclassified_count_ = 0;
  std::uint64_t since_evaluation_ = 0;  // particles observed since the last evaluation
  // Event times of the latest evaluations, oldest first, enough of them to span the
  // birth look-back (kBirthLookbackWindows novelty windows of particles).
  std::deque<double> evaluation_seconds_;
  // Newest novelty-buffer sequence number at the last birth search (0: none yet).
  std::uint64_t birth_searched_through_ = 0;

  std::map<std::string, DetectorReading> latest_;
  std::uint64_t sequence_ = 0;
  std::map<AlertKey, AlertEvent> active_;
  std::deque<AlertEvent> recent_;
};

}  // namespace seston
