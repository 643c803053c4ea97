// Query strings of API requests: splitting, percent-decoding, and the values they carry.
//
// Hand-written: Boost 1.74 has no URL library (Boost.URL came in 1.81), and the grammar
// needed here is small. Decoding follows RFC 3986: "%41" -> "A"; "+" stays a plus sign
// (it is not form encoding), so an ISO 8601 offset such as "+00:00" may be sent as is.
// Thread safety: pure functions.
#pragma once

#include <map>
#include <string>
#include <string_view>

#include "base/status.h"

namespace seston {

// "%2B" -> "+". InvalidArgument for a "%" not followed by two hex digits.
Result<std::string> PercentDecode(std::string_view text);

// Escapes every byte outside RFC 3986's unreserved set (ALPHA DIGIT - . _ ~):
// "2026-12-02T03:04:05+00:00" -> "2026-12-02T03%3A04%3A05%2B00%3A00".
std::string PercentEncode(std::string_view text);

// "a=1&b=x%20y" -> {a: "1", b: "x y"}; names and values are decoded. Empty pieces
// ("a=1&&b=2") are skipped. InvalidArgument for a name without "=value", an empty name
// or value, a bad escape, or a name given twice.
Result<std::map<std::string, std::string, std::less<>>> ParseQuery(std::string_view query);

// A positive duration in seconds: a decimal number with an optional unit suffix s, m, h
// or d ("3600", "90m", "1.5h", "2d"). InvalidArgument for anything else, zero, negative
// or non-finite values; the message says what is accepted.
Result<double> ParseDurationSeconds(std::string_view text);

}  // namespace seston
