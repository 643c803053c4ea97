#include "base/time_format.h"

#include <algorithm>
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>

#include "base/exact_decimal.h"

namespace seston {
namespace {

// Reads exactly `width` digits at text[pos...]; advances pos.
bool ReadDigits(std::string_view text, std::size_t& pos, int width, int& out) {
  if (pos + static_cast<std::size_t>(width) > text.size()) return false;
  int value = 0;
  for (int i = 0; i < width; ++i) {
    char c = text[pos + static_cast<std::size_t>(i)];
    if (c < '0' || c > '9') return false;
    value = value * 10 + (c - '0');
  }
  pos += static_cast<std::size_t>(width);
  out = value;
  return true;
}

bool Expect(std::string_view text, std::size_t& pos, char c) {
  if (pos >= text.size() || text[pos] != c) return false;
  ++pos;
  return true;
}

// The fraction (s) and zone offset (s east of UTC) after the seconds, from text[pos] to
// the end; false when the rest is not a fraction and a zone.
bool ParseIsoTail(std::string_view text, std::size_t pos, double* fraction,
                  int* offset_seconds);

std::optional<double> ParseIso8601(std::string_view text, IsoTimeMemo* memo) {
  if (memo != nullptr && memo->valid && text.size() >= IsoTimeMemo::kPrefixLength &&
      text.compare(0, IsoTimeMemo::kPrefixLength,
                   std::string_view(memo->prefix, IsoTimeMemo::kPrefixLength)) == 0) {
    double fraction = 0.0;
    int offset_seconds = 0;
    if (!ParseIsoTail(text, IsoTimeMemo::kPrefixLength, &fraction, &offset_seconds)) {
      return std::nullopt;
    }
    return memo->whole_seconds + fraction - offset_seconds;
  }
  std::size_t pos = 0;
  int year = 0, month = 0, day = 0, hour = 0, minute = 0, second = 0;
  if (!ReadDigits(text, pos, 4, year) || !Expect(text, pos, '-') ||
      !ReadDigits(text, pos, 2, month) || !Expect(text, pos, '-') ||
      !ReadDigits(text, pos, 2, day)) {
    return std::nullopt;
  }
  if (pos < text.size()) {
    if (text[pos] != 'T' && text[pos] != ' ' && text[pos] != 't') return std::nullopt;
    ++pos;
    if (!ReadDigits(text, pos, 2, hour) || !Expect(text, pos, ':') ||
        !ReadDigits(text, pos, 2, minute)) {
      return std::nullopt;
    }
    if (pos < text.size() && text[pos] == ':') {
      ++pos;
      if (!ReadDigits(text, pos, 2, second)) return std::nullopt;
    }
  }
  const std::size_t clock_end = pos;
  double fraction = 0.0;
  int offset_seconds = 0;
  if (!ParseIsoTail(text, pos, &fraction, &offset_seconds)) return std::nullopt;
  if (year < 1970 || month < 1 || month > 12 || hour > 23 || minute > 59 || second > 60) {
    return std::nullopt;
  }
  using namespace std::chrono;
  year_month_day date{std::chrono::year{year}, std::chrono::month{static_cast<unsigned>(month)},
                      std::chrono::day{static_cast<unsigned>(day)}};
  if (!date.ok()) return std::nullopt;
  double days = static_cast<double>(sys_days{date}.time_since_epoch().count());
  const double whole_seconds = days * 86400.0 + hour * 3600.0 + minute * 60.0 + second;
  if (memo != nullptr && clock_end == IsoTimeMemo::kPrefixLength) {
    std::copy_n(text.data(), IsoTimeMemo::kPrefixLength, memo->prefix);
    memo->whole_seconds = whole_seconds;
    memo->valid = true;
  }
  return whole_seconds + fraction - offset_seconds;
}

bool ParseIsoTail(std::string_view text, std::size_t pos, double* fraction_out,
                  int* offset_out) {
  double fraction = 0.0;
  if (pos < text.size() && (text[pos] == '.' || text[pos] == ',')) {
    ++pos;
    // The first nine digits (nanoseconds) as one integer and one division: a row's time
    // is parsed for every particle, and a division per digit was most of its cost.
    // Further digits are read and dropped.
    const std::size_t start = pos;
    std::int64_t digits = 0;
    while (pos < text.size() && text[pos] >= '0' && text[pos] <= '9') {
      if (pos - start < 9) digits = digits * 10 + (text[pos] - '0');
      ++pos;
    }
    if (pos == start) return false;
    fraction =
        static_cast<double>(digits) / kExactPowersOfTen[std::min<std::size_t>(pos - start, 9)];
  }
  int offset_seconds = 0;
  if (pos < text.size()) {
    char c = text[pos];
    if (c == 'Z' || c == 'z') {
      ++pos;
    } else if (c == '+' || c == '-') {
      ++pos;
      int off_hour = 0, off_minute = 0;
      if (!ReadDigits(text, pos, 2, off_hour)) return false;
      if (pos < text.size() && text[pos] == ':') ++pos;
      if (pos < text.size() && !ReadDigits(text, pos, 2, off_minute)) return false;
      if (off_hour > 23 || off_minute > 59) return false;
      offset_seconds = (off_hour * 3600 + off_minute * 60) * (c == '+' ? 1 : -1);
    }
  }
  if (pos != text.size()) return false;
  *fraction_out = fraction;
  *offset_out = offset_seconds;
  return true;
}

struct Civil {
  int year, month, day, hour, minute, second, millis;
};

Civil ToCivil(double seconds) {
  using namespace std::chrono;
  double whole = std::floor(seconds);
  int millis = static_cast<int>(std::lround((seconds - whole) * 1000.0));
  if (millis == 1000) {
    millis = 0;
    whole += 1.0;
  }
  auto total = static_cast<long long>(whole);
  long long days = total >= 0 ? total / 86400 : -((-total + 86399) / 86400);
  long long rest = total - days * 86400;
  year_month_day date{sys_days{std::chrono::days{days}}};
  return {static_cast<int>(date.year()),
          static_cast<int>(static_cast<unsigned>(date.month())),
          static_cast<int>(static_cast<unsigned>(date.day())),
          static_cast<int>(rest / 3600),
          static_cast<int>((rest % 3600) / 60),
          static_cast<int>(rest % 60),
          millis};
}

}  // namespace

std::optional<double> ParseEventTime(std::string_view text, IsoTimeMemo* memo) {
  if (text.empty()) return std::nullopt;
  // Epoch seconds: the whole field is one number.
  const auto epoch_seconds = [text]() -> std::optional<double> {
    double value = 0;
    auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
    if (error != std::errc() || end != text.data() + text.size()) return std::nullopt;
    return value;
  };
  // No text is both, so the order only saves work: text shaped like a date (a '-' as
  // the fifth character, which in a number can only be an exponent's sign) is tried as
  // ISO 8601 first.
  const bool looks_like_date = text.size() > 4 && text[4] == '-';
  std::optional<double> parsed = looks_like_date ? ParseIso8601(text, memo) : epoch_seconds();
  if (!parsed) parsed = looks_like_date ? epoch_seconds() : ParseIso8601(text, memo);
  constexpr double kLatest = 253402300799.0;  // 9999-12-31T23:59:59Z
  if (!parsed || !std::isfinite(*parsed) || *parsed < 0 || *parsed > kLatest) return std::nullopt;
  return parsed;
}

std::string FormatIso8601(double seconds, bool millis) {
  Civil c = ToCivil(seconds);
  char buffer[40];
  if (millis) {
    std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02dT%02d:%02d:%02d.%03dZ", c.year, c.month,
                  c.day, c.hour, c.minute, c.second, c.millis);
  } else {
    std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02dT%02d:%02d:%02dZ", c.year, c.month,
                  c.day, c.hour, c.minute, c.second);
  }
  return buffer;
}

std::string FormatDay(double seconds) {
  Civil c = ToCivil(seconds);
  char buffer[16];
  std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02d", c.year, c.month, c.day);
  return buffer;
}

std::string FormatCompact(double seconds) {
  Civil c = ToCivil(seconds);
  char buffer[24];
  std::snprintf(buffer, sizeof buffer, "%04d%02d%02dT%02d%02d%02dZ", c.year, c.month, c.day,
                c.hour, c.minute, c.second);
  return buffer;
}

}  // namespace seston
