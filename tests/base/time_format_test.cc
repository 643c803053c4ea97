#include "base/time_format.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

// 2026-12-02T00:00:00Z is 20789 days after 1970-01-01 (computed with GNU date -d ... +%s:
// 1796169600).
TEST(TimeFormat, ParsesIsoUtcWithZone) {
  auto t = ParseEventTime("2026-12-02T00:00:00Z");
  ASSERT_TRUE(t.has_value());
  EXPECT_DOUBLE_EQ(*t, 1796169600.0);
}

TEST(TimeFormat, ParsesFractionSpaceSeparatorAndOffset) {
  EXPECT_DOUBLE_EQ(*ParseEventTime("2026-12-02 03:04:05.25"), 1796169600.0 + 11045.25);
  EXPECT_DOUBLE_EQ(*ParseEventTime("2026-12-02T05:04:05+02:00"), 1796169600.0 + 11045.0);
}

TEST(TimeFormat, ParsesEpochSeconds) {
  EXPECT_DOUBLE_EQ(*ParseEventTime("1796169600.5"), 1796169600.5);
}

TEST(TimeFormat, RejectsGarbageAndImpossibleDates) {
  EXPECT_FALSE(ParseEventTime("").has_value());
  EXPECT_FALSE(ParseEventTime("yesterday").has_value());
  EXPECT_FALSE(ParseEventTime("2026-02-30T00:00:00Z").has_value());
  EXPECT_FALSE(ParseEventTime("2026-12-02T25:00:00Z").has_value());
  EXPECT_FALSE(ParseEventTime("-5").has_value());
  EXPECT_FALSE(ParseEventTime("nan").has_value());
}

TEST(TimeFormat, FormatsRoundTrip) {
  EXPECT_EQ(FormatIso8601(1796169600.0 + 11045.0), "2026-12-02T03:04:05Z");
  EXPECT_EQ(FormatIso8601(1796169600.0 + 11045.25, true), "2026-12-02T03:04:05.250Z");
  EXPECT_EQ(FormatDay(1796169600.0 + 86399.0), "2026-12-02");
  EXPECT_EQ(FormatCompact(1796169600.0 + 11045.0), "20261202T030405Z");
}

}  // namespace
}  // namespace seston
