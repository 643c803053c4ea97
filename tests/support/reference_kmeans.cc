#include "support/reference_kmeans.h"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <map>
#include <random>
#include <sstream>
#include <string>

#include "support/test_paths.h"

namespace seston::testing {

void ReferenceNearest(const RowMatrix& points, const RowMatrix& centres, std::vector<int>* index,
                      std::vector<double>* squared_distance) {
  index->assign(points.rows(), -1);
  squared_distance->assign(points.rows(), 0);
  for (int i = 0; i < points.rows(); ++i) {
    for (int j = 0; j < centres.rows(); ++j) {
      double sum = 0;
      for (int t = 0; t < points.cols(); ++t) {
        sum += (points(i, t) - centres(j, t)) * (points(i, t) - centres(j, t));
      }
      if ((*index)[i] < 0 || sum < (*squared_distance)[i]) {
        (*index)[i] = j;
        (*squared_distance)[i] = sum;
      }
    }
  }
}

double ReferenceSse(const RowMatrix& points, const RowMatrix& centres,
                    const std::vector<int>& labels) {
  double total = 0;
  for (int i = 0; i < points.rows(); ++i) {
    for (int t = 0; t < points.cols(); ++t) {
      const double difference = points(i, t) - centres(labels[i], t);
      total += difference * difference;
    }
  }
  return total;
}

namespace {
double Pairs(double n) { return n * (n - 1) / 2; }
}  // namespace

double AdjustedRandIndex(const std::vector<int>& a, const std::vector<int>& b) {
  std::map<std::pair<int, int>, double> joint;
  std::map<int, double> a_counts;
  std::map<int, double> b_counts;
  for (std::size_t i = 0; i < a.size(); ++i) {
    joint[{a[i], b[i]}] += 1;
    a_counts[a[i]] += 1;
    b_counts[b[i]] += 1;
  }
  double index = 0;
  for (const auto& [cell, count] : joint) index += Pairs(count);
  double a_pairs = 0;
  for (const auto& [label, count] : a_counts) a_pairs += Pairs(count);
  double b_pairs = 0;
  for (const auto& [label, count] : b_counts) b_pairs += Pairs(count);
  const double expected = a_pairs * b_pairs / Pairs(static_cast<double>(a.size()));
  const double maximum = (a_pairs + b_pairs) / 2;
  return (index - expected) / (maximum - expected);
}

void LoadIris(RowMatrix* features, std::vector<int>* species) {
  std::ifstream in(TestDataPath("iris.csv"));
  ASSERT_TRUE(in) << "cannot open " << TestDataPath("iris.csv");
  std::string line;
  std::getline(in, line);  // header
  std::vector<std::vector<double>> rows;
  std::map<std::string, int> species_index;
  species->clear();
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::stringstream fields(line);
    std::string field;
    std::vector<double> row;
    for (int t = 0; t < 4; ++t) {
      std::getline(fields, field, ',');
      row.push_back(std::stod(field));
    }
    std::getline(fields, field);
    species_index.try_emplace(field, static_cast<int>(species_index.size()));
    species->push_back(species_index[field]);
    rows.push_back(row);
  }
  ASSERT_EQ(rows.size(), 150u);
  features->resize(static_cast<Eigen::Index>(rows.size()), 4);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    for (int t = 0; t < 4; ++t) (*features)(static_cast<Eigen::Index>(i), t) = rows[i][t];
  }
}

RowMatrix ZScore(const RowMatrix& points) {
  RowMatrix scaled = points;
  const double n = static_cast<double>(points.rows());
  for (int t = 0; t < points.cols(); ++t) {
    double mean = 0;
    for (int i = 0; i < points.rows(); ++i) mean += points(i, t);
    mean /= n;
    double sum_of_squares = 0;
    for (int i = 0; i < points.rows(); ++i) {
      sum_of_squares += (points(i, t) - mean) * (points(i, t) - mean);
    }
    const double sd = std::sqrt(sum_of_squares / n);
    for (int i = 0; i < points.rows(); ++i) scaled(i, t) = (points(i, t) - mean) / sd;
  }
  return scaled;
}

void DrawGaussianMixture(const RowMatrix& means, double sd, std::size_t count, std::uint64_t seed,
                         RowMatrix* points, std::vector<int>* labels) {
  std::mt19937_64 engine(seed);
  std::uniform_int_distribution<int> component(0, static_cast<int>(means.rows()) - 1);
  std::normal_distribution<double> noise(0, sd);
  points->resize(static_cast<Eigen::Index>(count), means.cols());
  labels->resize(count);
  for (std::size_t i = 0; i < count; ++i) {
    const int c = component(engine);
    (*labels)[i] = c;
    for (int t = 0; t < means.cols(); ++t) {
      (*points)(static_cast<Eigen::Index>(i), t) = means(c, t) + noise(engine);
    }
  }
}

}  // namespace seston::testing
