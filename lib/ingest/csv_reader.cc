#include "ingest/csv_reader.h"

#include <cstring>
#include <filesystem>
#include <functional>
#include <unordered_map>
#include <utility>

#include "ingest/field_text.h"

namespace seston {
namespace {

constexpr std::string_view kByteOrderMark = "\xEF\xBB\xBF";

// The next line at *cursor (without LF or CRLF); advances *cursor past its line feed.
std::string_view NextLine(const char** cursor, const char* end) {
  const char* start = *cursor;
  const void* found = std::memchr(start, '\n', static_cast<std::size_t>(end - start));
  const char* stop = found ? static_cast<const char*>(found) : end;
  *cursor = found ? stop + 1 : end;
  if (stop > start && stop[-1] == '\r') --stop;
  return {start, static_cast<std::size_t>(stop - start)};
}

bool IsBlank(std::string_view line) { return TrimBlanks(line).empty(); }

// Splits `line` into `fields` (cleared first). Unquoted fields are views into `line`; a
// quoted field is the view between its quotes, or, when it holds "" escapes, a view into
// `scratch`, which is reserved to the line's size up front so that it never reallocates
// while views into it are alive. False when a quote is not closed or text follows a
// closing quote.
bool SplitFields(std::string_view line, char delimiter, std::vector<std::string_view>* fields,
                 std::string* scratch) {
  fields->clear();
  // Unquoted lines (nearly all) in one pass over the bytes: with fields a few bytes long,
  // a memchr call per field and one for the quote cost more than this loop. A quote
  // sends the line to the full parser below.
  std::size_t start = 0;
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    if (line[i] == delimiter) {
      fields->push_back(line.substr(start, i - start));
      start = i + 1;
    } else if (line[i] == '"') {
      quoted = true;
      break;
    }
  }
  if (!quoted) {
    fields->push_back(line.substr(start));
    return true;
  }
  fields->clear();
  scratch->clear();
  scratch->reserve(line.size());
  std::size_t pos = 0;
  while (true) {
    std::size_t first = pos;
    while (first < line.size() && (line[first] == ' ' || line[first] == '\t')) ++first;
    if (first < line.size() && line[first] == '"') {
      const std::size_t content = first + 1;
      std::size_t close = content;
      bool escaped = false;
      while (true) {
        close = line.find('"', close);
        if (close == std::string_view::npos) return false;
        if (close + 1 < line.size() && line[close + 1] == '"') {
          escaped = true;
          close += 2;
          continue;
        }
        break;
      }
      std::string_view value = line.substr(content, close - content);
      if (escaped) {
        const std::size_t begin = scratch->size();
        for (std::size_t i = 0; i < value.size(); ++i) {
          scratch->push_back(value[i]);
          if (value[i] == '"') ++i;  // the second quote of ""
        }
        value = std::string_view(scratch->data() + begin, scratch->size() - begin);
      }
      fields->push_back(value);
      std::size_t after = close + 1;
      while (after < line.size() && (line[after] == ' ' || line[after] == '\t')) ++after;
      if (after == line.size()) return true;
      if (line[after] != delimiter) return false;
      pos = after + 1;
    } else {
      const std::size_t stop = line.find(delimiter, pos);
      if (stop == std::string_view::npos) {
        fields->push_back(line.substr(pos));
        return true;
      }
      fields->push_back(line.substr(pos, stop - pos));
      pos = stop + 1;
    }
  }
}

// The one-pass row path. Instruments write unquoted rows of plain decimals; for such a
// row this reads each feature value straight from the bytes with ReadPlainDecimal and
// finds the other fields, instead of splitting the line into views and reading each
// view again. `feature_at[c]` is the feature index read from field c, or -1; `row`
// receives the feature values and `fields` (sized to the header's field count) the
// views of the other fields. False — and the caller takes the row through SplitFields
// and ReadFeatureValue, which give the same values and every rejection — when a field
// holds a quote, a feature field is not [-]digits[.digits] of at most 15 digits with
// no blanks, or the row has more or fewer fields than the header. Requires a delimiter
// that cannot occur in such a number (see PlainRowsPossible).
bool ReadPlainRow(std::string_view line, char delimiter, const std::vector<int>& feature_at,
                  double* row, std::vector<std::string_view>* fields) {
  const char* p = line.data();
  const char* const end = p + line.size();
  const std::size_t last = feature_at.size() - 1;
  fields->resize(feature_at.size());
  for (std::size_t c = 0;; ++c) {
    const char* stop = p;
    if (feature_at[c] >= 0) {
      stop = ReadPlainDecimal(p, end, &row[feature_at[c]]);
      if (stop == nullptr) return false;
    } else {
      while (stop < end && *stop != delimiter) {
        if (*stop == '"') return false;
        ++stop;
      }
      (*fields)[c] = std::string_view(p, static_cast<std::size_t>(stop - p));
    }
    if (c == last) return stop == end;
    if (stop == end || *stop != delimiter) return false;
    p = stop + 1;
  }
}

// ReadPlainRow's requirement on the delimiter.
bool PlainRowsPossible(char delimiter) {
  return delimiter != '-' && delimiter != '.' && (delimiter < '0' || delimiter > '9');
}

// Position of the first control byte other than tab, or npos.
std::size_t FindControlByte(std::string_view text) {
  for (std::size_t i = 0; i < text.size(); ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if ((c < 0x20 && c != '\t') || c == 0x7F) return i;
  }
  return std::string_view::npos;
}

std::string QuotedList(const std::vector<std::string>& names) {
  std::string out;
  for (const std::string& name : names) {
    if (!out.empty()) out += ", ";
    out += '"' + name + '"';
  }
  return out;
}

struct TransparentHash {
  using is_transparent = void;
  std::size_t operator()(std::string_view text) const {
    return std::hash<std::string_view>{}(text);
  }
};

// Sample ids to their index in batch.samples. Consecutive rows usually belong to one
// sample, so the last id is compared first and the hash map is the fallback.
class SampleInterner {
 public:
  explicit SampleInterner(ParticleBatch* batch) : batch_(batch) {}

  // True when `id` is the id of the row before, which was checked when it was first seen.
  bool IsLast(std::string_view id) const { return has_last_ && batch_->samples[last_].id == id; }

  std::uint32_t Intern(std::string_view id) {
    if (IsLast(id)) return last_;
    auto found = index_.find(id);
    if (found == index_.end()) {
      const auto next = static_cast<std::uint32_t>(batch_->samples.size());
      batch_->samples.push_back({std::string(id), std::nullopt});
      found = index_.emplace(std::string(id), next).first;
    }
    last_ = found->second;
    has_last_ = true;
    return last_;
  }

 private:
  ParticleBatch* batch_;
  std::unordered_map<std::string, std::uint32_t, TransparentHash, std::equal_to<>> index_;
  std::uint32_t last_ = 0;
  bool has_last_ = false;
};

}  // namespace

CsvReader::CsvReader(const InputOptions& input, std::vector<std::string> feature_columns)
    : input_(input), feature_columns_(std::move(feature_columns)) {}

Result<CsvReader> CsvReader::Create(const InputOptions& input,
                                    std::vector<std::string> feature_columns) {
  SESTON_RETURN_IF_ERROR(CheckColumnNames(input, feature_columns).WithContext("csv reader"));
  if (input.delimiter == '"' || input.delimiter == '\n' || input.delimiter == '\r') {
    return Status::InvalidArgument(
        "csv reader: input.delimiter may not be a quote or a line break; use ',', ';' or a tab");
  }
  return CsvReader(input, std::move(feature_columns));
}

Result<CsvLayout> CsvReader::ResolveHeader(std::string_view source_name, std::uint64_t line_number,
                                           std::string_view header_line) const {
  const std::string where = std::string(source_name) + ": line " + std::to_string(line_number);
  if (header_line.size() > input_.max_line_bytes) {
    return Status::InvalidArgument(where + ": the header is " + std::to_string(header_line.size()) +
                                   " bytes, longer than the limit of " +
                                   std::to_string(input_.max_line_bytes) +
                                   " (input.max_line_bytes); expected a CSV header row");
  }
  if (const std::size_t control = FindControlByte(header_line); control != std::string_view::npos) {
    return Status::InvalidArgument(
        where + ": the header holds control byte " +
        std::to_string(static_cast<unsigned char>(header_line[control])) + " at byte " +
        std::to_string(control + 1) +
        ", so this looks like binary content; expected a CSV header row of column names");
  }
  std::vector<std::string_view> fields;
  std::string scratch;
  if (!SplitFields(header_line, input_.delimiter, &fields, &scratch)) {
    return Status::InvalidArgument(where +
                                   ": the header has an unclosed quote or text after a closing "
                                   "quote; expected column names separated by '" +
                                   std::string(1, input_.delimiter) + "'");
  }
  CsvLayout layout;
  layout.header_line = line_number;
  std::unordered_map<std::string, std::size_t> position;
  for (std::size_t i = 0; i < fields.size(); ++i) {
    std::string name(TrimBlanks(fields[i]));
    layout.header.push_back(name);
    if (name.empty()) continue;
    const auto [found, inserted] = position.emplace(name, i);
    if (!inserted) {
      return Status::InvalidArgument(where + ": column \"" + name + "\" appears twice (fields " +
                                     std::to_string(found->second + 1) + " and " +
                                     std::to_string(i + 1) + "); every column name must be unique");
    }
  }
  std::vector<std::string> missing;
  auto locate = [&](const std::string& name) -> std::optional<std::size_t> {
    auto found = position.find(name);
    if (found != position.end()) return found->second;
    return std::nullopt;
  };
  if (auto time = locate(input_.time_column)) {
    layout.time = *time;
  } else {
    missing.push_back(input_.time_column);
  }
  if (!input_.sample_column.empty()) {
    layout.sample = locate(input_.sample_column);
    if (!layout.sample) missing.push_back(input_.sample_column);
  }
  if (!input_.volume_column.empty()) layout.volume = locate(input_.volume_column);
  for (const std::string& column : feature_columns_) {
    if (auto feature = locate(column)) {
      layout.features.push_back(*feature);
    } else {
      missing.push_back(column);
    }
  }
  if (!missing.empty()) {
    return Status::InvalidArgument(
        where + ": the header lacks column" + (missing.size() > 1 ? "s " : " ") +
        QuotedList(missing) + "; it has " + QuotedList(layout.header) +
        "; the configuration asks for time column \"" + input_.time_column + "\"" +
        (input_.sample_column.empty() ? "" : ", sample column \"" + input_.sample_column + "\"") +
        " and feature columns " + QuotedList(feature_columns_));
  }
  return layout;
}

Result<ParsedFile> CsvReader::Parse(std::string_view source_name, std::string_view bytes) const {
  if (bytes.starts_with(kByteOrderMark)) bytes.remove_prefix(kByteOrderMark.size());
  const char* cursor = bytes.data();
  const char* const end = bytes.data() + bytes.size();
  std::uint64_t line_number = 0;
  std::string_view header;
  bool found_header = false;
  while (cursor < end && !found_header) {
    header = NextLine(&cursor, end);
    ++line_number;
    found_header = !IsBlank(header);
  }
  if (!found_header) {
    return Status::InvalidArgument(std::string(source_name) +
                                   ": the file is empty; expected a header row naming the "
                                   "columns, then one row per particle");
  }

  ParsedFile parsed;
  SESTON_ASSIGN_OR_RETURN(parsed.layout, ResolveHeader(source_name, line_number, header));
  const CsvLayout& layout = parsed.layout;
  ParticleBatch& batch = parsed.batch;
  batch.source = std::string(source_name);
  batch.dims = feature_columns_.size();
  SampleInterner samples(&batch);
  if (!layout.sample) {
    samples.Intern(EscapeIllFormedUtf8(std::filesystem::path(source_name).stem().string()));
  }

  const std::size_t field_count = layout.header.size();
  const std::size_t dims = batch.dims;
  std::vector<std::string_view> fields;
  fields.reserve(field_count + 1);
  std::string scratch;
  std::vector<double> row(dims);
  std::vector<int> feature_at(field_count, -1);
  for (std::size_t d = 0; d < dims; ++d) feature_at[layout.features[d]] = static_cast<int>(d);
  const bool plain_rows = PlainRowsPossible(input_.delimiter);
  RowRejection rejection;
  bool reserved = false;
  auto reject = [&](RejectReason reason, std::string detail) {
    parsed.rejections.push_back({line_number, reason, std::move(detail)});
  };

  IsoTimeMemo time_memo;
  std::string_view last_volume_text;  // the last good volume's; empty: none yet
  double last_volume = 0.0;
  while (cursor < end) {
    const char* const line_start = cursor;
    const std::string_view line = NextLine(&cursor, end);
    ++line_number;
    if (line.size() > input_.max_line_bytes) {
      ++parsed.data_rows;
      reject(RejectReason::kLineTooLong,
             "line is " + std::to_string(line.size()) + " bytes, longer than the limit of " +
                 std::to_string(input_.max_line_bytes) + " (input.max_line_bytes)");
      continue;
    }
    if (IsBlank(line)) continue;
    ++parsed.data_rows;
    const bool plain =
        plain_rows && ReadPlainRow(line, input_.delimiter, feature_at, row.data(), &fields);
    if (!plain) {
      if (!SplitFields(line, input_.delimiter, &fields, &scratch)) {
        reject(RejectReason::kFieldCount,
               "a quoted field is not closed, or text follows its closing quote");
        continue;
      }
      if (fields.size() != field_count) {
        reject(RejectReason::kFieldCount, "expected " + std::to_string(field_count) +
                                              " fields as in the header, got " +
                                              std::to_string(fields.size()));
        continue;
      }
    }
    double time = 0.0;
    if (!ReadEventTime(input_.time_column, fields[layout.time], line_number, &time, &rejection,
                       &time_memo)) {
      parsed.rejections.push_back(std::move(rejection));
      continue;
    }
    bool values_ok = true;
    for (std::size_t d = 0; d < dims && values_ok && !plain; ++d) {
      values_ok = ReadFeatureValue(feature_columns_[d], fields[layout.features[d]], line_number,
                                   &row[d], &rejection);
    }
    if (!values_ok) {
      parsed.rejections.push_back(std::move(rejection));
      continue;
    }
    // A sample's volume is repeated on each of its rows: text equal to the last good
    // volume's is that volume, without parsing it again.
    double volume = 0.0;
    if (layout.volume) {
      const std::string_view text = fields[*layout.volume];
      if (!last_volume_text.empty() && text == last_volume_text) {
        volume = last_volume;
      } else if (ReadVolume(input_.volume_column, text, line_number, &volume, &rejection)) {
        last_volume_text = text;  // never empty: an empty field is not a volume
        last_volume = volume;
      } else {
        parsed.rejections.push_back(std::move(rejection));
        continue;
      }
    }
    std::uint32_t sample = 0;
    if (layout.sample) {
      const std::string_view id = TrimBlanks(fields[*layout.sample]);
      if (id.empty()) {
        reject(RejectReason::kBadRecord,
               "column " + input_.sample_column + ": the sample id is empty");
        continue;
      }
      if (!samples.IsLast(id) && !IsWellFormedUtf8(id)) {
        reject(RejectReason::kBadRecord, "column " + input_.sample_column + ": the sample id \"" +
                                             EscapeIllFormedUtf8(id) + "\" is not UTF-8 text");
        continue;
      }
      sample = samples.Intern(id);
    }
    if (layout.volume && !batch.samples[sample].volume_ml) batch.samples[sample].volume_ml = volume;
    if (!reserved) {
      // Sized from the first accepted row (a rejected one may be far shorter than the
      // rest); the vectors still grow if later rows are shorter.
      const auto remaining = static_cast<std::size_t>(end - line_start);
      const std::size_t estimate =
          remaining / (line.size() + 1) + remaining / (8 * (line.size() + 1)) + 1;
      batch.line.reserve(estimate);
      batch.time_seconds.reserve(estimate);
      batch.sample_index.reserve(estimate);
      batch.values.reserve(estimate * dims);
      reserved = true;
    }
    batch.line.push_back(line_number);
    batch.time_seconds.push_back(time);
    batch.sample_index.push_back(sample);
    batch.values.insert(batch.values.end(), row.begin(), row.end());
  }
  return parsed;
}

}  // namespace seston
