#include "ingest/particle_batch.h"

#include <gtest/gtest.h>

#include <set>
#include <string>

namespace seston {
namespace {

// The names are a stable interface (summaries, metrics labels): the list in
// particle_batch.h.
TEST(RejectReason, NamesAreTheDocumentedStableLabels) {
  EXPECT_STREQ(RejectReasonName(RejectReason::kFieldCount), "field_count");
  EXPECT_STREQ(RejectReasonName(RejectReason::kNotANumber), "not_a_number");
  EXPECT_STREQ(RejectReasonName(RejectReason::kNotFinite), "not_finite");
  EXPECT_STREQ(RejectReasonName(RejectReason::kOutOfDomain), "out_of_domain");
  EXPECT_STREQ(RejectReasonName(RejectReason::kBadTime), "bad_time");
  EXPECT_STREQ(RejectReasonName(RejectReason::kBadVolume), "bad_volume");
  EXPECT_STREQ(RejectReasonName(RejectReason::kLineTooLong), "line_too_long");
  EXPECT_STREQ(RejectReasonName(RejectReason::kBadRecord), "bad_record");
}

TEST(RejectReason, EveryReasonHasADistinctName) {
  std::set<std::string> names;
  for (int i = 0; i < kRejectReasonCount; ++i) {
    names.insert(RejectReasonName(static_cast<RejectReason>(i)));
  }
  EXPECT_EQ(names.size(), static_cast<std::size_t>(kRejectReasonCount));
  EXPECT_EQ(names.count("unknown"), 0u);
}

}  // namespace
}  // namespace seston
