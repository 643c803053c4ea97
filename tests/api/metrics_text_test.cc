// The rules checked here are those of the Prometheus text exposition format 0.0.4
// ("Exposition formats" in the Prometheus documentation, text-based format) and of the
// Prometheus metric and label naming page. The escaping example is the one that page
// gives for msdos_file_access_time_seconds (from memory).
#include "api/metrics_text.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

namespace seston {
namespace {

std::vector<std::string> Lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream stream(text);
  for (std::string line; std::getline(stream, line);) lines.push_back(line);
  return lines;
}

TEST(MetricsText, WritesHelpAndTypeBeforeTheSamplesOfAFamily) {
  MetricsText page;
  ASSERT_TRUE(page.Family("seston_particles_rejected_total", MetricType::kCounter,
                          "Rows rejected, by reason.")
                  .ok());
  ASSERT_TRUE(page.Sample({{"reason", "not_a_number"}}, 12).ok());
  ASSERT_TRUE(page.Sample({{"reason", "field_count"}}, 0).ok());
  EXPECT_EQ(Lines(page.Text()), (std::vector<std::string>{
                                    "# HELP seston_particles_rejected_total Rows rejected, by "
                                    "reason.",
                                    "# TYPE seston_particles_rejected_total counter",
                                    "seston_particles_rejected_total{reason=\"not_a_number\"} 12",
                                    "seston_particles_rejected_total{reason=\"field_count\"} 0"}));
  EXPECT_EQ(page.Text().back(), '\n');
}

TEST(MetricsText, EscapesLabelValuesAsTheFormatDocumentsThem) {
  MetricsText page;
  ASSERT_TRUE(page.Family("msdos_file_access_time_seconds", MetricType::kGauge, "x").ok());
  ASSERT_TRUE(
      page.Sample({{"path", "C:\\DIR\\FILE.TXT"}, {"error", "Cannot find file:\n\"FILE.TXT\""}},
                  1.458255915e9)
          .ok());
  EXPECT_EQ(Lines(page.Text()).back(),
            "msdos_file_access_time_seconds{path=\"C:\\\\DIR\\\\FILE.TXT\",error=\"Cannot find "
            "file:\\n\\\"FILE.TXT\\\"\"} 1458255915");
}

TEST(MetricsText, EscapesBackslashAndLineFeedInHelpButNotQuotes) {
  MetricsText page;
  ASSERT_TRUE(page.Family("a_b", MetricType::kGauge, "one \"two\"\nthree \\ four").ok());
  EXPECT_EQ(Lines(page.Text()).front(), "# HELP a_b one \"two\"\\nthree \\\\ four");
}

TEST(MetricsText, KeepsUtf8LabelValuesAsTheyAre) {
  EXPECT_EQ(MetricsText::EscapeLabelValue("Skerry Sound – chaîne"), "Skerry Sound – chaîne");
}

TEST(MetricsText, WritesValuesThatReadBackExactly) {
  EXPECT_EQ(MetricsText::FormatValue(0), "0");
  EXPECT_EQ(MetricsText::FormatValue(-3), "-3");
  EXPECT_EQ(MetricsText::FormatValue(9007199254740992.0), "9007199254740992");
  EXPECT_EQ(MetricsText::FormatValue(std::numeric_limits<double>::infinity()), "+Inf");
  EXPECT_EQ(MetricsText::FormatValue(-std::numeric_limits<double>::infinity()), "-Inf");
  EXPECT_EQ(MetricsText::FormatValue(std::nan("")), "NaN");
  for (double value : {0.1, 1.0 / 3.0, 2.5e-300, 6.02214076e23, -1e-7}) {
    EXPECT_EQ(std::stod(MetricsText::FormatValue(value)), value) << value;
  }
  EXPECT_EQ(MetricsText::FormatValue(0.1), "0.1");
}

TEST(MetricsText, RefusesACounterNotNamedTotal) {
  MetricsText page;
  Status status = page.Family("seston_particles", MetricType::kCounter, "x");
  EXPECT_EQ(status.code(), StatusCode::kInvalidArgument);
  EXPECT_NE(status.message().find("_total"), std::string::npos);
  EXPECT_TRUE(page.Text().empty());
  EXPECT_TRUE(page.Family("seston_particles", MetricType::kGauge, "x").ok());
}

TEST(MetricsText, RefusesNamesOutsideTheGrammar) {
  MetricsText page;
  EXPECT_FALSE(page.Family("9lives", MetricType::kGauge, "x").ok());
  EXPECT_FALSE(page.Family("has-dash", MetricType::kGauge, "x").ok());
  EXPECT_FALSE(page.Family("", MetricType::kGauge, "x").ok());
  EXPECT_TRUE(page.Family("recording:rule_name", MetricType::kGauge, "x").ok());
  EXPECT_FALSE(page.Sample({{"bad:colon", "v"}}, 1).ok());
  EXPECT_FALSE(page.Sample({{"__reserved", "v"}}, 1).ok());
  EXPECT_FALSE(page.Sample({{"1st", "v"}}, 1).ok());
  EXPECT_TRUE(page.Sample({{"_ok", "v"}}, 1).ok());
}

TEST(MetricsText, RefusesASecondFamilyOfOneNameAndARepeatedLabelSet) {
  MetricsText page;
  ASSERT_TRUE(page.Single("seston_up", MetricType::kGauge, "x", 1).ok());
  EXPECT_FALSE(page.Family("seston_up", MetricType::kGauge, "x").ok());
  ASSERT_TRUE(
      page.Family("seston_cluster_concentration_per_millilitre", MetricType::kGauge, "x").ok());
  ASSERT_TRUE(page.Sample({{"cluster", "3"}}, 1.5).ok());
  EXPECT_FALSE(page.Sample({{"cluster", "3"}}, 2.5).ok());
  EXPECT_FALSE(page.Sample({{"cluster", "4"}, {"cluster", "5"}}, 2.5).ok());
  EXPECT_EQ(Lines(page.Text()).size(), 6u);  // HELP, TYPE, sample; HELP, TYPE, one sample
}

TEST(MetricsText, RefusesASampleBeforeAnyFamily) {
  MetricsText page;
  EXPECT_EQ(page.Sample({}, 1).code(), StatusCode::kInvalidArgument);
  EXPECT_TRUE(page.Text().empty());
}

TEST(MetricsText, WritesAnInfoMetricWithValueOne) {
  MetricsText page;
  ASSERT_TRUE(page.Family("seston_build_info", MetricType::kGauge, "Build of sestond.").ok());
  ASSERT_TRUE(page.Sample({{"version", "0.1.0"}}, 1).ok());
  EXPECT_EQ(Lines(page.Text()).back(), "seston_build_info{version=\"0.1.0\"} 1");
}

}  // namespace
}  // namespace seston
