#include "features/standardizer.h"

#include <gtest/gtest.h>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "support/test_paths.h"

namespace seston {
namespace {

// Fisher's iris, the four measurements in cm (tests/data/iris.csv, see its README).
RowMatrix ReadIris() {
  std::ifstream in(testing::TestDataPath("iris.csv"));
  std::string line;
  std::getline(in, line);  // header
  std::vector<double> values;
  while (std::getline(in, line)) {
    std::stringstream fields(line);
    std::string field;
    for (int j = 0; j < 4 && std::getline(fields, field, ','); ++j)
      values.push_back(std::stod(field));
  }
  RowMatrix rows(static_cast<Eigen::Index>(values.size() / 4), 4);
  for (Eigen::Index i = 0; i < rows.rows(); ++i) {
    for (Eigen::Index j = 0; j < 4; ++j) rows(i, j) = values[static_cast<std::size_t>(i * 4 + j)];
  }
  return rows;
}

Standardizer FitOn(const RowMatrix& rows) {
  Result<Standardizer> standardizer =
      Standardizer::Create({"sepal_length", "sepal_width", "petal_length", "petal_width"}, true);
  EXPECT_TRUE(standardizer.ok());
  for (Eigen::Index i = 0; i < rows.rows(); ++i) standardizer->Add(rows.row(i).data());
  EXPECT_TRUE(standardizer->Freeze().ok());
  return std::move(standardizer).value();
}

TEST(Standardizer, IrisMeansAndPopulationSdMatchStandardScaler) {
  const RowMatrix iris = ReadIris();
  ASSERT_EQ(iris.rows(), 150);
  const Standardizer standardizer = FitOn(iris);
  // From memory: scikit-learn StandardScaler().fit(iris.data) mean_ and scale_
  // (population sd) on the scikit-learn copy of iris; Python's statistics.fmean/pstdev
  // on tests/data/iris.csv agree to the digits shown.
  const double means[] = {5.843333333333334, 3.0573333333333337, 3.758, 1.1993333333333334};
  const double sds[] = {0.8253012917851409, 0.43441096773549454, 1.759404065775303,
                        0.7596926279021594};
  for (std::size_t d = 0; d < 4; ++d) {
    EXPECT_NEAR(standardizer.means()[d], means[d], 1e-13);
    EXPECT_NEAR(standardizer.scales()[d], sds[d], 1e-13);
  }
  EXPECT_TRUE(standardizer.warnings().empty());
}

TEST(Standardizer, ZScoredIrisHasMeanZeroAndPopulationSdOne) {
  const RowMatrix iris = ReadIris();
  const Standardizer standardizer = FitOn(iris);
  RowMatrix z = iris;
  standardizer.Apply(&z);
  for (Eigen::Index d = 0; d < 4; ++d) {
    const double mean = z.col(d).mean();
    const double population_variance = (z.col(d).array() - mean).square().mean();
    EXPECT_NEAR(mean, 0.0, 1e-12);
    EXPECT_NEAR(std::sqrt(population_variance), 1.0, 1e-12);
  }
}

TEST(Standardizer, InverseRestoresTheInputRows) {
  const RowMatrix iris = ReadIris();
  const Standardizer standardizer = FitOn(iris);
  RowMatrix round_trip = iris;
  standardizer.Apply(&round_trip);
  for (Eigen::Index i = 0; i < round_trip.rows(); ++i)
    standardizer.Inverse(round_trip.row(i).data());
  EXPECT_LT((round_trip - iris).cwiseAbs().maxCoeff(), 1e-14 * iris.cwiseAbs().maxCoeff());
}

TEST(Standardizer, ConstantDimensionGetsScaleOneAndAWarning) {
  Result<Standardizer> standardizer = Standardizer::Create({"area", "grey"}, true);
  ASSERT_TRUE(standardizer.ok());
  for (double area : {10.0, 20.0, 30.0}) {
    const double row[] = {area, 0.7};
    standardizer->Add(row);
  }
  ASSERT_TRUE(standardizer->Freeze().ok());
  EXPECT_EQ(standardizer->scales()[1], 1.0);
  ASSERT_EQ(standardizer->warnings().size(), 1u);
  EXPECT_NE(standardizer->warnings()[0].find("grey"), std::string::npos);
  double row[] = {30.0, 0.9};
  standardizer->Apply(row);
  // Population sd of 10, 20, 30 is sqrt(200/3).
  EXPECT_DOUBLE_EQ(row[0], 10.0 / std::sqrt(200.0 / 3.0));
  EXPECT_NEAR(row[1], 0.2, 1e-15);
}

TEST(Standardizer, DisabledIsIdentityWithoutWarmUp) {
  Result<Standardizer> standardizer = Standardizer::Create({"area"}, false);
  ASSERT_TRUE(standardizer.ok());
  ASSERT_TRUE(standardizer->Freeze().ok());
  double row[] = {123.5};
  standardizer->Apply(row);
  EXPECT_EQ(row[0], 123.5);
  standardizer->Inverse(row);
  EXPECT_EQ(row[0], 123.5);
}

TEST(Standardizer, RefusesNoDimensionsFreezeWithoutRowsAndSecondFreeze) {
  EXPECT_FALSE(Standardizer::Create({}, true).ok());
  Result<Standardizer> standardizer = Standardizer::Create({"area"}, true);
  ASSERT_TRUE(standardizer.ok());
  EXPECT_EQ(standardizer->Freeze().code(), StatusCode::kFailedPrecondition);
  const double row[] = {1.0};
  standardizer->Add(row);
  EXPECT_TRUE(standardizer->Freeze().ok());
  EXPECT_EQ(standardizer->Freeze().code(), StatusCode::kFailedPrecondition);
}

TEST(Standardizer, JsonRoundTripRestoresExactScale) {
  const Standardizer standardizer = FitOn(ReadIris());
  Result<Standardizer> restored =
      Standardizer::FromJson(nlohmann::json::parse(standardizer.ToJson().dump()));
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_TRUE(restored->frozen());
  EXPECT_EQ(restored->means(), standardizer.means());
  EXPECT_EQ(restored->scales(), standardizer.scales());
  EXPECT_EQ(restored->dimension_names(), standardizer.dimension_names());
  EXPECT_FALSE(Standardizer::FromJson(nlohmann::json{{"names", {"a"}}}).ok());
}

}  // namespace
}  // namespace seston
