#include <gtest/gtest.h>

#include "ingest/csv_reader.h"
#include "ingest/field_text.h"

namespace seston {
namespace {

// Byte sequences from RFC 3629 section 3 and its table of well-formed sequences.
TEST(Utf8Text, AcceptsWellFormedSequences) {
  EXPECT_TRUE(IsWellFormedUtf8("S000123"));
  EXPECT_TRUE(IsWellFormedUtf8("Sk\xC3\xA6rry"));             // U+00E6
  EXPECT_TRUE(IsWellFormedUtf8("\xE2\x82\xAC"));              // U+20AC
  EXPECT_TRUE(IsWellFormedUtf8("\xF0\x9F\x8C\x8A"));          // U+1F30A
  EXPECT_TRUE(IsWellFormedUtf8(""));
}

TEST(Utf8Text, RefusesOverlongsSurrogatesAndTruncation) {
  EXPECT_FALSE(IsWellFormedUtf8("\xC0\xAF"));          // overlong '/'
  EXPECT_FALSE(IsWellFormedUtf8("\xE0\x80\xAF"));      // overlong
  EXPECT_FALSE(IsWellFormedUtf8("\xED\xA0\x80"));      // U+D800, a surrogate
  EXPECT_FALSE(IsWellFormedUtf8("\xF4\x90\x80\x80"));  // above U+10FFFF
  EXPECT_FALSE(IsWellFormedUtf8("\xE2\x82"));          // cut short
  EXPECT_FALSE(IsWellFormedUtf8("\xFF"));
}

TEST(Utf8Text, EscapesOnlyTheIllFormedBytes) {
  EXPECT_EQ(EscapeIllFormedUtf8("a\xFF" "b\xC3\xA6"), "a\\xFFb\xC3\xA6");
}

TEST(Utf8Text, CsvRowWithNonUtf8SampleIdIsRejectedWithItsLine) {
  InputOptions input;
  auto reader = CsvReader::Create(input, {"area_um2"});
  ASSERT_TRUE(reader.ok());
  auto parsed = reader->Parse("x.csv",
                              "time,sample,volume_ml,area_um2\n"
                              "2026-06-01T00:00:00Z,S1,5,10\n"
                              "2026-06-01T00:00:01Z,S\xFF,5,10\n");
  ASSERT_TRUE(parsed.ok());
  EXPECT_EQ(parsed->batch.size(), 1u);
  ASSERT_EQ(parsed->rejections.size(), 1u);
  EXPECT_EQ(parsed->rejections[0].line, 3u);
  EXPECT_EQ(parsed->rejections[0].reason, RejectReason::kBadRecord);
  EXPECT_NE(parsed->rejections[0].detail.find("S\\xFF"), std::string::npos);
}

}  // namespace
}  // namespace seston
