#include "ingest/particle_batch.h"

namespace seston {

const char* RejectReasonName(RejectReason reason) {
  switch (reason) {
    case RejectReason::kFieldCount:
      return "field_count";
    case RejectReason::kNotANumber:
      return "not_a_number";
    case RejectReason::kNotFinite:
      return "not_finite";
    case RejectReason::kOutOfDomain:
      return "out_of_domain";
    case RejectReason::kBadTime:
      return "bad_time";
    case RejectReason::kBadVolume:
      return "bad_volume";
    case RejectReason::kLineTooLong:
      return "line_too_long";
    case RejectReason::kBadRecord:
      return "bad_record";
  }
  return "unknown";
}

}  // namespace seston
