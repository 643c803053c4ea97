// Per-value feature transforms and their inverses (Transform from feature_options.h).
//
//   none   y = x          domain: any value
//   log10  y = log10(x)   domain: x > 0
//   ln     y = ln(x)      domain: x > 0
//   sqrt   y = sqrt(x)    domain: x >= 0
//
// Size features (area, volume) span orders of magnitude, so clustering them on a log
// scale is common practice. Values and results are in the input's units (µm², ratio...)
// and the transformed scale respectively. Pure functions; any thread.
#pragma once

#include <optional>
#include <string_view>

#include "features/feature_options.h"

namespace seston {

// Parses "none", "log10", "ln", "sqrt" (the names TransformName gives); nullopt otherwise.
std::optional<Transform> TransformFromName(std::string_view name);

// True when `x` is inside the domain of `transform` (see the table above).
bool InTransformDomain(Transform transform, double x);

// What the domain asks for, for messages: "needs a value > 0", "needs a value >= 0",
// "accepts any value".
const char* TransformDomainText(Transform transform);

// Writes transform(x) to *y and returns true, or returns false (leaving *y alone) when
// `x` is outside the domain; TransformDomainText says why.
bool ApplyTransform(Transform transform, double x, double* y);

// The inverse: none y, log10 10^y, ln e^y, sqrt y² (y is expected to be >= 0, as every
// value sqrt gives is).
double InverseTransform(Transform transform, double y);

}  // namespace seston
