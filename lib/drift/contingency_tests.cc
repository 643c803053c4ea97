#include "drift/contingency_tests.h"

#include <algorithm>
#include <boost/math/distributions/chi_squared.hpp>
#include <cmath>
#include <exception>
#include <string>

namespace seston {
namespace {

Status CheckEntries(const std::vector<double>& values, const char* name) {
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (!std::isfinite(values[i]) || values[i] < 0) {
      return Status::InvalidArgument(std::string(name) + "[" + std::to_string(i) + "] is " +
                                     std::to_string(values[i]) +
                                     "; counts and shares must be finite and >= 0");
    }
  }
  return Status::Ok();
}

double Sum(const std::vector<double>& values) {
  double total = 0;
  for (double v : values) total += v;
  return total;
}

Status CheckPair(const std::vector<double>& first, const std::vector<double>& second,
                 const char* first_name, const char* second_name) {
  if (first.size() != second.size()) {
    return Status::InvalidArgument(std::string(first_name) + " has " +
                                   std::to_string(first.size()) + " entries but " + second_name +
                                   " has " + std::to_string(second.size()) +
                                   "; both must list the same categories");
  }
  SESTON_RETURN_IF_ERROR(CheckEntries(first, first_name));
  SESTON_RETURN_IF_ERROR(CheckEntries(second, second_name));
  if (!(Sum(first) > 0)) return Status::InvalidArgument(std::string(first_name) + " sums to 0");
  if (!(Sum(second) > 0)) {
    return Status::InvalidArgument(std::string(second_name) + " sums to 0");
  }
  return Status::Ok();
}

// Expected counts of a 2×K table under homogeneity, with empty columns dropped.
struct ExpectedTable {
  std::vector<double> observed[2];
  std::vector<double> expected[2];
};

ExpectedTable BuildTable(const std::vector<double>& baseline, const std::vector<double>& recent) {
  const double row_total[2] = {Sum(baseline), Sum(recent)};
  const double grand_total = row_total[0] + row_total[1];
  ExpectedTable table;
  for (std::size_t column = 0; column < baseline.size(); ++column) {
    const double column_total = baseline[column] + recent[column];
    if (column_total <= 0) continue;
    const double cells[2] = {baseline[column], recent[column]};
    for (int row = 0; row < 2; ++row) {
      table.observed[row].push_back(cells[row]);
      table.expected[row].push_back(row_total[row] * column_total / grand_total);
    }
  }
  return table;
}

Result<HomogeneityTest> Finish(double statistic, std::size_t columns) {
  HomogeneityTest test;
  test.statistic = statistic;
  test.degrees_of_freedom = static_cast<int>(columns) - 1;
  if (test.degrees_of_freedom < 1) {
    test.statistic = 0;
    test.p_value = 1;
    return test;
  }
  SESTON_ASSIGN_OR_RETURN(test.p_value, ChiSquareUpperTail(statistic, test.degrees_of_freedom));
  return test;
}

}  // namespace

Result<double> ChiSquareUpperTail(double statistic, int degrees_of_freedom) {
  if (degrees_of_freedom < 1) {
    return Status::InvalidArgument("chi-square degrees of freedom is " +
                                   std::to_string(degrees_of_freedom) + "; must be >= 1");
  }
  if (!std::isfinite(statistic) || statistic < 0) {
    return Status::InvalidArgument("chi-square statistic is " + std::to_string(statistic) +
                                   "; must be finite and >= 0");
  }
  try {
    boost::math::chi_squared_distribution<double> distribution(degrees_of_freedom);
    return boost::math::cdf(boost::math::complement(distribution, statistic));
  } catch (const std::exception& error) {
    return Status::Internal(std::string("Boost.Math chi-squared upper tail failed: ") +
                            error.what());
  }
}

Result<HomogeneityTest> ChiSquareHomogeneity(const std::vector<double>& baseline,
                                             const std::vector<double>& recent) {
  SESTON_RETURN_IF_ERROR(CheckPair(baseline, recent, "baseline", "recent"));
  const ExpectedTable table = BuildTable(baseline, recent);
  double statistic = 0;
  for (int row = 0; row < 2; ++row) {
    for (std::size_t i = 0; i < table.observed[row].size(); ++i) {
      const double difference = table.observed[row][i] - table.expected[row][i];
      statistic += difference * difference / table.expected[row][i];
    }
  }
  return Finish(statistic, table.observed[0].size());
}

Result<HomogeneityTest> GTestHomogeneity(const std::vector<double>& baseline,
                                         const std::vector<double>& recent) {
  SESTON_RETURN_IF_ERROR(CheckPair(baseline, recent, "baseline", "recent"));
  const ExpectedTable table = BuildTable(baseline, recent);
  double sum = 0;
  for (int row = 0; row < 2; ++row) {
    for (std::size_t i = 0; i < table.observed[row].size(); ++i) {
      const double observed = table.observed[row][i];
      if (observed > 0) sum += observed * std::log(observed / table.expected[row][i]);
    }
  }
  // Rounding can leave a tiny negative sum for identical rows; G is >= 0 by definition.
  return Finish(std::max(0.0, 2 * sum), table.observed[0].size());
}

Result<double> JensenShannonDivergence(const std::vector<double>& p, const std::vector<double>& q) {
  SESTON_RETURN_IF_ERROR(CheckPair(p, q, "p", "q"));
  const double p_total = Sum(p);
  const double q_total = Sum(q);
  double divergence = 0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    const double pi = p[i] / p_total;
    const double qi = q[i] / q_total;
    const double mi = 0.5 * (pi + qi);
    if (pi > 0) divergence += 0.5 * pi * std::log2(pi / mi);
    if (qi > 0) divergence += 0.5 * qi * std::log2(qi / mi);
  }
  return std::max(0.0, divergence);
}

Result<double> PopulationStabilityIndex(const std::vector<double>& p,
                                        const std::vector<double>& q) {
  SESTON_RETURN_IF_ERROR(CheckPair(p, q, "p", "q"));
  const double p_total = Sum(p);
  const double q_total = Sum(q);
  double index = 0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    if (p[i] <= 0 && q[i] <= 0) continue;
    const double pi = std::max(p[i] / p_total, kPopulationStabilityShareFloor);
    const double qi = std::max(q[i] / q_total, kPopulationStabilityShareFloor);
    index += (qi - pi) * std::log(qi / pi);
  }
  return index;
}

}  // namespace seston
