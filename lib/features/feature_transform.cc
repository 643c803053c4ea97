#include "features/feature_transform.h"

#include <cmath>

namespace seston {

const char* TransformName(Transform transform) {
  switch (transform) {
    case Transform::kNone:
      return "none";
    case Transform::kLog10:
      return "log10";
    case Transform::kLn:
      return "ln";
    case Transform::kSqrt:
      return "sqrt";
  }
  return "unknown";
}

std::optional<Transform> TransformFromName(std::string_view name) {
  for (Transform t : {Transform::kNone, Transform::kLog10, Transform::kLn, Transform::kSqrt}) {
    if (name == TransformName(t)) return t;
  }
  return std::nullopt;
}

bool InTransformDomain(Transform transform, double x) {
  switch (transform) {
    case Transform::kNone:
      return true;
    case Transform::kLog10:
    case Transform::kLn:
      return x > 0.0;
    case Transform::kSqrt:
      return x >= 0.0;
  }
  return false;
}

const char* TransformDomainText(Transform transform) {
  switch (transform) {
    case Transform::kNone:
      return "accepts any value";
    case Transform::kLog10:
    case Transform::kLn:
      return "needs a value > 0";
    case Transform::kSqrt:
      return "needs a value >= 0";
  }
  return "is unknown";
}

bool ApplyTransform(Transform transform, double x, double* y) {
  if (!InTransformDomain(transform, x)) return false;
  switch (transform) {
    case Transform::kNone:
      *y = x;
      break;
    case Transform::kLog10:
      *y = std::log10(x);
      break;
    case Transform::kLn:
      *y = std::log(x);
      break;
    case Transform::kSqrt:
      *y = std::sqrt(x);
      break;
  }
  return true;
}

double InverseTransform(Transform transform, double y) {
  switch (transform) {
    case Transform::kNone:
      return y;
    case Transform::kLog10:
      return std::pow(10.0, y);
    case Transform::kLn:
      return std::exp(y);
    case Transform::kSqrt:
      return y * y;
  }
  return y;
}

}  // namespace seston
