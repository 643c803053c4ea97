// Tests and distances for comparing two categorical distributions (cluster counts).
//
// The drift detectors compare a baseline set of cluster counts with a recent one. These
// are the published measures they use, as plain functions on numbers:
//   - ChiSquareHomogeneity: Pearson's X² test of homogeneity on a 2×K table;
//   - GTestHomogeneity: the log-likelihood-ratio (G) test on the same table;
//   - JensenShannonDivergence: the symmetric, bounded effect size, in bits (0..1);
//   - PopulationStabilityIndex: Σ (q − p)·ln(q / p), the credit-scoring drift index
//     (common practice: < 0.1 small, 0.1–0.25 moderate, > 0.25 large).
//
// Tables: `baseline` and `recent` are the two rows, one entry per category (cluster), in
// counts (particles; fractional counts, e.g. decayed ones, are accepted). Columns whose
// total is zero carry no information and are dropped, so df = K' − 1 with K' the
// columns left. p-values come from Boost.Math's chi-squared distribution (upper tail).
//
// Thread safety: pure functions.
#pragma once

#include <vector>

#include "base/status.h"

namespace seston {

struct HomogeneityTest {
  double statistic = 0;        // X² or G, dimensionless
  int degrees_of_freedom = 0;  // K' − 1; 0 when fewer than two columns are non-empty
  double p_value = 1;          // upper-tail probability; 1 when degrees_of_freedom is 0
};

// P(χ²(degrees_of_freedom) ≥ statistic). degrees_of_freedom ≥ 1, statistic ≥ 0.
Result<double> ChiSquareUpperTail(double statistic, int degrees_of_freedom);

// Pearson X² = Σ (O − E)² / E over the 2×K table, E = row total × column total / N.
// Fails when the rows differ in length, hold a negative or non-finite count, or either
// row sums to zero.
Result<HomogeneityTest> ChiSquareHomogeneity(const std::vector<double>& baseline,
                                             const std::vector<double>& recent);

// G = 2 Σ O ln(O / E) over the same table (cells with O = 0 add nothing). Same
// preconditions as ChiSquareHomogeneity.
Result<HomogeneityTest> GTestHomogeneity(const std::vector<double>& baseline,
                                         const std::vector<double>& recent);

// JSD(p, q) = ½ KL(p ‖ m) + ½ KL(q ‖ m), m = (p + q) / 2, logarithms base 2, so the
// result is in bits, from 0 (same) to 1 (disjoint). `p` and `q` are normalised to sum 1
// first, so counts may be passed directly. Fails on unequal lengths, a negative or
// non-finite entry, or a vector summing to zero.
Result<double> JensenShannonDivergence(const std::vector<double>& p, const std::vector<double>& q);

// Shares below this are raised to it in PopulationStabilityIndex.
inline constexpr double kPopulationStabilityShareFloor = 1e-4;

// PSI = Σ (q − p)·ln(q / p) on the normalised vectors, natural logarithm.
// Small-count guard: a category empty on one side would make ln(q/p) infinite, so each
// share below kPopulationStabilityShareFloor (0.01 %) is raised to it (without
// renormalising) before the sum; categories empty on both sides add nothing. Same
// preconditions as JensenShannonDivergence.
Result<double> PopulationStabilityIndex(const std::vector<double>& p, const std::vector<double>& q);

}  // namespace seston
