#include "features/feature_pipeline.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

namespace seston {
namespace {

FeatureOptions AreaAndAspect(bool standardize = true) {
  FeatureOptions options;
  options.features = {{"area_um2", Transform::kLog10}, {"aspect_ratio", Transform::kNone}};
  options.standardize = standardize;
  return options;
}

ParticleBatch MakeBatch(const std::vector<std::vector<double>>& rows) {
  ParticleBatch batch;
  batch.source = "test.csv";
  batch.dims = 2;
  batch.samples.push_back({"S0001", 5.0});
  for (std::size_t i = 0; i < rows.size(); ++i) {
    batch.line.push_back(i + 2);  // line 1 is the header
    batch.time_seconds.push_back(1796169600.0 + static_cast<double>(i));
    batch.sample_index.push_back(0);
    batch.values.insert(batch.values.end(), rows[i].begin(), rows[i].end());
  }
  return batch;
}

TEST(FeaturePipeline, CreateRefusesEmptyListDuplicateAndEmptyColumns) {
  EXPECT_EQ(FeaturePipeline::Create(FeatureOptions{}).status().code(),
            StatusCode::kInvalidArgument);
  FeatureOptions twice;
  twice.features = {{"area_um2", Transform::kLog10}, {"area_um2", Transform::kNone}};
  Result<FeaturePipeline> duplicate = FeaturePipeline::Create(twice);
  ASSERT_FALSE(duplicate.ok());
  EXPECT_NE(duplicate.status().message().find("area_um2"), std::string::npos);
  FeatureOptions unnamed;
  unnamed.features = {{"", Transform::kNone}};
  EXPECT_FALSE(FeaturePipeline::Create(unnamed).ok());
}

TEST(FeaturePipeline, TransformsRowsAndRejectsOutOfDomainWithLineAndDetail) {
  Result<FeaturePipeline> pipeline = FeaturePipeline::Create(AreaAndAspect());
  ASSERT_TRUE(pipeline.ok());
  EXPECT_EQ(pipeline->dims(), 2u);
  EXPECT_EQ(pipeline->columns(), (std::vector<std::string>{"area_um2", "aspect_ratio"}));
  const ParticleBatch batch = MakeBatch({{100.0, 0.5}, {-3.0, 0.7}, {1000.0, 0.9}, {0.0, 1.0}});
  RowMatrix out;
  std::vector<std::size_t> kept;
  std::vector<RowRejection> rejections;
  pipeline->TransformBatch(batch, &out, &kept, &rejections);

  EXPECT_EQ(kept, (std::vector<std::size_t>{0, 2}));
  ASSERT_EQ(out.rows(), 2);
  ASSERT_EQ(out.cols(), 2);
  EXPECT_DOUBLE_EQ(out(0, 0), 2.0);  // log10(100)
  EXPECT_EQ(out(0, 1), 0.5);
  EXPECT_DOUBLE_EQ(out(1, 0), 3.0);  // log10(1000)
  EXPECT_EQ(out(1, 1), 0.9);
  ASSERT_EQ(rejections.size(), 2u);
  EXPECT_EQ(rejections[0].line, 3u);
  EXPECT_EQ(rejections[0].reason, RejectReason::kOutOfDomain);
  EXPECT_EQ(rejections[0].detail, "column area_um2: log10 needs a value > 0, got -3");
  EXPECT_EQ(rejections[1].line, 5u);
  EXPECT_EQ(rejections[1].detail, "column area_um2: log10 needs a value > 0, got 0");
}

TEST(FeaturePipeline, TransformBatchAppendsRejectionsAndReplacesRows) {
  Result<FeaturePipeline> pipeline = FeaturePipeline::Create(AreaAndAspect());
  ASSERT_TRUE(pipeline.ok());
  RowMatrix out = RowMatrix::Constant(5, 2, 9.0);
  std::vector<std::size_t> kept = {7, 8};
  std::vector<RowRejection> rejections = {{1, RejectReason::kFieldCount, "from ingest"}};
  pipeline->TransformBatch(MakeBatch({{-1.0, 0.5}}), &out, &kept, &rejections);
  EXPECT_EQ(out.rows(), 0);
  EXPECT_TRUE(kept.empty());
  ASSERT_EQ(rejections.size(), 2u);
  EXPECT_EQ(rejections[0].detail, "from ingest");
}

TEST(FeaturePipeline, StandardizesAfterFitAndReportsCentresInInputUnits) {
  Result<FeaturePipeline> pipeline = FeaturePipeline::Create(AreaAndAspect());
  ASSERT_TRUE(pipeline.ok());
  EXPECT_FALSE(pipeline->scaler_fitted());
  const ParticleBatch batch = MakeBatch({{10.0, 0.2}, {100.0, 0.4}, {1000.0, 0.6}});
  RowMatrix rows;
  std::vector<std::size_t> kept;
  std::vector<RowRejection> rejections;
  pipeline->TransformBatch(batch, &rows, &kept, &rejections);
  pipeline->FitScaler(rows);
  ASSERT_TRUE(pipeline->scaler_fitted());
  RowMatrix z = rows;
  pipeline->Standardize(&z);
  // log10 areas 1, 2, 3: mean 2, population sd sqrt(2/3); the middle row is the mean.
  EXPECT_NEAR(z(1, 0), 0.0, 1e-15);
  EXPECT_NEAR(z(2, 0), 1.0 / std::sqrt(2.0 / 3.0), 1e-15);
  for (Eigen::Index i = 0; i < z.rows(); ++i) {
    const std::vector<double> input = pipeline->ToInputUnits(z.row(i).data());
    EXPECT_NEAR(input[0], batch.row(static_cast<std::size_t>(i))[0],
                1e-13 * batch.row(static_cast<std::size_t>(i))[0]);
    EXPECT_NEAR(input[1], batch.row(static_cast<std::size_t>(i))[1], 1e-15);
  }
}

TEST(FeaturePipeline, WithoutStandardisationIsFittedFromTheStartAndIdentity) {
  Result<FeaturePipeline> pipeline = FeaturePipeline::Create(AreaAndAspect(false));
  ASSERT_TRUE(pipeline.ok());
  EXPECT_TRUE(pipeline->scaler_fitted());
  RowMatrix rows(1, 2);
  rows << 2.0, 0.5;
  pipeline->Standardize(&rows);
  EXPECT_EQ(rows(0, 0), 2.0);
  EXPECT_DOUBLE_EQ(pipeline->ToInputUnits(rows.row(0).data())[0], 100.0);
}

TEST(FeaturePipeline, FitOnNoRowsLeavesScalerUnfitted) {
  Result<FeaturePipeline> pipeline = FeaturePipeline::Create(AreaAndAspect());
  ASSERT_TRUE(pipeline.ok());
  pipeline->FitScaler(RowMatrix(0, 2));
  EXPECT_FALSE(pipeline->scaler_fitted());
}

TEST(FeaturePipeline, JsonRoundTripRestoresTransformsAndScale) {
  FeatureOptions options = AreaAndAspect();
  options.features.push_back({"grey_level", Transform::kSqrt});
  Result<FeaturePipeline> pipeline = FeaturePipeline::Create(options);
  ASSERT_TRUE(pipeline.ok());
  RowMatrix warmup(3, 3);
  warmup << 1.0, 0.3, 4.0, 2.5, 0.5, 5.0, 3.25, 0.9, 7.5;
  pipeline->FitScaler(warmup);
  Result<FeaturePipeline> restored =
      FeaturePipeline::FromJson(nlohmann::json::parse(pipeline->ToJson().dump()));
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(restored->columns(), pipeline->columns());
  EXPECT_EQ(restored->transforms(), pipeline->transforms());
  EXPECT_TRUE(restored->scaler_fitted());
  RowMatrix a = warmup;
  RowMatrix b = warmup;
  pipeline->Standardize(&a);
  restored->Standardize(&b);
  EXPECT_EQ(a, b);

  nlohmann::json damaged = pipeline->ToJson();
  damaged["features"][0]["transform"] = "log2";
  Result<FeaturePipeline> refused = FeaturePipeline::FromJson(damaged);
  ASSERT_FALSE(refused.ok());
  EXPECT_NE(refused.status().message().find("log2"), std::string::npos);
}

}  // namespace
}  // namespace seston
