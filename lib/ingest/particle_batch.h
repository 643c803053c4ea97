// ParticleBatch: accepted particle rows from one source, in columnar form.
//
// The ingest stage turns a CSV file or a stream of NDJSON records into ParticleBatch
// values and a list of RowRejection. Every later stage reads batches; none sees text.
//
// Units: time_seconds is event time in seconds since 1970-01-01T00:00:00Z (UTC);
// values are the configured feature columns in the input's own units (µm², ratio, ...),
// before any transform; SampleInfo::volume_ml is the analysed volume of the sample in mL.
//
// Invariants: line, time_seconds and sample_index have size() entries; values has
// size() * dims entries, row-major (row i is values[i*dims ... i*dims+dims-1]); every
// sample_index is < samples.size(). Rows are in the order they were read.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

namespace seston {

struct SampleInfo {
  std::string id;                    // sample id as written by the instrument
  std::optional<double> volume_ml;   // analysed volume, mL; nullopt: use the default
};

struct ParticleBatch {
  std::string source;                     // file path, or "socket:<peer>"
  std::size_t dims = 0;                   // number of feature columns
  std::vector<std::uint64_t> line;        // 1-based line (or record) number in source
  std::vector<double> time_seconds;       // event time, s since epoch UTC
  std::vector<std::uint32_t> sample_index;
  std::vector<double> values;             // row-major size() x dims, input units
  std::vector<SampleInfo> samples;

  std::size_t size() const { return line.size(); }
  const double* row(std::size_t i) const { return values.data() + i * dims; }
  void Clear() {
    line.clear();
    time_seconds.clear();
    sample_index.clear();
    values.clear();
    samples.clear();
  }
};

// Why a row was not accepted. The names (RejectReasonName) appear in summaries,
// metrics labels and the counts API, so they are stable.
enum class RejectReason {
  kFieldCount,      // wrong number of fields                 "field_count"
  kNotANumber,      // a feature is not a number               "not_a_number"
  kNotFinite,       // NaN or ±Inf                             "not_finite"
  kOutOfDomain,     // outside the feature transform's domain  "out_of_domain"
  kBadTime,         // time missing or unparseable             "bad_time"
  kBadVolume,       // volume not a positive finite number     "bad_volume"
  kLineTooLong,     // longer than the line limit              "line_too_long"
  kBadRecord,       // NDJSON: not an object, bad field types  "bad_record"
};

const char* RejectReasonName(RejectReason reason);
inline constexpr int kRejectReasonCount = 8;

struct RowRejection {
  std::uint64_t line = 0;   // 1-based
  RejectReason reason = RejectReason::kFieldCount;
  std::string detail;       // e.g. "column area_um2: \"abc\" is not a number"
};

}  // namespace seston
