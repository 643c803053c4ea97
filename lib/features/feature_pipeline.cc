#include "features/feature_pipeline.h"

#include <charconv>
#include <set>
#include <utility>

#include "features/feature_transform.h"

namespace seston {
namespace {

// Shortest text that reads back as the same double.
std::string NumberText(double value) {
  char buffer[32];
  auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value);
  return std::string(buffer, error == std::errc() ? end : buffer);
}

}  // namespace

FeaturePipeline::FeaturePipeline(std::vector<std::string> columns,
                                 std::vector<Transform> transforms, Standardizer scaler)
    : columns_(std::move(columns)),
      transforms_(std::move(transforms)),
      scaler_(std::move(scaler)) {}

Result<FeaturePipeline> FeaturePipeline::Create(const FeatureOptions& options) {
  if (options.features.empty()) {
    return Status::InvalidArgument(
        "features: the feature list is empty; name at least one input column to cluster on");
  }
  std::vector<std::string> columns;
  std::vector<Transform> transforms;
  std::set<std::string> seen;
  for (const FeatureSpec& spec : options.features) {
    if (spec.column.empty()) {
      return Status::InvalidArgument("features: feature " + std::to_string(columns.size() + 1) +
                                     " has an empty column name");
    }
    if (!seen.insert(spec.column).second) {
      return Status::InvalidArgument("features: column " + spec.column +
                                     " is listed twice; each column may be one feature only");
    }
    columns.push_back(spec.column);
    transforms.push_back(spec.transform);
  }
  SESTON_ASSIGN_OR_RETURN(Standardizer scaler, Standardizer::Create(columns, options.standardize));
  if (!options.standardize) SESTON_RETURN_IF_ERROR(scaler.Freeze());
  return FeaturePipeline(std::move(columns), std::move(transforms), std::move(scaler));
}

void FeaturePipeline::TransformBatch(const ParticleBatch& batch, RowMatrix* out,
                                     std::vector<std::size_t>* kept_rows,
                                     std::vector<RowRejection>* rejections) const {
  const std::size_t dims = columns_.size();
  const std::size_t rows = batch.size();
  out->resize(static_cast<Eigen::Index>(rows), static_cast<Eigen::Index>(dims));
  kept_rows->clear();
  kept_rows->reserve(rows);
  for (std::size_t i = 0; i < rows; ++i) {
    const double* in = batch.row(i);
    double* target = out->row(static_cast<Eigen::Index>(kept_rows->size())).data();
    std::size_t d = 0;
    while (d < dims && ApplyTransform(transforms_[d], in[d], &target[d])) ++d;
    if (d == dims) {
      kept_rows->push_back(i);
      continue;
    }
    rejections->push_back({batch.line[i], RejectReason::kOutOfDomain,
                           "column " + columns_[d] + ": " + TransformName(transforms_[d]) + " " +
                               TransformDomainText(transforms_[d]) + ", got " + NumberText(in[d])});
  }
  out->conservativeResize(static_cast<Eigen::Index>(kept_rows->size()),
                          static_cast<Eigen::Index>(dims));
}

TransformedBatch FeaturePipeline::Transformed(const ParticleBatch& batch) const {
  TransformedBatch transformed;
  TransformBatch(batch, &transformed.rows, &transformed.kept_rows, &transformed.rejections);
  return transformed;
}

void FeaturePipeline::FitScaler(const RowMatrix& transformed_warmup) {
  if (!scaler_.enabled() || transformed_warmup.rows() == 0) return;
  Result<Standardizer> fresh = Standardizer::Create(columns_, true);
  for (Eigen::Index i = 0; i < transformed_warmup.rows(); ++i) {
    fresh->Add(transformed_warmup.row(i).data());
  }
  // Cannot fail: the standardiser is new, enabled and has at least one row.
  Status frozen = fresh->Freeze();
  if (frozen.ok()) scaler_ = std::move(fresh).value();
}

void FeaturePipeline::Standardize(RowMatrix* rows) const { scaler_.Apply(rows); }

std::vector<double> FeaturePipeline::ToInputUnits(const double* standardized_row) const {
  std::vector<double> row(standardized_row, standardized_row + columns_.size());
  scaler_.Inverse(row.data());
  for (std::size_t d = 0; d < row.size(); ++d) row[d] = InverseTransform(transforms_[d], row[d]);
  return row;
}

nlohmann::json FeaturePipeline::ToJson() const {
  nlohmann::json features = nlohmann::json::array();
  for (std::size_t d = 0; d < columns_.size(); ++d) {
    features.push_back({{"column", columns_[d]}, {"transform", TransformName(transforms_[d])}});
  }
  return {{"features", features}, {"scaler", scaler_.ToJson()}};
}

Result<FeaturePipeline> FeaturePipeline::FromJson(const nlohmann::json& json) {
  const auto features = json.find("features");
  const auto scaler = json.find("scaler");
  if (!json.is_object() || features == json.end() || !features->is_array() ||
      scaler == json.end()) {
    return Status::Corruption("feature pipeline: expected an object with features and scaler");
  }
  FeatureOptions options;
  for (const auto& feature : *features) {
    const auto column = feature.find("column");
    const auto transform = feature.find("transform");
    if (!feature.is_object() || column == feature.end() || !column->is_string() ||
        transform == feature.end() || !transform->is_string()) {
      return Status::Corruption(
          "feature pipeline: each feature must be an object with column and transform strings");
    }
    const std::optional<Transform> parsed = TransformFromName(transform->get<std::string>());
    if (!parsed) {
      return Status::Corruption("feature pipeline: unknown transform \"" +
                                transform->get<std::string>() +
                                "\"; expected none, log10, ln or sqrt");
    }
    options.features.push_back({column->get<std::string>(), *parsed});
  }
  SESTON_ASSIGN_OR_RETURN(Standardizer restored, Standardizer::FromJson(*scaler));
  options.standardize = restored.enabled();
  Result<FeaturePipeline> pipeline = Create(options);
  if (!pipeline.ok()) return pipeline.status().WithContext("feature pipeline");
  if (restored.dimension_names() != pipeline->columns_) {
    return Status::Corruption(
        "feature pipeline: the scaler's dimensions do not match the features");
  }
  pipeline->scaler_ = std::move(restored);
  return pipeline;
}

}  // namespace seston
