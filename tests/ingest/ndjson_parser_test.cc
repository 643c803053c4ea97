#include "ingest/ndjson_parser.h"

#include <gtest/gtest.h>

#include <string>

namespace seston {
namespace {

// 2026-12-02T00:00:00Z in epoch seconds (GNU date -d 2026-12-02T00:00:00Z +%s).
constexpr double kDecember2 = 1796169600.0;

NdjsonParser MakeParser(InputOptions input = {}) {
  Result<NdjsonParser> parser = NdjsonParser::Create(input, {"area_um2", "aspect_ratio"});
  EXPECT_TRUE(parser.ok()) << parser.status().ToString();
  return std::move(parser).value();
}

RowRejection Rejected(const ParsedLine& parsed) {
  EXPECT_TRUE(std::holds_alternative<RowRejection>(parsed));
  return std::holds_alternative<RowRejection>(parsed) ? std::get<RowRejection>(parsed)
                                                      : RowRejection{};
}

TEST(NdjsonParser, ReadsAParticleWithNumbersAndNumericStrings) {
  const ParsedLine parsed =
      MakeParser().Parse(R"({"time":"2026-12-02T00:00:00.250Z","sample":"S0042","volume_ml":5.0,)"
                         R"("area_um2":310.5,"aspect_ratio":"0.82","grey":17})",
                         7);
  ASSERT_TRUE(std::holds_alternative<NdjsonParticle>(parsed));
  const NdjsonParticle& particle = std::get<NdjsonParticle>(parsed);
  EXPECT_EQ(particle.time_seconds, kDecember2 + 0.25);
  EXPECT_EQ(particle.sample, "S0042");
  EXPECT_EQ(particle.volume_ml, 5.0);
  EXPECT_EQ(particle.values, (std::vector<double>{310.5, 0.82}));
}

TEST(NdjsonParser, ReadsEpochTimeNumberWithoutVolumeAndWithCrlf) {
  const ParsedLine parsed = MakeParser().Parse(
      "{\"time\":1796169600,\"sample\":\"S1\",\"area_um2\":1e2,\"aspect_ratio\":1}\r\n", 1);
  ASSERT_TRUE(std::holds_alternative<NdjsonParticle>(parsed));
  const NdjsonParticle& particle = std::get<NdjsonParticle>(parsed);
  EXPECT_EQ(particle.time_seconds, kDecember2);
  EXPECT_FALSE(particle.volume_ml.has_value());
  EXPECT_EQ(particle.values, (std::vector<double>{100.0, 1.0}));
}

TEST(NdjsonParser, WithoutSampleColumnTheSampleIsLeftEmpty) {
  InputOptions input;
  input.sample_column = "";
  const ParsedLine parsed =
      MakeParser(input).Parse(R"({"time":1796169600.5,"area_um2":3,"aspect_ratio":0.5})", 1);
  ASSERT_TRUE(std::holds_alternative<NdjsonParticle>(parsed));
  EXPECT_EQ(std::get<NdjsonParticle>(parsed).sample, "");
}

TEST(NdjsonParser, ReadsASampleClose) {
  const ParsedLine parsed = MakeParser().Parse(R"({"close_sample":"S0042","volume_ml":5.0})", 3);
  ASSERT_TRUE(std::holds_alternative<NdjsonSampleClose>(parsed));
  EXPECT_EQ(std::get<NdjsonSampleClose>(parsed).sample, "S0042");
  EXPECT_EQ(std::get<NdjsonSampleClose>(parsed).volume_ml, 5.0);
}

TEST(NdjsonParser, RefusesBadSampleClose) {
  const NdjsonParser parser = MakeParser();
  EXPECT_EQ(Rejected(parser.Parse(R"({"close_sample":"S1"})", 1)).reason, RejectReason::kBadRecord);
  EXPECT_EQ(Rejected(parser.Parse(R"({"close_sample":7,"volume_ml":5})", 1)).reason,
            RejectReason::kBadRecord);
  EXPECT_EQ(Rejected(parser.Parse(R"({"close_sample":"S1","volume_ml":0})", 1)).reason,
            RejectReason::kBadVolume);
  EXPECT_EQ(Rejected(parser.Parse(R"({"close_sample":"S1","volume_ml":true})", 1)).reason,
            RejectReason::kBadRecord);
}

TEST(NdjsonParser, RejectsEachKindOfBadRecordWithItsReasonAndLine) {
  InputOptions input;
  input.max_line_bytes = 120;
  const NdjsonParser parser = MakeParser(input);
  struct Case {
    std::string line;
    RejectReason reason;
    std::string detail_part;
  };
  const std::string good_tail = R"("sample":"S1","area_um2":3,"aspect_ratio":0.5})";
  const std::vector<Case> cases = {
      {"{\"time\":1796169600,", RejectReason::kBadRecord, "not valid JSON"},
      {"[1,2,3]", RejectReason::kBadRecord, "expected a JSON object, got array"},
      {"", RejectReason::kBadRecord, "not valid JSON"},
      {R"({"sample":"S1","area_um2":3,"aspect_ratio":0.5})", RejectReason::kBadRecord,
       "field \"time\" is missing"},
      {R"({"time":1796169600,"sample":"S1","aspect_ratio":0.5})", RejectReason::kBadRecord,
       "field \"area_um2\" is missing"},
      {R"({"time":1796169600,"sample":"S1","area_um2":true,"aspect_ratio":0.5})",
       RejectReason::kBadRecord, "field \"area_um2\" must be a number or a numeric string"},
      {R"({"time":1796169600,"sample":null,"area_um2":3,"aspect_ratio":0.5})",
       RejectReason::kBadRecord, "field \"sample\" must be a non-empty sample id string"},
      {R"({"time":1796169600,"area_um2":3,"aspect_ratio":0.5})", RejectReason::kBadRecord,
       "field \"sample\" is missing"},
      {R"({"time":1796169600,"sample":"S1","area_um2":"abc","aspect_ratio":0.5})",
       RejectReason::kNotANumber, "column area_um2: \"abc\" is not a number"},
      {R"({"time":1796169600,"sample":"S1","area_um2":"inf","aspect_ratio":0.5})",
       RejectReason::kNotFinite, "column area_um2"},
      {R"({"time":1796169600,"sample":"S1","area_um2":1e400,"aspect_ratio":0.5})",
       RejectReason::kBadRecord, "number overflow"},
      {R"({"time":"yesterday",)" + good_tail, RejectReason::kBadTime,
       "column time: \"yesterday\" is not a time"},
      {R"({"time":-5,)" + good_tail, RejectReason::kBadTime, "column time: \"-5\""},
      {R"({"time":[1],)" + good_tail, RejectReason::kBadRecord, "field \"time\" must be"},
      {R"({"time":1796169600,"volume_ml":-2,)" + good_tail, RejectReason::kBadVolume,
       "column volume_ml: \"-2\" is not a volume"},
      {R"({"time":1796169600,"pad":")" + std::string(100, 'x') + "\"," + good_tail,
       RejectReason::kLineTooLong, "longer than the limit of 120"},
  };
  std::uint64_t line = 10;
  for (const Case& c : cases) {
    SCOPED_TRACE(c.line);
    const RowRejection rejection = Rejected(parser.Parse(c.line, line));
    EXPECT_EQ(rejection.line, line);
    EXPECT_EQ(rejection.reason, c.reason) << RejectReasonName(rejection.reason);
    EXPECT_NE(rejection.detail.find(c.detail_part), std::string::npos) << rejection.detail;
    ++line;
  }
}

TEST(NdjsonParser, CreateRefusesUnusableConfiguration) {
  EXPECT_FALSE(NdjsonParser::Create(InputOptions{}, {}).ok());
  EXPECT_FALSE(NdjsonParser::Create(InputOptions{}, {"sample"}).ok());
}

}  // namespace
}  // namespace seston
