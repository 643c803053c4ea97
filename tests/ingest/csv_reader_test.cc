#include "ingest/csv_reader.h"

#include <gtest/gtest.h>

#include <chrono>
#include <cmath>
#include <cstring>
#include <iostream>
#include <random>
#include <string>
#include <vector>

namespace seston {
namespace {

// 2026-12-02T00:00:00Z in epoch seconds (GNU date -d 2026-12-02T00:00:00Z +%s).
constexpr double kDecember2 = 1796169600.0;
constexpr char kHeader[] = "time,sample,volume_ml,area_um2,aspect_ratio\n";

CsvReader MakeReader(InputOptions input = {}) {
  Result<CsvReader> reader = CsvReader::Create(input, {"area_um2", "aspect_ratio"});
  EXPECT_TRUE(reader.ok()) << reader.status().ToString();
  return std::move(reader).value();
}

ParsedFile ParseOk(const CsvReader& reader, std::string_view bytes,
                   std::string_view name = "/drop/S0001.csv") {
  Result<ParsedFile> parsed = reader.Parse(name, bytes);
  EXPECT_TRUE(parsed.ok()) << parsed.status().ToString();
  return parsed.ok() ? std::move(parsed).value() : ParsedFile{};
}

TEST(CsvReader, ReadsAGoodFile) {
  const std::string text = std::string(kHeader) +
                           "2026-12-02T00:00:00Z,S0001,5.0,310.5,0.82\n"
                           "2026-12-02T00:00:01.5Z,S0001,5.0,42,1\n";
  const ParsedFile parsed = ParseOk(MakeReader(), text);
  const ParticleBatch& batch = parsed.batch;
  EXPECT_EQ(batch.source, "/drop/S0001.csv");
  EXPECT_EQ(parsed.data_rows, 2u);
  EXPECT_TRUE(parsed.rejections.empty());
  ASSERT_EQ(batch.size(), 2u);
  EXPECT_EQ(batch.dims, 2u);
  EXPECT_EQ(batch.line, (std::vector<std::uint64_t>{2, 3}));
  EXPECT_EQ(batch.time_seconds, (std::vector<double>{kDecember2, kDecember2 + 1.5}));
  EXPECT_EQ(batch.values, (std::vector<double>{310.5, 0.82, 42.0, 1.0}));
  ASSERT_EQ(batch.samples.size(), 1u);
  EXPECT_EQ(batch.samples[0].id, "S0001");
  EXPECT_EQ(batch.samples[0].volume_ml, 5.0);
  EXPECT_EQ(parsed.layout.time, 0u);
  EXPECT_EQ(parsed.layout.sample, 1u);
  EXPECT_EQ(parsed.layout.volume, 2u);
  EXPECT_EQ(parsed.layout.features, (std::vector<std::size_t>{3, 4}));
}

TEST(CsvReader, RejectsEachBadRowWithItsReasonAndLine) {
  InputOptions input;
  input.max_line_bytes = 60;
  const std::string text = std::string(kHeader) +                  // line 1
                           "2026-12-02T00:00:00Z,S1,5,100,0.5\n"   // 2 ok
                           "2026-12-02T00:00:01Z,S1,5,100\n"       // 3 field count
                           "2026-12-02T00:00:02Z,S1,5,abc,0.5\n"   // 4 not a number
                           "\n"                                    // 5 blank
                           "2026-12-02T00:00:03Z,S1,5,nan,0.5\n"   // 6 not finite
                           "yesterday,S1,5,100,0.5\n"              // 7 bad time
                           "2026-12-02T00:00:04Z,S1,-1,100,0.5\n"  // 8 bad volume
                           "2026-12-02T00:00:05Z,S1,5,100,0.5" +
                           std::string(40, '0') +
                           "\n"                                     // 9
                           "2026-12-02T00:00:06Z,  ,5,100,0.5\n"    // 10 empty sample id
                           "2026-12-02T00:00:07Z,S1,5,1e400,0.5\n"  // 11 out of range
                           "2026-12-02T00:00:08Z,S1,5,7,0.25\n";    // 12 ok
  const ParsedFile parsed = ParseOk(MakeReader(input), text);
  EXPECT_EQ(parsed.data_rows, 10u);
  EXPECT_EQ(parsed.batch.line, (std::vector<std::uint64_t>{2, 12}));
  struct Expected {
    std::uint64_t line;
    RejectReason reason;
  };
  const std::vector<Expected> expected = {
      {3, RejectReason::kFieldCount}, {4, RejectReason::kNotANumber},
      {6, RejectReason::kNotFinite},  {7, RejectReason::kBadTime},
      {8, RejectReason::kBadVolume},  {9, RejectReason::kLineTooLong},
      {10, RejectReason::kBadRecord}, {11, RejectReason::kNotFinite},
  };
  ASSERT_EQ(parsed.rejections.size(), expected.size());
  for (std::size_t i = 0; i < expected.size(); ++i) {
    SCOPED_TRACE(parsed.rejections[i].detail);
    EXPECT_EQ(parsed.rejections[i].line, expected[i].line);
    EXPECT_EQ(parsed.rejections[i].reason, expected[i].reason);
  }
  EXPECT_EQ(parsed.rejections[0].detail, "expected 5 fields as in the header, got 4");
  EXPECT_EQ(parsed.rejections[1].detail,
            "column area_um2: \"abc\" is not a number; expected a decimal such as 12.5 or 1.2e3");
  EXPECT_EQ(parsed.rejections[3].detail,
            "column time: \"yesterday\" is not a time; expected epoch seconds or ISO 8601 UTC "
            "such as 2026-12-02T03:04:05Z");
  EXPECT_EQ(parsed.rejections[4].detail,
            "column volume_ml: \"-1\" is not a volume; expected a positive number of mL");
}

TEST(CsvReader, AcceptsCrlfAndAByteOrderMark) {
  const std::string text =
      "\xEF\xBB\xBFtime,sample,volume_ml,area_um2,aspect_ratio\r\n"
      "1796169600,S1,5,12.5,0.5\r\n"
      "1796169601,S1,5,13.5,0.75\r\n";
  const ParsedFile parsed = ParseOk(MakeReader(), text);
  EXPECT_TRUE(parsed.rejections.empty());
  EXPECT_EQ(parsed.layout.header.front(), "time");
  EXPECT_EQ(parsed.batch.values, (std::vector<double>{12.5, 0.5, 13.5, 0.75}));
}

TEST(CsvReader, ReadsQuotedFieldsAndEscapedQuotes) {
  const std::string text =
      "\"time\",\"sample\",note,volume_ml,\"area_um2\",aspect_ratio\n"
      "1796169600,\"S,1\",\"said \"\"ok\"\", then left\",5,\" 12.5 \",0.5\n"
      "1796169601,\"S,1\",plain,5,\"13\",0.5\n"
      "1796169602,\"S2,5,13,0.5\n"           // line 4: unclosed
      "1796169603,\"S2\"x,none,5,13,0.5\n";  // line 5: text after
  const ParsedFile parsed = ParseOk(MakeReader(), text);
  ASSERT_EQ(parsed.batch.size(), 2u);
  EXPECT_EQ(parsed.batch.values, (std::vector<double>{12.5, 0.5, 13.0, 0.5}));
  ASSERT_EQ(parsed.batch.samples.size(), 1u);
  EXPECT_EQ(parsed.batch.samples[0].id, "S,1");
  ASSERT_EQ(parsed.rejections.size(), 2u);
  EXPECT_EQ(parsed.rejections[0].line, 4u);
  EXPECT_EQ(parsed.rejections[0].reason, RejectReason::kFieldCount);
  EXPECT_EQ(parsed.rejections[1].line, 5u);
}

TEST(CsvReader, InternsSampleIdsInOrderOfFirstAppearance) {
  const std::string text = std::string(kHeader) +
                           "1796169600,A,5,1,1\n1796169601,A,5,1,1\n1796169602,B,4,1,1\n"
                           "1796169603,A,5,1,1\n1796169604,C,3,1,1\n1796169605,B,4,1,1\n";
  const ParsedFile parsed = ParseOk(MakeReader(), text);
  ASSERT_EQ(parsed.batch.samples.size(), 3u);
  EXPECT_EQ(parsed.batch.samples[0].id, "A");
  EXPECT_EQ(parsed.batch.samples[1].id, "B");
  EXPECT_EQ(parsed.batch.samples[2].id, "C");
  EXPECT_EQ(parsed.batch.sample_index, (std::vector<std::uint32_t>{0, 0, 1, 0, 2, 1}));
  EXPECT_EQ(parsed.batch.samples[1].volume_ml, 4.0);
}

TEST(CsvReader, MissingColumnsErrorNamesFileColumnsAndWhatIsPresent) {
  Result<ParsedFile> parsed =
      MakeReader().Parse("/drop/S0002.csv", "time,sample,esd_um,volume_ml\n1796169600,S,1,5\n");
  ASSERT_FALSE(parsed.ok());
  EXPECT_EQ(parsed.status().code(), StatusCode::kInvalidArgument);
  const std::string message = parsed.status().message();
  EXPECT_NE(message.find("/drop/S0002.csv"), std::string::npos) << message;
  EXPECT_NE(message.find("\"area_um2\", \"aspect_ratio\""), std::string::npos) << message;
  EXPECT_NE(message.find("it has \"time\", \"sample\", \"esd_um\", \"volume_ml\""),
            std::string::npos)
      << message;
}

TEST(CsvReader, ConfiguredSampleColumnMustBePresent) {
  Result<ParsedFile> parsed =
      MakeReader().Parse("x.csv", "time,area_um2,aspect_ratio\n1796169600,1,1\n");
  ASSERT_FALSE(parsed.ok());
  EXPECT_NE(parsed.status().message().find("lacks column \"sample\""), std::string::npos)
      << parsed.status().message();
}

TEST(CsvReader, EmptyFileIsAnError) {
  for (std::string_view bytes :
       {std::string_view(""), std::string_view("\n \r\n\t\n"), std::string_view("\xEF\xBB\xBF")}) {
    Result<ParsedFile> parsed = MakeReader().Parse("/drop/empty.csv", bytes);
    ASSERT_FALSE(parsed.ok());
    EXPECT_NE(parsed.status().message().find("/drop/empty.csv: the file is empty"),
              std::string::npos);
  }
}

TEST(CsvReader, HeaderOnlyFileHasNoRowsAndIsFine) {
  const ParsedFile parsed = ParseOk(MakeReader(), kHeader);
  EXPECT_EQ(parsed.batch.size(), 0u);
  EXPECT_EQ(parsed.data_rows, 0u);
  EXPECT_TRUE(parsed.rejections.empty());
}

TEST(CsvReader, BinaryContentIsAnError) {
  std::string garbage;
  for (int i = 0; i < 512; ++i) garbage.push_back(static_cast<char>((i * 37 + 11) % 256));
  Result<ParsedFile> parsed = MakeReader().Parse("/drop/image.csv", garbage);
  ASSERT_FALSE(parsed.ok());
  EXPECT_NE(parsed.status().message().find("binary"), std::string::npos)
      << parsed.status().message();
  EXPECT_NE(parsed.status().message().find("/drop/image.csv"), std::string::npos);
}

TEST(CsvReader, DuplicatedColumnNameIsAnError) {
  Result<ParsedFile> parsed =
      MakeReader().Parse("d.csv", "time,sample,area_um2,aspect_ratio,area_um2\n");
  ASSERT_FALSE(parsed.ok());
  EXPECT_NE(parsed.status().message().find("\"area_um2\" appears twice (fields 3 and 5)"),
            std::string::npos)
      << parsed.status().message();
}

TEST(CsvReader, HeaderLongerThanTheLineLimitIsAnError) {
  InputOptions input;
  input.max_line_bytes = 20;
  EXPECT_FALSE(MakeReader(input).Parse("l.csv", kHeader).ok());
}

// Epoch seconds and ISO 8601 with Z, fraction and offset (GNU date, as above).
TEST(CsvReader, ReadsIsoAndEpochTimes) {
  const std::string text = std::string(kHeader) +
                           "2026-12-02T00:00:00Z,S,5,1,1\n"
                           "1796169600.25,S,5,1,1\n"
                           "2026-12-02T02:00:00+02:00,S,5,1,1\n"
                           "2026-12-02 00:00:10.5,S,5,1,1\n";
  const ParsedFile parsed = ParseOk(MakeReader(), text);
  EXPECT_EQ(parsed.batch.time_seconds,
            (std::vector<double>{kDecember2, kDecember2 + 0.25, kDecember2, kDecember2 + 10.5}));
}

TEST(CsvReader, KeepsFirstValidVolumePerSample) {
  const std::string text = std::string(kHeader) +
                           "1796169600,A,abc,1,1\n"  // rejected: bad volume
                           "1796169601,A,4.5,1,1\n"
                           "1796169602,A,6.0,1,1\n"
                           "1796169603,B,0,1,1\n"    // rejected: not positive
                           "1796169604,B,inf,1,1\n"  // rejected: not finite
                           "1796169605,B,2,1,1\n";
  const ParsedFile parsed = ParseOk(MakeReader(), text);
  ASSERT_EQ(parsed.batch.samples.size(), 2u);
  EXPECT_EQ(parsed.batch.samples[0].volume_ml, 4.5);
  EXPECT_EQ(parsed.batch.samples[1].volume_ml, 2.0);
  ASSERT_EQ(parsed.rejections.size(), 3u);
  for (const RowRejection& r : parsed.rejections) EXPECT_EQ(r.reason, RejectReason::kBadVolume);
}

TEST(CsvReader, WithoutVolumeColumnTheVolumeIsLeftToTheCaller) {
  const ParsedFile parsed =
      ParseOk(MakeReader(), "time,sample,area_um2,aspect_ratio\n1796169600,A,1,1\n");
  ASSERT_EQ(parsed.batch.samples.size(), 1u);
  EXPECT_FALSE(parsed.batch.samples[0].volume_ml.has_value());
  EXPECT_FALSE(parsed.layout.volume.has_value());
}

TEST(CsvReader, WithoutSampleColumnTheFileStemIsTheSample) {
  InputOptions input;
  input.sample_column = "";
  const ParsedFile parsed =
      ParseOk(MakeReader(input),
              "area_um2,time,aspect_ratio,volume_ml\n1,1796169600,2,5\n3,1796169601,4,5\n",
              "/var/drop/S0042.csv");
  ASSERT_EQ(parsed.batch.samples.size(), 1u);
  EXPECT_EQ(parsed.batch.samples[0].id, "S0042");
  EXPECT_EQ(parsed.batch.samples[0].volume_ml, 5.0);
  EXPECT_EQ(parsed.batch.sample_index, (std::vector<std::uint32_t>{0, 0}));
  EXPECT_EQ(parsed.batch.values, (std::vector<double>{1, 2, 3, 4}));
}

TEST(CsvReader, AcceptsOtherDelimitersSpacesAndPlusSigns) {
  InputOptions input;
  input.delimiter = ';';
  const ParsedFile parsed = ParseOk(
      MakeReader(input), " time ; sample ;area_um2;aspect_ratio\n1796169600 ; A ; +12.5 ; 1e-2 \n");
  ASSERT_EQ(parsed.batch.size(), 1u);
  EXPECT_EQ(parsed.batch.values, (std::vector<double>{12.5, 0.01}));
  EXPECT_EQ(parsed.batch.samples[0].id, "A");
}

TEST(CsvReader, CreateRefusesUnusableConfiguration) {
  EXPECT_FALSE(CsvReader::Create(InputOptions{}, {}).ok());
  EXPECT_FALSE(CsvReader::Create(InputOptions{}, {"area_um2", "area_um2"}).ok());
  EXPECT_FALSE(CsvReader::Create(InputOptions{}, {"time"}).ok());
  EXPECT_FALSE(CsvReader::Create(InputOptions{}, {""}).ok());
  InputOptions quote;
  quote.delimiter = '"';
  EXPECT_FALSE(CsvReader::Create(quote, {"area_um2"}).ok());
  InputOptions same;
  same.sample_column = "time";
  EXPECT_FALSE(CsvReader::Create(same, {"area_um2"}).ok());
}

// One seeded field text of the given role: mostly what instruments write, often
// something the one-pass row path must hand to the general path.
std::string RandomFieldText(std::mt19937_64& random, char role, char delimiter) {
  const auto pick = [&](std::size_t n) { return static_cast<std::size_t>(random() % n); };
  if (role == 't') {
    static const char* const kTimes[] = {
        "2026-12-02T00:00:00.125Z", "1796169600.5", "yesterday", "",
        "\"2026-12-02T00:00:01Z\"", " 1796169601 "};
    return pick(4) != 0 ? kTimes[pick(2)] : kTimes[pick(6)];
  }
  if (role == 's') {
    static const char* const kSamples[] = {"S1", "S2", "", "\"S,3\"", " S4 "};
    return pick(4) != 0 ? kSamples[pick(2)] : kSamples[pick(5)];
  }
  if (role == 'v') {
    static const char* const kVolumes[] = {"5.0", "4.75", "-1", "x", "\"5.0\""};
    return pick(4) != 0 ? kVolumes[pick(2)] : kVolumes[pick(5)];
  }
  if (pick(3) != 0) {  // a plain decimal of 1 to 17 digits, some with a point or a sign
    const std::size_t digits = 1 + pick(pick(4) == 0 ? 17 : 8);
    std::string text = pick(5) == 0 ? "-" : "";
    const std::size_t point = pick(digits + 1);
    for (std::size_t i = 0; i < digits; ++i) {
      if (i == point && i > 0) text += '.';
      text += static_cast<char>('0' + pick(10));
    }
    return text;
  }
  static const char* const kOdd[] = {"+12.5", "1e3",      "2.5E-4", "5.",       ".5",    "-",  "",
                                     "abc",   "nan",      "inf",    "\"12.5\"", "1.2.3", " 7", "7 ",
                                     "-0",    "0012.500", "1e400",  "--1",      "+-1",   "12x"};
  std::string text = kOdd[pick(std::size(kOdd))];
  if (text == "1.2.3" && pick(2) == 0) text = std::string("1") + delimiter + "5";
  return text;
}

// Every byte of two parses equal: rows (values bit for bit), samples, rejections.
void ExpectSameParse(const ParsedFile& a, const ParsedFile& b) {
  EXPECT_EQ(a.data_rows, b.data_rows);
  EXPECT_EQ(a.batch.line, b.batch.line);
  EXPECT_EQ(a.batch.sample_index, b.batch.sample_index);
  ASSERT_EQ(a.batch.values.size(), b.batch.values.size());
  EXPECT_EQ(std::memcmp(a.batch.values.data(), b.batch.values.data(),
                        a.batch.values.size() * sizeof(double)),
            0);
  ASSERT_EQ(a.batch.time_seconds.size(), b.batch.time_seconds.size());
  EXPECT_EQ(std::memcmp(a.batch.time_seconds.data(), b.batch.time_seconds.data(),
                        a.batch.time_seconds.size() * sizeof(double)),
            0);
  ASSERT_EQ(a.batch.samples.size(), b.batch.samples.size());
  for (std::size_t i = 0; i < a.batch.samples.size(); ++i) {
    EXPECT_EQ(a.batch.samples[i].id, b.batch.samples[i].id);
    EXPECT_EQ(a.batch.samples[i].volume_ml, b.batch.samples[i].volume_ml);
  }
  ASSERT_EQ(a.rejections.size(), b.rejections.size());
  for (std::size_t i = 0; i < a.rejections.size(); ++i) {
    EXPECT_EQ(a.rejections[i].line, b.rejections[i].line);
    EXPECT_EQ(a.rejections[i].reason, b.rejections[i].reason);
    EXPECT_EQ(a.rejections[i].detail, b.rejections[i].detail);
  }
}

// The reader reads unquoted rows of plain decimals in one pass and sends every other row
// through the general splitter (csv_reader.cc, ReadPlainRow). A blank before each field
// is trimmed by the general path and sends every row there, so the same rows written
// with and without those blanks must parse alike: values bit for bit, every rejection
// with its line and wording. The rows are seeded, with odd fields, quotes, missing and
// extra fields mixed in; the feature columns sit in the middle and at the end.
TEST(CsvReader, OnePassRowsParseAsTheGeneralPathDoes) {
  for (const char delimiter : {',', ';', '\t'}) {
    SCOPED_TRACE(std::string("delimiter ") +
                 (delimiter == '\t' ? "tab" : std::string(1, delimiter)));
    InputOptions input;
    input.delimiter = delimiter;
    const std::string roles = "tsfvxf";  // time, sample, feature, volume, ignored, feature
    const std::vector<std::string> header = {"time",      "sample", "area_um2",
                                             "volume_ml", "note",   "aspect_ratio"};
    std::mt19937_64 random(20261203);
    std::string plain;
    std::string blanked;
    for (std::size_t c = 0; c < header.size(); ++c) {
      plain += (c ? std::string(1, delimiter) : "") + header[c];
      blanked += (c ? std::string(1, delimiter) : "") + header[c];
    }
    plain += '\n';
    blanked += '\n';
    std::size_t odd_rows = 0;
    for (int r = 0; r < 20000; ++r) {
      std::vector<std::string> fields;
      for (const char role : roles) {
        fields.push_back(role == 'x' ? (random() % 8 == 0 ? "a\"b" : "n")
                                     : RandomFieldText(random, role, delimiter));
      }
      if (random() % 40 == 0) fields.pop_back();
      if (random() % 40 == 0) fields.push_back("7");
      for (std::size_t c = 0; c < fields.size(); ++c) {
        plain += (c ? std::string(1, delimiter) : "") + fields[c];
        blanked += (c ? std::string(1, delimiter) : "") + " " + fields[c];
      }
      const std::string line_end = random() % 10 == 0 ? "\r\n" : "\n";
      plain += line_end;
      blanked += line_end;
      odd_rows += fields.size() != roles.size();
    }
    Result<CsvReader> reader = CsvReader::Create(input, {"area_um2", "aspect_ratio"});
    ASSERT_TRUE(reader.ok()) << reader.status().ToString();
    const ParsedFile one_pass = ParseOk(*reader, plain);
    const ParsedFile general = ParseOk(*reader, blanked);
    EXPECT_GT(odd_rows, 500u);
    // Both kinds of row occur in numbers: thousands accepted, thousands rejected.
    EXPECT_GT(one_pass.batch.size(), 3000u);
    EXPECT_GT(one_pass.rejections.size(), 3000u);
    ExpectSameParse(one_pass, general);
  }
}

// About 10 MB of rows: a smoke test that the fast path copes; the figure printed is for
// the reader, the benchmark proper lives elsewhere.
TEST(CsvReader, ParsesATenMegabyteFile) {
  std::string text = kHeader;
  text.reserve(11u << 20);
  std::size_t rows = 0;
  double area_sum = 0.0;
  while (text.size() < (10u << 20)) {
    const double area = 10.0 + static_cast<double>(rows % 997) * 0.125;
    text += std::to_string(1796169600 + rows / 10) + ",S" + std::to_string(rows / 50000) + ",5.0," +
            std::to_string(area) + ",0.75\n";
    area_sum += area;
    ++rows;
  }
  const auto start = std::chrono::steady_clock::now();
  const ParsedFile parsed = ParseOk(MakeReader(), text);
  const std::chrono::duration<double> took = std::chrono::steady_clock::now() - start;
  std::cout << "parsed " << text.size() / 1e6 << " MB in " << took.count() << " s\n";
  ASSERT_EQ(parsed.batch.size(), rows);
  EXPECT_TRUE(parsed.rejections.empty());
  EXPECT_EQ(parsed.batch.samples.size(), (rows - 1) / 50000 + 1);
  double parsed_sum = 0.0;
  for (std::size_t i = 0; i < parsed.batch.size(); ++i) parsed_sum += parsed.batch.row(i)[0];
  EXPECT_NEAR(parsed_sum, area_sum, 1e-9 * area_sum);
}

}  // namespace
}  // namespace seston
