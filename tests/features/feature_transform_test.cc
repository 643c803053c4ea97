#include "features/feature_transform.h"

#include <gtest/gtest.h>

#include <cmath>

namespace seston {
namespace {

constexpr Transform kAllTransforms[] = {Transform::kNone, Transform::kLog10, Transform::kLn,
                                        Transform::kSqrt};

TEST(FeatureTransform, NamesRoundTripAndUnknownNameIsRefused) {
  for (Transform t : kAllTransforms) {
    ASSERT_TRUE(TransformFromName(TransformName(t)).has_value());
    EXPECT_EQ(*TransformFromName(TransformName(t)), t);
  }
  EXPECT_STREQ(TransformName(Transform::kLog10), "log10");
  EXPECT_FALSE(TransformFromName("log").has_value());
  EXPECT_FALSE(TransformFromName("").has_value());
}

// log10(1000) = 3, ln(e²) = 2, sqrt(2.25) = 1.5: exact values of the functions.
TEST(FeatureTransform, AppliesTheNamedFunction) {
  double y = 0.0;
  ASSERT_TRUE(ApplyTransform(Transform::kLog10, 1000.0, &y));
  EXPECT_DOUBLE_EQ(y, 3.0);
  ASSERT_TRUE(ApplyTransform(Transform::kLn, std::exp(2.0), &y));
  EXPECT_DOUBLE_EQ(y, 2.0);
  ASSERT_TRUE(ApplyTransform(Transform::kSqrt, 2.25, &y));
  EXPECT_EQ(y, 1.5);
  ASSERT_TRUE(ApplyTransform(Transform::kNone, -7.25, &y));
  EXPECT_EQ(y, -7.25);
}

TEST(FeatureTransform, InverseRoundTripsAcrossOrdersOfMagnitude) {
  for (Transform t : kAllTransforms) {
    for (double x : {1e-6, 0.37, 1.0, 42.5, 3.1e4, 8.8e9}) {
      SCOPED_TRACE(std::string(TransformName(t)) + " " + std::to_string(x));
      double y = 0.0;
      ASSERT_TRUE(ApplyTransform(t, x, &y));
      EXPECT_NEAR(InverseTransform(t, y), x, 4e-15 * x);
    }
  }
}

TEST(FeatureTransform, RefusesValuesOutsideTheDomain) {
  double y = 123.0;
  EXPECT_FALSE(ApplyTransform(Transform::kLog10, 0.0, &y));
  EXPECT_FALSE(ApplyTransform(Transform::kLn, -1.0, &y));
  EXPECT_FALSE(ApplyTransform(Transform::kSqrt, -1e-9, &y));
  EXPECT_EQ(y, 123.0);  // left alone
  EXPECT_STREQ(TransformDomainText(Transform::kLog10), "needs a value > 0");
  EXPECT_STREQ(TransformDomainText(Transform::kSqrt), "needs a value >= 0");
  // The domain edges themselves.
  EXPECT_TRUE(ApplyTransform(Transform::kSqrt, 0.0, &y));
  EXPECT_EQ(y, 0.0);
  EXPECT_TRUE(InTransformDomain(Transform::kLn, 5e-324));
  EXPECT_TRUE(InTransformDomain(Transform::kNone, -1e300));
}

}  // namespace
}  // namespace seston
