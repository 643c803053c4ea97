#include "ingest/field_text.h"

#include <charconv>
#include <cmath>
#include <cstdint>
#include <set>
#include <string>
#include <system_error>

#include "base/exact_decimal.h"
#include "base/time_format.h"

namespace seston {
namespace {

enum class NumberText { kNumber, kNotANumber, kOutOfRange };

NumberText ParseNumber(std::string_view text, double* value) {
  if (text.size() > 1 && text[0] == '+' && text[1] != '-' && text[1] != '+') {
    text.remove_prefix(1);
  }
  if (text.empty()) return NumberText::kNotANumber;
  const char* end = text.data() + text.size();
  if (ReadPlainDecimal(text.data(), end, value) == end) return NumberText::kNumber;
  auto [stop, error] = std::from_chars(text.data(), end, *value);
  if (stop != end) return NumberText::kNotANumber;
  if (error == std::errc::result_out_of_range) return NumberText::kOutOfRange;
  return error == std::errc() ? NumberText::kNumber : NumberText::kNotANumber;
}

void Reject(std::uint64_t line, RejectReason reason, std::string_view column, std::string_view text,
            std::string_view problem, RowRejection* rejection) {
  rejection->line = line;
  rejection->reason = reason;
  rejection->detail = "column ";
  rejection->detail += column;
  rejection->detail += ": \"";
  rejection->detail += text;
  rejection->detail += "\" ";
  rejection->detail += problem;
}

}  // namespace

// Clinger's exact fast path (Clinger 1990, "How to read floating point numbers
// accurately"): text of the form [-]digits[.digits] with at most 15 digits is m / 10^f
// with m < 10^15 < 2^53 and f <= 15, both exact doubles, so one division gives the
// correctly rounded value — the one std::from_chars gives, bit for bit. Hand-written
// because from_chars cost about 25 ns a field, most of a row's parse; instrument
// values are short plain decimals.
const char* ReadPlainDecimal(const char* begin, const char* end, double* value) {
  const char* p = begin;
  const bool negative = p < end && *p == '-';
  if (negative) ++p;
  std::uint64_t mantissa = 0;
  const char* const digits = p;
  for (; p < end && *p >= '0' && *p <= '9'; ++p) {
    mantissa = mantissa * 10 + static_cast<std::uint64_t>(*p - '0');
  }
  const std::ptrdiff_t integer_digits = p - digits;
  std::ptrdiff_t fraction_digits = 0;
  if (p < end && *p == '.') {
    const char* const fraction = ++p;
    for (; p < end && *p >= '0' && *p <= '9'; ++p) {
      mantissa = mantissa * 10 + static_cast<std::uint64_t>(*p - '0');
    }
    fraction_digits = p - fraction;
    if (fraction_digits == 0) return nullptr;
  }
  if (integer_digits == 0 || integer_digits + fraction_digits > 15) return nullptr;
  const double magnitude = static_cast<double>(mantissa) / kExactPowersOfTen[fraction_digits];
  *value = negative ? -magnitude : magnitude;
  return p;
}

Status CheckColumnNames(const InputOptions& input,
                        const std::vector<std::string>& feature_columns) {
  if (feature_columns.empty()) {
    return Status::InvalidArgument("no feature columns; name at least one");
  }
  if (input.time_column.empty()) {
    return Status::InvalidArgument("input.time_column is empty; name the time column");
  }
  if (input.max_line_bytes == 0) {
    return Status::InvalidArgument("input.max_line_bytes must be at least 1");
  }
  std::set<std::string> names = {input.time_column};
  for (const std::string* role : {&input.sample_column, &input.volume_column}) {
    if (!role->empty() && !names.insert(*role).second) {
      return Status::InvalidArgument("column \"" + *role +
                                     "\" is configured for two roles (time, sample, volume)");
    }
  }
  for (const std::string& column : feature_columns) {
    if (column.empty()) return Status::InvalidArgument("a feature column name is empty");
    if (!names.insert(column).second) {
      return Status::InvalidArgument("feature column \"" + column +
                                     "\" is named twice or is also the time, sample or volume "
                                     "column");
    }
  }
  return Status::Ok();
}

std::string_view TrimBlanks(std::string_view text) {
  std::size_t begin = 0;
  std::size_t end = text.size();
  while (begin < end && (text[begin] == ' ' || text[begin] == '\t')) ++begin;
  while (end > begin && (text[end - 1] == ' ' || text[end - 1] == '\t')) --end;
  return text.substr(begin, end - begin);
}

bool ReadFeatureValue(std::string_view column, std::string_view text, std::uint64_t line,
                      double* value, RowRejection* rejection) {
  const std::string_view trimmed = TrimBlanks(text);
  switch (ParseNumber(trimmed, value)) {
    case NumberText::kNumber:
      if (std::isfinite(*value)) return true;
      Reject(line, RejectReason::kNotFinite, column, trimmed, "is not a finite number", rejection);
      return false;
    case NumberText::kOutOfRange:
      Reject(line, RejectReason::kNotFinite, column, trimmed,
             "is out of the range of a double-precision number", rejection);
      return false;
    case NumberText::kNotANumber:
      break;
  }
  Reject(line, RejectReason::kNotANumber, column, trimmed,
         "is not a number; expected a decimal such as 12.5 or 1.2e3", rejection);
  return false;
}

bool ReadEventTime(std::string_view column, std::string_view text, std::uint64_t line,
                   double* seconds, RowRejection* rejection, IsoTimeMemo* memo) {
  const std::string_view trimmed = TrimBlanks(text);
  if (std::optional<double> parsed = ParseEventTime(trimmed, memo)) {
    *seconds = *parsed;
    return true;
  }
  Reject(line, RejectReason::kBadTime, column, trimmed,
         "is not a time; expected epoch seconds or ISO 8601 UTC such as 2026-12-02T03:04:05Z",
         rejection);
  return false;
}

bool ReadVolume(std::string_view column, std::string_view text, std::uint64_t line,
                double* volume_ml, RowRejection* rejection) {
  const std::string_view trimmed = TrimBlanks(text);
  if (ParseNumber(trimmed, volume_ml) == NumberText::kNumber && std::isfinite(*volume_ml) &&
      *volume_ml > 0.0) {
    return true;
  }
  Reject(line, RejectReason::kBadVolume, column, trimmed,
         "is not a volume; expected a positive number of mL", rejection);
  return false;
}

namespace {

// Length of the well-formed UTF-8 sequence at text[i], or 0 when it is ill-formed.
// Hand-written: the standard library has no UTF-8 validator, and the rules fit in a page.
std::size_t Utf8SequenceLength(std::string_view text, std::size_t i) {
  const auto byte = [&](std::size_t k) { return static_cast<unsigned char>(text[k]); };
  const unsigned char lead = byte(i);
  if (lead < 0x80) return 1;
  std::size_t length = 0;
  unsigned char low = 0x80, high = 0xBF;  // range of the first continuation byte
  if (lead >= 0xC2 && lead <= 0xDF) {
    length = 2;
  } else if (lead >= 0xE0 && lead <= 0xEF) {
    length = 3;
    if (lead == 0xE0) low = 0xA0;   // no overlongs
    if (lead == 0xED) high = 0x9F;  // no surrogates
  } else if (lead >= 0xF0 && lead <= 0xF4) {
    length = 4;
    if (lead == 0xF0) low = 0x90;
    if (lead == 0xF4) high = 0x8F;  // at most U+10FFFF
  } else {
    return 0;
  }
  if (i + length > text.size()) return 0;
  if (byte(i + 1) < low || byte(i + 1) > high) return 0;
  for (std::size_t k = 2; k < length; ++k) {
    if (byte(i + k) < 0x80 || byte(i + k) > 0xBF) return 0;
  }
  return length;
}

}  // namespace

bool IsWellFormedUtf8(std::string_view text) {
  for (std::size_t i = 0; i < text.size();) {
    std::size_t length = Utf8SequenceLength(text, i);
    if (length == 0) return false;
    i += length;
  }
  return true;
}

std::string EscapeIllFormedUtf8(std::string_view text) {
  static constexpr char kHex[] = "0123456789ABCDEF";
  std::string out;
  for (std::size_t i = 0; i < text.size();) {
    std::size_t length = Utf8SequenceLength(text, i);
    if (length == 0) {
      const auto value = static_cast<unsigned char>(text[i]);
      out += "\\x";
      out += kHex[value >> 4];
      out += kHex[value & 0xF];
      ++i;
    } else {
      out.append(text.substr(i, length));
      i += length;
    }
  }
  return out;
}

}  // namespace seston
