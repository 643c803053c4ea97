#include "alerts/alert_event.h"

#include <gtest/gtest.h>

#include "drift/detector_reading.h"

namespace seston {
namespace {

AlertEvent Sample() {
  AlertEvent event;
  event.sequence = 42;
  event.event = "raised";
  event.kind = "composition";
  event.severity = "alarm";
  event.time_seconds = 1796169600.0 + 11045.25;  // 2026-12-02T03:04:05.25Z
  event.since_seconds = 1796169600.0 + 9000;     // 2026-12-02T02:30:00Z
  event.clusters = {{3, "diatom chains"}, {5, ""}};
  event.statistic = 0.052;
  event.statistic_name = "jensen_shannon_divergence_bits";
  event.threshold = 0.03;
  event.message = "cluster 3 rose 4.50 times";
  event.what_to_check = "look at cluster 3";
  event.station = "Skerry Sound mooring B";
  return event;
}

TEST(AlertEvent, JsonHasEveryRequiredField) {
  const nlohmann::json json = ToJson(Sample());
  EXPECT_EQ(json.at("event"), "raised");
  EXPECT_EQ(json.at("kind"), "composition");
  EXPECT_EQ(json.at("severity"), "alarm");
  // 1796169600 is 2026-12-02T00:00:00Z (tests/base/time_format_test.cc); + 11045 s is
  // 03:04:05, + 9000 s is 02:30:00.
  EXPECT_EQ(json.at("time"), "2026-12-02T03:04:05Z");
  EXPECT_EQ(json.at("since"), "2026-12-02T02:30:00Z");
  ASSERT_EQ(json.at("clusters").size(), 2u);
  EXPECT_EQ(json.at("clusters")[0].at("id"), 3);
  EXPECT_EQ(json.at("clusters")[0].at("label"), "diatom chains");
  EXPECT_EQ(json.at("clusters")[1].at("label"), "");
  EXPECT_EQ(json.at("statistic"), 0.052);
  EXPECT_EQ(json.at("statistic_name"), "jensen_shannon_divergence_bits");
  EXPECT_EQ(json.at("threshold"), 0.03);
  EXPECT_EQ(json.at("message"), "cluster 3 rose 4.50 times");
  EXPECT_EQ(json.at("what_to_check"), "look at cluster 3");
  EXPECT_EQ(json.at("caution"), std::string(kScreeningAidCaution));
  EXPECT_NE(json.at("caution").get<std::string>().find("screening aid"), std::string::npos);
  EXPECT_NE(json.at("caution").get<std::string>().find("accredited laboratory"), std::string::npos);
  EXPECT_EQ(json.at("station"), "Skerry Sound mooring B");
  EXPECT_EQ(json.at("sequence"), 42);
}

TEST(AlertEvent, RoundTripsExactlyThroughText) {
  const AlertEvent original = Sample();
  auto restored = AlertEventFromJson(nlohmann::json::parse(ToJson(original).dump()));
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(*restored, original);
}

TEST(AlertEvent, MissingFieldIsCorruptionNamingIt) {
  nlohmann::json json = ToJson(Sample());
  json.erase("threshold");
  auto restored = AlertEventFromJson(json);
  ASSERT_FALSE(restored.ok());
  EXPECT_EQ(restored.status().code(), StatusCode::kCorruption);
  EXPECT_NE(restored.status().message().find("\"threshold\""), std::string::npos);
}

}  // namespace
}  // namespace seston
