// CsvReader: one input sample file (CSV text) to a ParticleBatch and its rejected rows.
//
// The file format (ours; the column names are set in InputOptions):
//   * a header row naming the columns, then one row per particle; fields separated by
//     InputOptions::delimiter (default ','); lines end in LF or CRLF; a UTF-8 byte-order
//     mark before the header is skipped; spaces and tabs around names and values are
//     ignored; blank lines are skipped wherever they are;
//   * a field may be double-quoted, with "" standing for one quote inside it
//     ("12,5" or "say ""hi"""); a quoted field may not contain a line break;
//   * the time column holds epoch seconds or ISO 8601 UTC (base/time_format.h);
//   * the sample column (if InputOptions::sample_column is not empty) holds the sample
//     id; with an empty sample_column the whole file is one sample named after the
//     file's stem ("/drop/S0042.csv" → "S0042");
//   * the volume column, if the header has it, gives the analysed volume of the row's
//     sample in mL on every row; the first valid value of each sample is kept. Without
//     the column SampleInfo::volume_ml stays nullopt and the caller applies
//     InputOptions::default_volume_ml;
//   * other columns are ignored.
//
// Errors: a file whose header is unusable (empty file, binary content, a configured
// column missing, a column named twice, header longer than max_line_bytes) gives an
// InvalidArgument Status naming the file and the problem — the caller quarantines it.
// A bad row gives one RowRejection (the first problem found, checked in this order:
// line length, field count, time, features, volume, sample id) and the file goes on.
// Line numbers are 1-based physical lines of the file, the header included.
// An empty sample id is rejected with kBadRecord.
//
// Speed: an unquoted row whose feature fields are plain decimals ([-]digits[.digits],
// at most 15 digits — what instruments write) is read in one pass, each feature value
// straight from the bytes; any other row is split into string_views (a copy only for a
// quoted field holding "") and each field read on its own (std::from_chars for the
// numbers the fast decimal reader leaves), with the same values and rejections.
// Consecutive rows of one sample reuse its index without a hash lookup.
//
// Thread safety: a CsvReader is immutable after Create; Parse may run concurrently.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"
#include "ingest/input_options.h"
#include "ingest/particle_batch.h"

namespace seston {

// Where the configured columns sit in one file's header (0-based field positions).
struct CsvLayout {
  std::uint64_t header_line = 1;      // 1-based line of the header row
  std::vector<std::string> header;    // column names as read, trimmed
  std::size_t time = 0;               // position of the time column
  std::optional<std::size_t> sample;  // nullopt: the file is one sample
  std::optional<std::size_t> volume;  // nullopt: the file has no volume column
  std::vector<std::size_t> features;  // one per feature column, in feature order
};

struct ParsedFile {
  ParticleBatch batch;                   // accepted rows; batch.source is the source name
  std::vector<RowRejection> rejections;  // in line order
  std::uint64_t data_rows = 0;           // non-blank lines after the header
  CsvLayout layout;                      // the resolved columns, for diagnostics
};

class CsvReader {
 public:
  // `feature_columns` (at least one, distinct, in the model's dimension order) become
  // ParticleBatch::values' columns. InvalidArgument for the names CheckColumnNames
  // (ingest/field_text.h) refuses, or a delimiter that is '"' or a line break.
  static Result<CsvReader> Create(const InputOptions& input,
                                  std::vector<std::string> feature_columns);

  // Parses a whole file's bytes. `source_name` (usually the path) goes into
  // batch.source and error messages, and names the sample when sample_column is empty.
  Result<ParsedFile> Parse(std::string_view source_name, std::string_view bytes) const;

  // Resolves the configured columns against one header row (`header_line` without its
  // line ending); the error Status names the file and every missing column and lists
  // the columns the header has.
  Result<CsvLayout> ResolveHeader(std::string_view source_name, std::uint64_t line_number,
                                  std::string_view header_line) const;

  const InputOptions& options() const { return input_; }
  const std::vector<std::string>& feature_columns() const { return feature_columns_; }

 private:
  CsvReader(const InputOptions& input, std::vector<std::string> feature_columns);

  InputOptions input_;
  std::vector<std::string> feature_columns_;
};

}  // namespace seston
