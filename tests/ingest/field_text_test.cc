// Field text: numbers read from a CSV field must be the values std::from_chars gives, to
// the last bit, whichever internal path reads them (the short-decimal fast path or
// from_chars itself).
#include "ingest/field_text.h"

#include <gtest/gtest.h>

#include <bit>
#include <charconv>
#include <cstdint>
#include <random>
#include <string>

namespace seston {
namespace {

// The reference: std::from_chars on the text (after an accepted leading '+').
double FromChars(std::string_view text) {
  if (text.size() > 1 && text[0] == '+') text.remove_prefix(1);
  double value = 0;
  const auto result = std::from_chars(text.data(), text.data() + text.size(), value);
  EXPECT_EQ(result.ec, std::errc()) << text;
  EXPECT_EQ(result.ptr, text.data() + text.size()) << text;
  return value;
}

void ExpectSameBits(const std::string& text) {
  double value = -1;
  RowRejection rejection;
  ASSERT_TRUE(ReadFeatureValue("area_um2", text, 2, &value, &rejection))
      << text << ": " << rejection.detail;
  EXPECT_EQ(std::bit_cast<std::uint64_t>(value), std::bit_cast<std::uint64_t>(FromChars(text)))
      << text << " read as " << value;
}

TEST(ReadFeatureValue, ShortAndLongDecimalsMatchFromCharsBitForBit) {
  for (const char* text :
       {"0", "-0", "-0.0", "7", "286.46", "0.2826", "3647.22", "+12.5", "0012.50", "5.", ".5",
        "-.5", "1e3", "2.5E-4", "123456789012345", "1234567890123456", "0.1", "0.3",
        "999999999999999", "9007199254740993", "0.000000000000001", "0.00000000000000012345",
        "98765.4321012345", "1.7976931348623157e308", "4.9e-324"}) {
    ExpectSameBits(text);
  }
  // Seeded random decimals: 1 to 18 digits, the point anywhere, either sign; the hard
  // cases for a division-based reading are many-digit fractions like these.
  std::mt19937_64 engine(20261203);
  std::uniform_int_distribution<int> digit(0, 9), length(1, 18), coin(0, 1);
  for (int n = 0; n < 200000; ++n) {
    const int digits = length(engine);
    std::string text = coin(engine) ? "-" : "";
    const int point = std::uniform_int_distribution<int>(1, digits)(engine);
    for (int d = 0; d < digits; ++d) {
      if (d == point) text += '.';
      text += static_cast<char>('0' + digit(engine));
    }
    ExpectSameBits(text);
    if (HasFailure()) return;
  }
}

TEST(ReadFeatureValue, TextThatIsNotAPlainNumberIsRejectedWithItsReason) {
  for (const char* text : {"", "-", ".", "1.2.3", "12a", "1,5", "--1", "+-1", "0x10", "1 2"}) {
    double value = 0;
    RowRejection rejection;
    EXPECT_FALSE(ReadFeatureValue("esd_um", text, 9, &value, &rejection)) << text;
    EXPECT_EQ(rejection.line, 9u) << text;
    EXPECT_EQ(rejection.reason, RejectReason::kNotANumber) << text;
    EXPECT_NE(rejection.detail.find("column esd_um"), std::string::npos) << rejection.detail;
  }
}

}  // namespace
}  // namespace seston
