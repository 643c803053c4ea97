#include "drift/contingency_tests.h"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>
#include <string>

#include "support/test_paths.h"

namespace seston {
namespace {

// NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.4, upper critical values of
// the chi-square distribution (tests/data/chi_square_critical_values.csv). The table
// gives 3 decimals, so the upper tail at the tabulated value matches alpha to within
// 5e-4 (the density times half a unit of the last digit is far smaller than that).
TEST(ChiSquareUpperTail, TabulatedCriticalValuesHaveTheirAlpha) {
  std::ifstream table(testing::TestDataPath("chi_square_critical_values.csv"));
  ASSERT_TRUE(table) << "tests/data/chi_square_critical_values.csv is missing";
  std::string line;
  std::getline(table, line);  // header
  int rows = 0;
  while (std::getline(table, line)) {
    std::istringstream fields(line);
    std::string df_text, at_05, at_01;
    std::getline(fields, df_text, ',');
    std::getline(fields, at_05, ',');
    std::getline(fields, at_01, ',');
    const int df = std::stoi(df_text);
    auto p_05 = ChiSquareUpperTail(std::stod(at_05), df);
    auto p_01 = ChiSquareUpperTail(std::stod(at_01), df);
    ASSERT_TRUE(p_05.ok() && p_01.ok());
    EXPECT_NEAR(*p_05, 0.05, 5e-4) << "df " << df;
    EXPECT_NEAR(*p_01, 0.01, 5e-4) << "df " << df;
    ++rows;
  }
  EXPECT_EQ(rows, 10);
}

TEST(ChiSquareUpperTail, RefusesZeroDegreesOfFreedomAndNegativeStatistics) {
  EXPECT_EQ(ChiSquareUpperTail(1.0, 0).status().code(), StatusCode::kInvalidArgument);
  EXPECT_EQ(ChiSquareUpperTail(-1.0, 2).status().code(), StatusCode::kInvalidArgument);
}

// Worked test of homogeneity, SciPy 1.10.1 chi2_contingency without continuity
// correction (shared reference README): [[30,20,50],[45,25,30]].
// Row totals 100 and 100, column totals 75, 45, 80, N = 200, so E = 37.5, 22.5, 40 in
// both rows; X² = 2·(7.5²/37.5 + 2.5²/22.5 + 10²/40) = 2·(1.5 + 0.27778 + 2.5) = 8.555556.
TEST(ChiSquareHomogeneity, WorkedThreeColumnTableMatchesSciPy) {
  auto test = ChiSquareHomogeneity({30, 20, 50}, {45, 25, 30});
  ASSERT_TRUE(test.ok()) << test.status().ToString();
  EXPECT_NEAR(test->statistic, 8.555556, 1e-6);
  EXPECT_EQ(test->degrees_of_freedom, 2);
  EXPECT_NEAR(test->p_value, 0.0138735, 1e-7);
}

// Same table; G = 2 Σ O ln(O/E) = 8.630462, p = 0.0133635 (SciPy 1.10.1, lambda_=
// "log-likelihood").
TEST(GTestHomogeneity, WorkedThreeColumnTableMatchesSciPy) {
  auto test = GTestHomogeneity({30, 20, 50}, {45, 25, 30});
  ASSERT_TRUE(test.ok()) << test.status().ToString();
  EXPECT_NEAR(test->statistic, 8.630462, 1e-6);
  EXPECT_EQ(test->degrees_of_freedom, 2);
  EXPECT_NEAR(test->p_value, 0.0133635, 1e-7);
}

// Composition example of the shared reference README (2×4 table): a highly significant
// but small change. SciPy 1.10.1 / pure Python values.
TEST(ContingencyTests, LargeSampleSmallChangeIsSignificant) {
  const std::vector<double> baseline = {400, 300, 200, 100};
  const std::vector<double> recent = {300, 300, 250, 150};
  auto chi = ChiSquareHomogeneity(baseline, recent);
  auto g = GTestHomogeneity(baseline, recent);
  ASSERT_TRUE(chi.ok() && g.ok());
  EXPECT_NEAR(chi->statistic, 29.841270, 1e-6);
  EXPECT_EQ(chi->degrees_of_freedom, 3);
  EXPECT_NEAR(chi->p_value, 1.4903e-6, 1e-10);
  EXPECT_NEAR(g->statistic, 29.969507, 1e-6);
  EXPECT_NEAR(g->p_value, 1.4006e-6, 1e-10);
}

TEST(ContingencyTests, EmptyColumnsAreDroppedFromTheDegreesOfFreedom) {
  // The worked table with two all-zero columns inserted: same test, df still 2.
  auto g = GTestHomogeneity({30, 0, 20, 50, 0}, {45, 0, 25, 30, 0});
  ASSERT_TRUE(g.ok());
  EXPECT_EQ(g->degrees_of_freedom, 2);
  EXPECT_NEAR(g->statistic, 8.630462, 1e-6);
}

TEST(ContingencyTests, SingleNonEmptyColumnHasNoEvidenceOfChange) {
  auto chi = ChiSquareHomogeneity({10, 0}, {70, 0});
  ASSERT_TRUE(chi.ok());
  EXPECT_EQ(chi->degrees_of_freedom, 0);
  EXPECT_EQ(chi->statistic, 0);
  EXPECT_EQ(chi->p_value, 1);
}

TEST(ContingencyTests, RefusesMismatchedNegativeOrEmptyRows) {
  EXPECT_EQ(ChiSquareHomogeneity({1, 2}, {1, 2, 3}).status().code(), StatusCode::kInvalidArgument);
  EXPECT_EQ(GTestHomogeneity({1, -2}, {1, 2}).status().code(), StatusCode::kInvalidArgument);
  auto empty = GTestHomogeneity({0, 0}, {1, 2});
  ASSERT_FALSE(empty.ok());
  EXPECT_NE(empty.status().message().find("baseline sums to 0"), std::string::npos);
}

// SciPy 1.10.1: jensenshannon([.5,.3,.2], [.2,.3,.5], base=2)**2 = 0.0958156.
TEST(JensenShannonDivergence, MatchesSciPyInBits) {
  auto jsd = JensenShannonDivergence({0.5, 0.3, 0.2}, {0.2, 0.3, 0.5});
  ASSERT_TRUE(jsd.ok());
  EXPECT_NEAR(*jsd, 0.0958156, 1e-7);
  // Counts are normalised first: the same shares times 10 and 7 give the same value.
  auto from_counts = JensenShannonDivergence({5, 3, 2}, {1.4, 2.1, 3.5});
  ASSERT_TRUE(from_counts.ok());
  EXPECT_NEAR(*from_counts, 0.0958156, 1e-7);
}

TEST(JensenShannonDivergence, IsOneBitForDisjointAndZeroForEqual) {
  // Definition: disjoint supports give ½·1·log2(1/½)·2 = 1 bit.
  EXPECT_NEAR(*JensenShannonDivergence({1, 0}, {0, 1}), 1.0, 1e-15);
  EXPECT_NEAR(*JensenShannonDivergence({2, 3}, {4, 6}), 0.0, 1e-15);
}

// Shared reference README: Σ(q−p)·ln(q/p) = 0.060199 for the 2×4 example:
// (−0.1)·ln(0.75) + 0 + 0.05·ln(1.25) + 0.05·ln(1.5) = 0.028768 + 0.011157 + 0.020273.
TEST(PopulationStabilityIndex, MatchesReferenceValue) {
  auto psi = PopulationStabilityIndex({400, 300, 200, 100}, {300, 300, 250, 150});
  ASSERT_TRUE(psi.ok());
  EXPECT_NEAR(*psi, 0.060199, 1e-6);
}

TEST(PopulationStabilityIndex, EmptyCategoryIsGuardedByTheShareFloor) {
  // p = (1, 0), q = (0.5, 0.5): p's empty share is raised to 1e-4, so
  // PSI = (0.5 − 1)·ln(0.5) + (0.5 − 1e-4)·ln(0.5 / 1e-4).
  const double expected = -0.5 * std::log(0.5) + (0.5 - kPopulationStabilityShareFloor) *
                                                     std::log(0.5 / kPopulationStabilityShareFloor);
  auto psi = PopulationStabilityIndex({10, 0}, {5, 5});
  ASSERT_TRUE(psi.ok());
  EXPECT_NEAR(*psi, expected, 1e-12);
  EXPECT_TRUE(std::isfinite(*psi));
}

}  // namespace
}  // namespace seston
