#include "pipeline/drift_monitor.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <set>
#include <string>
#include <vector>

#include "pipeline/birth_finder.h"

namespace seston {
namespace {

constexpr double kStart = 1780272000.0;  // 2026-06-01T00:00:00Z

// Three round groups in two dimensions, sd 1 z, centres 8 z apart.
const std::vector<std::array<double, 2>> kCentres = {{0, 0}, {8, 0}, {0, 8}};

class Stream {
 public:
  explicit Stream(std::uint64_t seed) : engine_(seed) {}

  // `n` points, group g drawn with probability shares[g]; a share index past the known
  // groups means the far, tight group at (14, 14) with sd 0.3 z.
  RowMatrix Points(int n, const std::vector<double>& shares) {
    std::discrete_distribution<int> pick(shares.begin(), shares.end());
    RowMatrix points(n, 2);
    for (int i = 0; i < n; ++i) {
      const int group = pick(engine_);
      const bool far = group >= static_cast<int>(kCentres.size());
      const double sd = far ? 0.3 : 1.0;
      for (int d = 0; d < 2; ++d) {
        const double centre = far ? 14.0 : kCentres[static_cast<std::size_t>(group)][d];
        points(i, d) = centre + sd * normal_(engine_);
      }
    }
    return points;
  }

 private:
  std::mt19937_64 engine_;
  std::normal_distribution<double> normal_;
};

MiniBatchKMeans MakeModel(Stream& stream, double half_life_particles = 200000) {
  ModelOptions options;
  options.k = 3;
  options.restarts = 3;
  options.half_life_particles = half_life_particles;
  auto model = MiniBatchKMeans::Create(options, stream.Points(3000, {1, 1, 1}), kStart);
  EXPECT_TRUE(model.ok()) << model.status().message();
  return std::move(model).value();
}

DriftOptions SmallDrift() {
  DriftOptions drift;
  drift.evaluate_every_particles = 100;
  drift.composition.window_particles = 1000;
  drift.novelty.window_particles = 1000;
  drift.novelty.birth_min_particles = 100;
  return drift;
}

AlertOptions TestAlerts() {
  AlertOptions alerts;
  alerts.raise_after = 3;
  alerts.resolve_after = 3;
  return alerts;
}

// The baseline is set as the pipeline sets it: from the classification of a sample like
// the warm-up one (about 0.5 % of it unclassified, beyond the 99.5 % quantile).
DriftMonitor MakeMonitor(const MiniBatchKMeans& model, const DriftOptions& drift = SmallDrift()) {
  auto monitor = DriftMonitor::Create(drift, TestAlerts(), "Skerry Sound mooring B (test)");
  EXPECT_TRUE(monitor.ok()) << monitor.status().message();
  Stream warmup(99);
  std::vector<std::uint32_t> ids;
  std::vector<double> distances;
  model.Classify(warmup.Points(3000, {1, 1, 1}), &ids, &distances);
  std::map<std::uint32_t, std::uint64_t> counts;
  for (std::uint32_t id : ids) ++counts[id];
  EXPECT_TRUE(monitor->SetBaseline(model, counts, kStart).ok());
  return std::move(monitor).value();
}

std::string Label(std::uint32_t id) { return "group " + std::to_string(id); }

// Classifies and learns `points` one particle per second after `*clock`, then shows the
// batch to the monitor; returns its events.
std::vector<AlertEvent> Feed(MiniBatchKMeans& model, DriftMonitor& monitor, const RowMatrix& points,
                             double* clock, int batch = 256) {
  std::vector<AlertEvent> events;
  for (Eigen::Index start = 0; start < points.rows(); start += batch) {
    const Eigen::Index m = std::min<Eigen::Index>(batch, points.rows() - start);
    std::vector<double> seconds(static_cast<std::size_t>(m));
    for (auto& second : seconds) second = (*clock += 1);
    std::vector<std::uint32_t> ids;
    std::vector<double> distances;
    model.ProcessBatch(points.middleRows(start, m), seconds.front(), seconds.back(), &ids,
                       &distances, seconds);
    for (auto& event : monitor.Observe(model, ids, distances, seconds, Label)) {
      events.push_back(std::move(event));
    }
  }
  return events;
}

std::vector<std::string> Kinds(const std::vector<AlertEvent>& events, const std::string& event) {
  std::vector<std::string> kinds;
  for (const auto& e : events) {
    if (e.event == event) kinds.push_back(e.kind);
  }
  return kinds;
}

int Count(const std::vector<AlertEvent>& events, const std::string& kind) {
  return static_cast<int>(std::count_if(events.begin(), events.end(), [&](const auto& e) {
    return e.event == "raised" && e.kind == kind;
  }));
}

bool Contains(const std::vector<std::string>& kinds, const std::string& kind) {
  return std::find(kinds.begin(), kinds.end(), kind) != kinds.end();
}

TEST(DriftMonitor, EvaluatesEveryDetectorOnceEveryHundredParticles) {
  Stream stream(1);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  Feed(model, monitor, stream.Points(99, {1, 1, 1}), &clock);
  EXPECT_TRUE(monitor.latest_readings().empty());
  Feed(model, monitor, stream.Points(1, {1, 1, 1}), &clock);
  std::set<std::string> kinds;
  for (const auto& entry : monitor.latest_readings()) kinds.insert(entry.first);
  EXPECT_EQ(kinds, (std::set<std::string>{"composition", "centre_drift", "instrument_drift", "fit",
                                          "novelty"}));
}

TEST(DriftMonitor, CadenceDoesNotDependOnHowTheStreamIsCut) {
  Stream stream(2);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor whole = MakeMonitor(model);
  DriftMonitor pieces = MakeMonitor(model);
  std::vector<std::uint32_t> ids;
  std::vector<double> distances;
  RowMatrix points = stream.Points(1050, {1, 1, 1});
  model.Classify(points, &ids, &distances);
  std::vector<double> seconds(ids.size());
  for (std::size_t i = 0; i < seconds.size(); ++i) seconds[i] = kStart + static_cast<double>(i);
  MiniBatchKMeans model_a = model;
  MiniBatchKMeans model_b = model;
  whole.Observe(model_a, ids, distances, seconds, Label);
  for (std::size_t start = 0; start < ids.size(); start += 7) {
    const std::size_t m = std::min<std::size_t>(7, ids.size() - start);
    pieces.Observe(model_b, std::span(ids).subspan(start, m),
                   std::span(distances).subspan(start, m), std::span(seconds).subspan(start, m),
                   Label);
  }
  EXPECT_EQ(whole.ToJson(), pieces.ToJson());
  EXPECT_EQ(whole.ToJson().at("since_evaluation"), 50);  // 1050 = 10 evaluations + 50
}

TEST(DriftMonitor, RaisesCompositionOnAStrongChangeAfterThreeAlarmEvaluations) {
  Stream stream(3);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  EXPECT_EQ(Kinds(Feed(model, monitor, stream.Points(3000, {1, 1, 1}), &clock), "raised"),
            std::vector<std::string>{});
  // Group shares 1/3 each -> 80 %, 10 %, 10 %: a bloom.
  auto events = Feed(model, monitor, stream.Points(3000, {8, 1, 1}), &clock);
  ASSERT_TRUE(Contains(Kinds(events, "raised"), "composition"));
  const AlertEvent& raised = *std::find_if(events.begin(), events.end(), [](const auto& e) {
    return e.kind == "composition" && e.event == "raised";
  });
  EXPECT_EQ(raised.severity, "alarm");
  EXPECT_GT(raised.statistic, raised.threshold);
  EXPECT_LT(raised.since_seconds, raised.time_seconds);
  EXPECT_FALSE(raised.clusters.empty());
  EXPECT_NE(raised.message.find("rose"), std::string::npos) << raised.message;
  EXPECT_EQ(monitor.active_alerts().size(), 1u);
  EXPECT_EQ(monitor.active_alerts().front().sequence, raised.sequence);
}

TEST(DriftMonitor, DoesNotAlarmOnATrivialChangeOfMix) {
  Stream stream(4);
  MiniBatchKMeans model = MakeModel(stream);
  DriftOptions drift = SmallDrift();
  drift.composition.window_particles = 20000;  // a huge window makes tiny changes significant
  DriftMonitor monitor = MakeMonitor(model, drift);
  double clock = kStart;
  // 36 %, 32 %, 32 % against a third each: JSD ~ 0.0006 bits, far below warn (0.01).
  auto events = Feed(model, monitor, stream.Points(30000, {36, 32, 32}), &clock);
  EXPECT_FALSE(Contains(Kinds(events, "raised"), "composition"));
  EXPECT_EQ(monitor.latest_readings().at("composition").level, DriftLevel::kOk);
  EXPECT_LT(monitor.latest_readings().at("composition").statistic, 0.002);
}

TEST(DriftMonitor, ATightFarGroupIsBornWithANewIdThatIsNeverReused) {
  Stream stream(5);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  // Steady water only: the buffer fills with strays from the tails, and no group is born.
  auto steady = Feed(model, monitor, stream.Points(40000, {1, 1, 1}), &clock);
  EXPECT_FALSE(Contains(Kinds(steady, "raised"), "new_cluster"));
  ASSERT_GE(model.novelty_buffer().size(), 100u);
  EXPECT_EQ(model.active_count(), 3);

  auto events = Feed(model, monitor, stream.Points(3000, {1, 1, 1, 0.2}), &clock);
  auto birth = std::find_if(events.begin(), events.end(),
                            [](const auto& e) { return e.kind == "new_cluster"; });
  ASSERT_NE(birth, events.end());
  EXPECT_EQ(birth->event, "raised");
  EXPECT_EQ(birth->severity, "warning");
  ASSERT_EQ(birth->clusters.size(), 1u);
  const std::uint32_t born = birth->clusters.front().first;
  EXPECT_EQ(born, 4u);
  EXPECT_GE(birth->statistic, 100);
  const MiniBatchKMeans::Cluster* cluster = model.FindCluster(born);
  ASSERT_NE(cluster, nullptr);
  EXPECT_NEAR(cluster->centre[0], 14.0, 0.2);
  EXPECT_NEAR(cluster->centre[1], 14.0, 0.2);
  EXPECT_LT(cluster->spread, 0.6);  // sd 0.3 per axis: RMS ~ 0.42 z
  EXPECT_NE(birth->message.find("cluster 4"), std::string::npos) << birth->message;
  // Its points left the buffer, and later members of the group are classified into it.
  for (const auto& entry : model.novelty_buffer()) {
    EXPECT_GT((entry.point - cluster->centre).norm(), cluster->novelty_threshold);
  }
  std::vector<std::uint32_t> ids;
  std::vector<double> distances;
  model.Classify(stream.Points(50, {0, 0, 0, 1}), &ids, &distances);
  EXPECT_GE(std::count(ids.begin(), ids.end(), born), 45);
  // Exactly one birth, and it is remembered among the recent events, not the active.
  EXPECT_EQ(Count(events, "new_cluster"), 1);
  for (const auto& alert : monitor.active_alerts()) EXPECT_NE(alert.kind, "new_cluster");

  // The group goes; it is retired later. When it comes back it gets a new id, 5.
  ASSERT_TRUE(model.RetireCluster(born, clock).ok());
  auto again = Feed(model, monitor, stream.Points(3000, {1, 1, 1, 0.2}), &clock);
  auto second = std::find_if(again.begin(), again.end(),
                             [](const auto& e) { return e.kind == "new_cluster"; });
  ASSERT_NE(second, again.end());
  EXPECT_EQ(second->clusters.front().first, 5u);
}

// The birth search (a k-means refit of the buffer) runs again only when the buffer has
// gained birth_min_particles / kBirthSearchStepDivisor (here 100 / 4 = 25) new points,
// and then at the first evaluation after that.
TEST(DriftMonitor, BirthSearchWaitsForAQuarterOfABirthInNewPoints) {
  Stream stream(8);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  const std::uint64_t step = 100 / kBirthSearchStepDivisor;
  std::vector<std::uint64_t> searches;  // newest buffer sequence at each search
  std::uint64_t newest_before = 0;
  int waits = 0;
  std::mt19937_64 engine(81);
  std::uniform_real_distribution<double> anywhere(-20, 30);
  for (int evaluation = 0; evaluation < 200; ++evaluation) {
    // One evaluation per call (evaluate_every_particles = 100): 90 particles of the known
    // groups and 10 strays scattered over a 50 z square, unclassified but never tight,
    // so the look-back always holds enough of them for a search and none is born.
    RowMatrix points(100, 2);
    points.topRows(90) = stream.Points(90, {1, 1, 1});
    for (Eigen::Index i = 90; i < 100; ++i) points.row(i) << anywhere(engine), anywhere(engine);
    EXPECT_EQ(Count(Feed(model, monitor, points, &clock, 100), "new_cluster"), 0);
    const auto searched = monitor.ToJson().at("birth_searched_through").get<std::uint64_t>();
    const std::uint64_t newest =
        model.novelty_buffer().empty() ? 0 : model.novelty_buffer().back().sequence;
    if (searches.empty() ? searched != 0 : searched != searches.back()) {
      EXPECT_EQ(searched, newest);  // a search covers the whole buffer as it is
      if (!searches.empty()) {
        EXPECT_GE(searched, searches.back() + step);
        // ... and the previous evaluation had not yet gained a step's worth.
        EXPECT_LT(newest_before, searches.back() + step);
      }
      searches.push_back(searched);
    } else if (!searches.empty()) {
      EXPECT_LT(newest, searches.back() + step) << "a due search was skipped";
      ++waits;
    }
    newest_before = newest;
  }
  EXPECT_GE(searches.size(), 3u);
  // About 11 new points per evaluation against a step of 25: two of every three skip it.
  EXPECT_GT(waits, static_cast<int>(searches.size()));
}

TEST(DriftMonitor, RetiresAClusterWhoseWeightFadedAway) {
  Stream stream(6);
  MiniBatchKMeans model = MakeModel(stream, /*half_life_particles=*/200);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  // Group 3 of the stream stops arriving. Its weight, about 1000, halves every 200
  // particles and falls below 1 after about 10 half-lives (2000 particles).
  auto events = Feed(model, monitor, stream.Points(4000, {1, 1, 0}), &clock);
  auto retired = std::find_if(events.begin(), events.end(),
                              [](const auto& e) { return e.kind == "cluster_retired"; });
  ASSERT_NE(retired, events.end());
  EXPECT_EQ(retired->event, "raised");
  EXPECT_EQ(retired->severity, "warning");
  const std::uint32_t id = retired->clusters.front().first;
  const MiniBatchKMeans::Cluster* cluster = model.FindCluster(id);
  ASSERT_NE(cluster, nullptr);
  EXPECT_TRUE(cluster->retired);
  EXPECT_LT(retired->statistic, kRetireWeightFloor);
  EXPECT_NEAR((cluster->centre - Eigen::Vector2d(0, 8)).norm(), 0, 0.3);
  EXPECT_EQ(model.active_count(), 2);
  EXPECT_EQ(Count(events, "cluster_retired"), 1);
}

TEST(DriftMonitor, JsonRoundTripContinuesIdentically) {
  Stream stream(7);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  Feed(model, monitor, stream.Points(2550, {8, 1, 1}), &clock);
  auto restored = DriftMonitor::FromJson(monitor.ToJson(), SmallDrift(), TestAlerts(),
                                         "Skerry Sound mooring B (test)");
  ASSERT_TRUE(restored.ok()) << restored.status().message();
  EXPECT_EQ(restored->ToJson(), monitor.ToJson());

  MiniBatchKMeans model_copy = model;
  double clock_copy = clock;
  Stream stream_copy = stream;
  auto original_events = Feed(model, monitor, stream.Points(3000, {1, 1, 1, 0.2}), &clock);
  auto restored_events =
      Feed(model_copy, *restored, stream_copy.Points(3000, {1, 1, 1, 0.2}), &clock_copy);
  EXPECT_FALSE(original_events.empty());
  EXPECT_EQ(original_events, restored_events);
  EXPECT_EQ(restored->ToJson(), monitor.ToJson());
  EXPECT_EQ(model_copy.ToJson(), model.ToJson());
}

TEST(DriftMonitor, SavedWindowWithAnImpossibleClusterIdIsRefusedByName) {
  Stream stream(7);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  Feed(model, monitor, stream.Points(600, {1, 1, 1}), &clock);
  nlohmann::json state = monitor.ToJson();
  ASSERT_FALSE(state["recent_ids"].empty());
  for (std::uint32_t bad : {0U, 4000000000U}) {
    state["recent_ids"].back() = bad;
    auto restored = DriftMonitor::FromJson(state, SmallDrift(), TestAlerts(), "Skerry Sound B");
    ASSERT_FALSE(restored.ok()) << bad;
    EXPECT_EQ(restored.status().code(), StatusCode::kInvalidArgument);
    EXPECT_NE(restored.status().message().find("recent_ids holds cluster id " + std::to_string(bad)),
              std::string::npos)
        << restored.status().message();
  }
}

TEST(DriftMonitor, AcceptingTheCurrentMixResolvesTheCompositionAlert) {
  Stream stream(8);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  Feed(model, monitor, stream.Points(3000, {8, 1, 1}), &clock);
  ASSERT_FALSE(monitor.active_alerts().empty());
  ASSERT_TRUE(monitor.AcceptCurrentAsBaseline(model, clock).ok());
  auto events = Feed(model, monitor, stream.Points(1000, {8, 1, 1}), &clock);
  EXPECT_TRUE(Contains(Kinds(events, "resolved"), "composition"));
  EXPECT_TRUE(monitor.active_alerts().empty());
}

TEST(DriftMonitor, FlowAlarmRaisesWhenEverySampleAnalysesLessWater) {
  Stream stream(9);
  MiniBatchKMeans model = MakeModel(stream);
  DriftMonitor monitor = MakeMonitor(model);
  double clock = kStart;
  std::vector<AlertEvent> events;
  for (int sample = 0; sample < 20; ++sample) {
    auto step = monitor.ObserveSample(5.0, clock += 300);
    EXPECT_TRUE(step.empty());
  }
  for (int sample = 0; sample < 10; ++sample) {
    for (auto& event : monitor.ObserveSample(2.0, clock += 300)) events.push_back(event);
  }
  ASSERT_TRUE(Contains(Kinds(events, "raised"), "flow"));
  EXPECT_NEAR(monitor.latest_readings().at("flow").statistic, 0.4, 1e-12);
}

}  // namespace
}  // namespace seston
