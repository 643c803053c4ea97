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

TEST(TimeFormat, ReadsNineFractionDigitsAndDropsTheRest) {
  // Nanoseconds are kept; digits past the ninth are read (the text stays valid) and
  // dropped. The comparison is to the nearest microsecond, the resolution of a double
  // holding seconds since 1970 in this century.
  EXPECT_NEAR(*ParseEventTime("2026-12-02T03:04:05.123456789999Z"), 1796169600.0 + 11045.123456789,
              1e-6);
  EXPECT_NEAR(*ParseEventTime("2026-12-02T03:04:05,5Z"), 1796169600.0 + 11045.5, 1e-6);
  EXPECT_FALSE(ParseEventTime("2026-12-02T03:04:05.Z").has_value());
}

TEST(TimeFormat, ParsesEpochSeconds) {
  EXPECT_DOUBLE_EQ(*ParseEventTime("1796169600.5"), 1796169600.5);
  // A '-' as the fifth character is an exponent's sign here, not a date's.
  EXPECT_DOUBLE_EQ(*ParseEventTime("123e-5"), 0.00123);
}

TEST(TimeFormat, RejectsGarbageAndImpossibleDates) {
  EXPECT_FALSE(ParseEventTime("").has_value());
  EXPECT_FALSE(ParseEventTime("yesterday").has_value());
  EXPECT_FALSE(ParseEventTime("2026-02-30T00:00:00Z").has_value());
  EXPECT_FALSE(ParseEventTime("2026-12-02T25:00:00Z").has_value());
  EXPECT_FALSE(ParseEventTime("-5").has_value());
  EXPECT_FALSE(ParseEventTime("nan").has_value());
  EXPECT_FALSE(ParseEventTime("2026-12").has_value());
  EXPECT_FALSE(ParseEventTime("1969-12-31T23:59:59Z").has_value());
}

TEST(TimeFormat, FormatsRoundTrip) {
  EXPECT_EQ(FormatIso8601(1796169600.0 + 11045.0), "2026-12-02T03:04:05Z");
  EXPECT_EQ(FormatIso8601(1796169600.0 + 11045.25, true), "2026-12-02T03:04:05.250Z");
  EXPECT_EQ(FormatDay(1796169600.0 + 86399.0), "2026-12-02");
  EXPECT_EQ(FormatCompact(1796169600.0 + 11045.0), "20261202T030405Z");
}

}  // namespace
}  // namespace seston
