#include "base/time_format.h"

#include <gtest/gtest.h>

#include <bit>
#include <cstdint>
#include <random>
#include <string>
#include <vector>

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

TEST(TimeFormat, MemoisedParseEqualsThePlainParseBitForBit) {
  // A stream of times as records give them: runs within one second, then the next
  // second, with every tail the parser knows and some it must refuse, and prefixes that
  // are impossible (never remembered) between good ones.
  const std::vector<std::string> prefixes = {
      "2026-06-01T00:00:00", "2026-06-01T00:00:01", "2026-06-01 00:00:01",
      "2026-02-30T00:00:00", "2026-06-01T23:59:60", "2026-06-01T24:00:00",
      "2026-12-31T23:59:59", "1970-01-01T00:00:00", "2026-06-01t00:00:01"};
  const std::vector<std::string> tails = {"",       "Z",      ".029Z",   ".5",      ",25Z",
                                          ".Z",     "+02:00", "-0130",   ".75+01",  "x",
                                          "5",      ".123456789123Z", "Z ", "+25:00", ".9z"};
  std::mt19937_64 engine(31);
  std::uniform_int_distribution<std::size_t> pick_prefix(0, prefixes.size() - 1);
  std::uniform_int_distribution<std::size_t> pick_tail(0, tails.size() - 1);
  std::uniform_int_distribution<int> run(1, 6);
  IsoTimeMemo memo;
  int remembered = 0;
  for (int n = 0; n < 3000; ++n) {
    const std::string& prefix = prefixes[pick_prefix(engine)];
    for (int r = run(engine); r > 0; --r) {
      const std::string text = prefix + tails[pick_tail(engine)];
      const bool hit = memo.valid && text.compare(0, 19, std::string(memo.prefix, 19)) == 0;
      remembered += hit ? 1 : 0;
      const std::optional<double> plain = ParseEventTime(text);
      const std::optional<double> memoised = ParseEventTime(text, &memo);
      ASSERT_EQ(plain.has_value(), memoised.has_value()) << text;
      if (plain) {
        EXPECT_EQ(std::bit_cast<std::uint64_t>(*plain), std::bit_cast<std::uint64_t>(*memoised))
            << text;
      }
    }
  }
  EXPECT_GT(remembered, 1000);  // the memoised path was taken, often
}

TEST(TimeFormat, FormatsRoundTrip) {
  EXPECT_EQ(FormatIso8601(1796169600.0 + 11045.0), "2026-12-02T03:04:05Z");
  EXPECT_EQ(FormatIso8601(1796169600.0 + 11045.25, true), "2026-12-02T03:04:05.250Z");
  EXPECT_EQ(FormatDay(1796169600.0 + 86399.0), "2026-12-02");
  EXPECT_EQ(FormatCompact(1796169600.0 + 11045.0), "20261202T030405Z");
}

}  // namespace
}  // namespace seston
