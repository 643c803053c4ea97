#include "alerts/alert_policy.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

// 2026-12-02T00:00:00Z (GNU date -d 2026-12-02T00:00:00Z +%s).
constexpr double kStart = 1796169600.0;
constexpr double kStep = 60;  // one evaluation a minute

DetectorReading Reading(DriftLevel level, std::vector<std::uint32_t> clusters = {4},
                        std::string kind = "centre_drift") {
  DetectorReading reading;
  reading.kind = std::move(kind);
  reading.level = level;
  reading.statistic = level == DriftLevel::kAlarm ? 1.6 : 0.1;
  reading.threshold = 1.0;
  reading.statistic_name = "largest_centre_displacement_spreads";
  reading.clusters = std::move(clusters);
  reading.what_changed = "cluster 4 centre moved 1.60 spreads";
  reading.what_to_check = "look at cluster 4";
  return reading;
}

std::string LabelOf(std::uint32_t id) { return id == 4 ? "diatom chains" : ""; }

AlertOptions Options(int raise_after = 3, int resolve_after = 5, double cooldown = 3600,
                     std::size_t recent_kept = 200) {
  AlertOptions options;
  options.raise_after = raise_after;
  options.resolve_after = resolve_after;
  options.cooldown_seconds = cooldown;
  options.recent_kept = recent_kept;
  return options;
}

AlertPolicy MakePolicy(int raise_after = 3, int resolve_after = 5, double cooldown = 3600,
                       std::size_t recent_kept = 200) {
  auto policy = AlertPolicy::Create(Options(raise_after, resolve_after, cooldown, recent_kept),
                                    "Skerry Sound mooring B");
  EXPECT_TRUE(policy.ok());
  return std::move(policy).value();
}

// Feeds `levels` one per minute from `start`; returns every event.
std::vector<AlertEvent> Feed(AlertPolicy& policy, const std::vector<DriftLevel>& levels,
                             double start, std::vector<std::uint32_t> clusters = {4}) {
  std::vector<AlertEvent> events;
  for (std::size_t i = 0; i < levels.size(); ++i) {
    for (AlertEvent& event : policy.Observe(Reading(levels[i], clusters),
                                            start + kStep * static_cast<double>(i), LabelOf)) {
      events.push_back(std::move(event));
    }
  }
  return events;
}

using enum DriftLevel;

TEST(AlertPolicy, RaisesOnlyAfterThreeConsecutiveAlarmsWithSinceAtTheFirst) {
  AlertPolicy policy = MakePolicy();
  EXPECT_TRUE(Feed(policy, {kAlarm, kAlarm}, kStart).empty());
  auto events = policy.Observe(Reading(kAlarm), kStart + 2 * kStep, LabelOf);
  ASSERT_EQ(events.size(), 1u);
  const AlertEvent& raised = events[0];
  EXPECT_EQ(raised.event, "raised");
  EXPECT_EQ(raised.kind, "centre_drift");
  EXPECT_EQ(raised.severity, "alarm");
  EXPECT_EQ(raised.sequence, 1u);
  EXPECT_EQ(raised.time_seconds, kStart + 2 * kStep);
  EXPECT_EQ(raised.since_seconds, kStart);
  ASSERT_EQ(raised.clusters.size(), 1u);
  EXPECT_EQ(raised.clusters[0], (std::pair<std::uint32_t, std::string>{4, "diatom chains"}));
  EXPECT_EQ(raised.station, "Skerry Sound mooring B");
  EXPECT_NE(raised.message.find("since 2026-12-02T00:00:00Z"), std::string::npos) << raised.message;
  EXPECT_EQ(policy.active().size(), 1u);
  // Further alarms do not raise again.
  EXPECT_TRUE(Feed(policy, {kAlarm, kAlarm, kAlarm}, kStart + 3 * kStep).empty());
}

TEST(AlertPolicy, AnOkBreaksTheAlarmRunAndSinceMovesToTheNewRun) {
  AlertPolicy policy = MakePolicy();
  auto events = Feed(policy, {kAlarm, kAlarm, kOk, kAlarm, kAlarm, kAlarm}, kStart);
  ASSERT_EQ(events.size(), 1u);
  EXPECT_EQ(events[0].time_seconds, kStart + 5 * kStep);
  EXPECT_EQ(events[0].since_seconds, kStart + 3 * kStep);
}

TEST(AlertPolicy, WarnNeitherExtendsNorBreaksAnAlarmRun) {
  AlertPolicy policy = MakePolicy();
  auto events = Feed(policy, {kAlarm, kWarn, kAlarm, kWarn, kWarn}, kStart);
  EXPECT_TRUE(events.empty());  // only two alarms so far
  auto third = policy.Observe(Reading(kAlarm), kStart + 5 * kStep, LabelOf);
  ASSERT_EQ(third.size(), 1u);
  EXPECT_EQ(third[0].since_seconds, kStart);
}

TEST(AlertPolicy, ResolvesAfterFiveConsecutiveOksAndAWarnRestartsTheCount) {
  AlertPolicy policy = MakePolicy();
  ASSERT_EQ(Feed(policy, {kAlarm, kAlarm, kAlarm}, kStart).size(), 1u);
  EXPECT_TRUE(
      Feed(policy, {kOk, kOk, kOk, kOk, kWarn, kOk, kOk, kOk, kOk}, kStart + 3 * kStep).empty());
  auto events = policy.Observe(Reading(kOk), kStart + 12 * kStep, LabelOf);
  ASSERT_EQ(events.size(), 1u);
  EXPECT_EQ(events[0].event, "resolved");
  EXPECT_EQ(events[0].sequence, 2u);
  EXPECT_EQ(events[0].since_seconds, kStart);
  EXPECT_EQ(events[0].time_seconds, kStart + 12 * kStep);
  EXPECT_TRUE(policy.active().empty());
  ASSERT_EQ(policy.recent().size(), 1u);
  EXPECT_EQ(policy.recent().back(), events[0]);
}

TEST(AlertPolicy, CoolDownBlocksReRaiseUntilItPasses) {
  AlertPolicy policy = MakePolicy(3, 5, 3600);
  ASSERT_EQ(Feed(policy, {kAlarm, kAlarm, kAlarm, kOk, kOk, kOk, kOk, kOk}, kStart).size(), 2u);
  const double resolved_at = kStart + 7 * kStep;
  // Alarms every minute from one minute after the resolve: blocked for an hour.
  std::vector<DriftLevel> alarms(70, kAlarm);
  auto events = Feed(policy, alarms, resolved_at + kStep);
  ASSERT_EQ(events.size(), 1u);
  EXPECT_EQ(events[0].event, "raised");
  // The first evaluation at or after resolved_at + 3600 s: 60 minutes after the resolve.
  EXPECT_EQ(events[0].time_seconds, resolved_at + 3600);
  // The run began with the first alarm after the resolve, inside the cool-down.
  EXPECT_EQ(events[0].since_seconds, resolved_at + kStep);
}

TEST(AlertPolicy, FlappingInputDoesNotProduceAnAlertStorm) {
  AlertPolicy policy = MakePolicy(3, 5, 3600);
  // Alarm and ok alternating for a day: never three alarms in a row, never five oks.
  std::vector<DriftLevel> alternating;
  for (int i = 0; i < 1440; ++i) alternating.push_back(i % 2 ? kOk : kAlarm);
  EXPECT_TRUE(Feed(policy, alternating, kStart).empty());

  // Worse: three alarms then five oks, over and over for a day (8 minutes a cycle, 180
  // cycles). Without the cool-down that is 360 events. With it: raised at minute 2 (third
  // alarm), resolved at minute 7 (fifth ok), cool-down to minute 67; the cycle at 64-66
  // is still inside it, so the next raise is at minute 74 = 2 + 72. Raises at 2 + 72·k and
  // resolves at 7 + 72·k for k = 0..19 (2 + 72·19 = 1370 < 1440): 40 events.
  std::vector<DriftLevel> bursts;
  for (int cycle = 0; cycle < 180; ++cycle) {
    for (int i = 0; i < 3; ++i) bursts.push_back(kAlarm);
    for (int i = 0; i < 5; ++i) bursts.push_back(kOk);
  }
  auto events = Feed(policy, bursts, kStart + 86400);
  EXPECT_EQ(events.size(), 40u);
  for (std::size_t i = 1; i < events.size(); ++i) {
    if (events[i].event == "raised") {
      ASSERT_EQ(events[i - 1].event, "resolved");
      EXPECT_GE(events[i].time_seconds, events[i - 1].time_seconds + 3600);
    }
  }
}

TEST(AlertPolicy, ReadingThatNoLongerNamesTheClusterResolvesIt) {
  AlertPolicy policy = MakePolicy(3, 5, 3600);
  ASSERT_EQ(Feed(policy, {kAlarm, kAlarm, kAlarm}, kStart, {4}).size(), 1u);
  // Ok readings that name no cluster speak for every key of the kind.
  auto events = Feed(policy, {kOk, kOk, kOk, kOk, kOk}, kStart + 3 * kStep, {});
  ASSERT_EQ(events.size(), 1u);
  EXPECT_EQ(events[0].event, "resolved");
  ASSERT_EQ(events[0].clusters.size(), 1u);
  EXPECT_EQ(events[0].clusters[0].first, 4u);
}

TEST(AlertPolicy, SecondaryClusterKeepsItsAlertWhileStillNamed) {
  AlertPolicy policy = MakePolicy(3, 5, 3600);
  ASSERT_EQ(Feed(policy, {kAlarm, kAlarm, kAlarm}, kStart, {4}).size(), 1u);
  // Cluster 7 now leads but 4 is still named: 4's alert stays, 7 raises its own.
  auto events =
      Feed(policy, {kAlarm, kAlarm, kAlarm, kAlarm, kAlarm, kAlarm}, kStart + 3 * kStep, {7, 4});
  ASSERT_EQ(events.size(), 1u);
  EXPECT_EQ(events[0].clusters[0].first, 7u);
  EXPECT_EQ(policy.active().size(), 2u);
}

TEST(AlertPolicy, KindsAreIndependent) {
  AlertPolicy policy = MakePolicy();
  ASSERT_EQ(Feed(policy, {kAlarm, kAlarm, kAlarm}, kStart, {4}).size(), 1u);
  for (int i = 0; i < 10; ++i) {
    EXPECT_TRUE(policy.Observe(Reading(kOk, {}, "fit"), kStart + 600 + i, LabelOf).empty());
  }
  EXPECT_EQ(policy.active().size(), 1u);
}

TEST(AlertPolicy, KeepsOnlyTheMostRecentResolvedAlerts) {
  AlertPolicy policy = MakePolicy(1, 1, 0, 2);
  for (int i = 0; i < 3; ++i) {
    ASSERT_EQ(Feed(policy, {kAlarm, kOk}, kStart + 1000 * i).size(), 2u);
  }
  ASSERT_EQ(policy.recent().size(), 2u);
  EXPECT_EQ(policy.recent().front().sequence, 4u);  // events 1..6; resolves are 2, 4, 6
  EXPECT_EQ(policy.recent().back().sequence, 6u);
}

TEST(AlertPolicy, StateRoundTripsExactlyAndContinuesIdentically) {
  AlertPolicy policy = MakePolicy(3, 5, 3600, 10);
  Feed(policy, {kAlarm, kAlarm, kAlarm, kOk, kOk, kOk, kOk, kOk}, kStart + 0.1);  // cool-down
  Feed(policy, {kAlarm, kAlarm, kAlarm, kOk, kOk}, kStart + 1.0 / 3.0, {9});      // active, 2 oks
  Feed(policy, {kAlarm}, kStart, {11});  // a run of one alarm
  const nlohmann::json state = policy.ToJson();
  ASSERT_EQ(state["keys"].size(), 3u);
  auto restored = AlertPolicy::FromJson(nlohmann::json::parse(state.dump()),
                                        Options(3, 5, 3600, 10), "Skerry Sound mooring B");
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(restored->ToJson(), state);
  EXPECT_EQ(restored->active(), policy.active());
  const std::vector<DriftLevel> more = {kOk, kOk, kOk, kAlarm, kAlarm, kAlarm, kAlarm};
  for (std::uint32_t cluster : {4u, 9u, 11u}) {
    EXPECT_EQ(Feed(*restored, more, kStart + 900, {cluster}),
              Feed(policy, more, kStart + 900, {cluster}));
  }
  EXPECT_EQ(restored->ToJson(), policy.ToJson());
  EXPECT_EQ(AlertPolicy::FromJson({{"sequence", 1}}, {}, "x").status().code(),
            StatusCode::kCorruption);
}

TEST(AlertPolicy, IdleKeysAreDropped) {
  AlertPolicy policy = MakePolicy();
  Feed(policy, {kAlarm, kOk}, kStart);
  EXPECT_TRUE(policy.ToJson()["keys"].empty());
}

TEST(AlertPolicy, RefusesZeroCounts) {
  AlertOptions options;
  options.raise_after = 0;
  EXPECT_EQ(AlertPolicy::Create(options, "x").status().code(), StatusCode::kInvalidArgument);
  options = {};
  options.cooldown_seconds = -1;
  EXPECT_EQ(AlertPolicy::Create(options, "x").status().code(), StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace seston
