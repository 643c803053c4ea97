// Options of the feature stage: which columns are features, their transforms, scaling.
#pragma once

#include <string>
#include <vector>

namespace seston {

enum class Transform { kNone, kLog10, kLn, kSqrt };

// "none", "log10", "ln", "sqrt".
const char* TransformName(Transform transform);

struct FeatureSpec {
  std::string column;  // CSV header / NDJSON field name
  Transform transform = Transform::kNone;
};

struct FeatureOptions {
  std::vector<FeatureSpec> features;  // at least one; order is the model's dimension order
  bool standardize = true;            // z-score with warm-up mean and sd, then frozen
};

}  // namespace seston
