// NdjsonParser: one line of the socket protocol to a particle, a sample close, or a
// rejection.
//
// Protocol (ours): newline-delimited JSON, UTF-8, one JSON object per line, LF or CRLF.
//
//   Particle — an object with the same field names as the CSV columns (InputOptions and
//   the feature columns), for example with the default names:
//     {"time":"2026-12-02T03:04:05.250Z","sample":"S0042","volume_ml":5.0,
//      "area_um2":310.5,"aspect_ratio":"0.82"}
//     * time: a JSON number of epoch seconds, or a string holding epoch seconds or
//       ISO 8601 UTC (base/time_format.h); required;
//     * sample: a string, required when InputOptions::sample_column is not empty (with
//       an empty sample_column it is not read and NdjsonParticle::sample is empty: the
//       caller names the sample);
//     * volume: optional; the analysed volume of the sample in mL, a positive JSON
//       number or numeric string;
//     * each feature: required, a JSON number or a string holding a decimal number;
//     * any other field is ignored.
//   Sample close — an object with the key "close_sample" (whatever else it holds):
//     {"close_sample":"S0042","volume_ml":5.0}
//     says that sample S0042 is complete and that its analysed volume was 5.0 mL. Both
//     keys are fixed names of the protocol (not the configured column names); both are
//     required, close_sample a non-empty string, volume_ml a positive number or numeric
//     string.
//
// Rejections (RowRejection::line is the record number the caller passes):
//   kLineTooLong  the line is longer than InputOptions::max_line_bytes;
//   kBadRecord    not valid JSON (including a JSON number beyond the range of a double),
//                 not an object, a required field missing, a field of
//                 the wrong JSON type (e.g. a boolean feature), an empty sample id;
//   kNotANumber / kNotFinite / kBadTime / kBadVolume  as for CSV (ingest/field_text.h).
// Blank lines are the caller's to skip; given one, Parse returns kBadRecord.
//
// Thread safety: immutable after Create; Parse may run concurrently.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <variant>
#include <vector>

#include "base/status.h"
#include "ingest/input_options.h"
#include "ingest/particle_batch.h"

namespace seston {

struct NdjsonParticle {
  double time_seconds = 0.0;        // s since epoch UTC
  std::string sample;               // empty when sample_column is empty
  std::optional<double> volume_ml;  // mL, when the record carries it
  std::vector<double> values;       // one per feature column, input units
};

struct NdjsonSampleClose {
  std::string sample;
  double volume_ml = 0.0;  // analysed volume of the whole sample, mL
};

using ParsedLine = std::variant<NdjsonParticle, NdjsonSampleClose, RowRejection>;

class NdjsonParser {
 public:
  // The same checks on the column names as CsvReader::Create.
  static Result<NdjsonParser> Create(const InputOptions& input,
                                     std::vector<std::string> feature_columns);

  // `line` without or with its line ending; `line_number` 1-based, copied into
  // rejections.
  ParsedLine Parse(std::string_view line, std::uint64_t line_number) const;

  const std::vector<std::string>& feature_columns() const { return feature_columns_; }

 private:
  NdjsonParser(const InputOptions& input, std::vector<std::string> feature_columns);

  InputOptions input_;
  std::vector<std::string> feature_columns_;
};

}  // namespace seston
