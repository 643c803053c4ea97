// The features stage: from accepted particle rows to the vectors the model clusters.
//
// For each configured feature (FeatureOptions, in order) the pipeline takes the batch's
// column, applies the feature's transform (feature_transform.h) and, once the scaler is
// fitted on a warm-up sample, z-scores it (standardizer.h). Rows with a value outside a
// transform's domain are rejected here with RejectReason::kOutOfDomain; every other
// check on the values happened in ingest.
//
// Typical use by the pipeline:
//   TransformBatch(batch, &rows, &kept, &rejections);   // every batch
//   FitScaler(warmup_rows);                             // once, on the first transformed rows
//   Standardize(&rows);                                 // every batch after that
//   ToInputUnits(centre)                                // to report a centre in µm² etc.
//
// Units: ParticleBatch values are in the input's units; TransformBatch gives the
// transformed scale (log10 µm², ...); Standardize gives unitless z-scores; ToInputUnits
// goes back to the input's units.
// Ownership: the pipeline owns its Standardizer; it borrows batches and output buffers.
// Thread safety: FitScaler changes the pipeline (one thread); the const methods may run
// concurrently on any threads.
#pragma once

#include <cstddef>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "base/matrix.h"
#include "base/status.h"
#include "features/feature_options.h"
#include "features/standardizer.h"
#include "ingest/particle_batch.h"

namespace seston {

// TransformBatch's outputs for one batch, kept together.
struct TransformedBatch {
  RowMatrix rows;                        // kept rows × dims(), transformed scale
  std::vector<std::size_t> kept_rows;    // their indices in the batch
  std::vector<RowRejection> rejections;  // the other rows, kOutOfDomain
};

class FeaturePipeline {
 public:
  // InvalidArgument for an empty feature list, an empty column name or a column named
  // twice.
  static Result<FeaturePipeline> Create(const FeatureOptions& options);

  // Transforms each row of `batch` (batch.dims == dims(), columns in columns() order).
  // Rows with every value in its transform's domain are written to `out` (resized to
  // kept × dims()) and their indices in `batch` to `kept_rows` (both replaced); each
  // other row adds one RowRejection with reason kOutOfDomain to `rejections` (appended),
  // e.g. "column area_um2: log10 needs a value > 0, got -3".
  void TransformBatch(const ParticleBatch& batch, RowMatrix* out,
                      std::vector<std::size_t>* kept_rows,
                      std::vector<RowRejection>* rejections) const;
  // TransformBatch into a fresh TransformedBatch. Uses only the transforms, never the scaler,
  // so it may run on another thread while FitScaler runs on this one.
  TransformedBatch Transformed(const ParticleBatch& batch) const;

  // Fits the z-score scale on transformed warm-up rows (cols() == dims()) and freezes it,
  // replacing any earlier fit. A matrix without rows leaves the pipeline unchanged. With
  // standardisation off this does nothing: the scaler is the identity from Create on.
  void FitScaler(const RowMatrix& transformed_warmup);
  bool scaler_fitted() const { return scaler_.frozen(); }
  const Standardizer& scaler() const { return scaler_; }

  // Transformed rows to z-scores in place; scaler_fitted() must be true.
  void Standardize(RowMatrix* rows) const;
  // A standardised row (dims() values) back to the input's units: inverse z-score, then
  // inverse transform. scaler_fitted() must be true.
  std::vector<double> ToInputUnits(const double* standardized_row) const;

  const std::vector<std::string>& columns() const { return columns_; }
  const std::vector<Transform>& transforms() const { return transforms_; }
  std::size_t dims() const { return columns_.size(); }

  // Features, transforms and the scaler's state; FromJson restores it exactly.
  nlohmann::json ToJson() const;
  static Result<FeaturePipeline> FromJson(const nlohmann::json& json);

 private:
  FeaturePipeline(std::vector<std::string> columns, std::vector<Transform> transforms,
                  Standardizer scaler);

  std::vector<std::string> columns_;
  std::vector<Transform> transforms_;
  Standardizer scaler_;
};

}  // namespace seston
