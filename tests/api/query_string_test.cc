#include "api/query_string.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

TEST(PercentDecode, DecodesEscapesAndKeepsPlus) {
  // RFC 3986 section 2.1: "%3A" is ':'; '+' has no special meaning outside form encoding.
  EXPECT_EQ(*PercentDecode("2026-12-02T03%3a04%3A05+00:00"), "2026-12-02T03:04:05+00:00");
  EXPECT_EQ(*PercentDecode("a%20b%2Bc"), "a b+c");
}

TEST(PercentDecode, RejectsTruncatedOrNonHexEscape) {
  EXPECT_FALSE(PercentDecode("abc%2").ok());
  EXPECT_FALSE(PercentDecode("%zz").ok());
  EXPECT_NE(PercentDecode("x%g1").status().message().find("offset 1"), std::string::npos);
}

TEST(PercentEncode, EscapesAllButUnreservedAndRoundTrips) {
  EXPECT_EQ(PercentEncode("2026-12-02T03:04:05+00:00"), "2026-12-02T03%3A04%3A05%2B00%3A00");
  EXPECT_EQ(PercentEncode("a b/~_.-"), "a%20b%2F~_.-");
  const std::string every_byte = [] {
    std::string s;
    for (int c = 1; c < 256; ++c) s.push_back(static_cast<char>(c));
    return s;
  }();
  EXPECT_EQ(*PercentDecode(PercentEncode(every_byte)), every_byte);
}

TEST(ParseQuery, SplitsAndDecodesPairs) {
  auto query = ParseQuery("window=90m&&from=2026-12-02T03%3A04%3A05Z");
  ASSERT_TRUE(query.ok()) << query.status().ToString();
  EXPECT_EQ(query->size(), 2u);
  EXPECT_EQ(query->at("window"), "90m");
  EXPECT_EQ(query->at("from"), "2026-12-02T03:04:05Z");
  EXPECT_TRUE(ParseQuery("")->empty());
}

TEST(ParseQuery, RejectsDuplicatesMissingValuesAndEmptyNames) {
  EXPECT_NE(ParseQuery("to=1&to=2").status().message().find("\"to\" is given more than once"),
            std::string::npos);
  EXPECT_FALSE(ParseQuery("window").ok());
  EXPECT_FALSE(ParseQuery("window=").ok());
  EXPECT_FALSE(ParseQuery("=5").ok());
}

TEST(ParseDurationSeconds, AcceptsEachUnitSuffix) {
  EXPECT_DOUBLE_EQ(*ParseDurationSeconds("3600"), 3600.0);
  EXPECT_DOUBLE_EQ(*ParseDurationSeconds("45s"), 45.0);
  EXPECT_DOUBLE_EQ(*ParseDurationSeconds("90m"), 5400.0);
  EXPECT_DOUBLE_EQ(*ParseDurationSeconds("1h"), 3600.0);
  EXPECT_DOUBLE_EQ(*ParseDurationSeconds("1.5h"), 5400.0);
  EXPECT_DOUBLE_EQ(*ParseDurationSeconds("2d"), 172800.0);
}

TEST(ParseDurationSeconds, RejectsZeroNegativeNonFiniteAndUnknownUnits) {
  for (const char* text : {"0", "-5m", "inf", "nan", "", "m", "5w", "5 m", "1h30m", "0x10"}) {
    Result<double> parsed = ParseDurationSeconds(text);
    ASSERT_FALSE(parsed.ok()) << text;
    EXPECT_NE(parsed.status().message().find("s, m, h or d"), std::string::npos) << text;
  }
}

}  // namespace
}  // namespace seston
