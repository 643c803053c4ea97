// Checking the configured column names, and reading one field's text as a feature value, an event
// time or a volume.
//
// Shared by CsvReader and NdjsonParser so that both give the same reasons and the same
// wording for the same bad value. Each Read* function returns true and sets *value, or
// returns false and fills *rejection (line, reason, detail naming the column and quoting
// the text); the rejection path is the only one that allocates.
// Pure functions; any thread.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "base/status.h"
#include "base/time_format.h"
#include "ingest/input_options.h"
#include "ingest/particle_batch.h"

namespace seston {

// InvalidArgument for no feature columns, an empty or repeated name, a feature column
// that is also the time, sample or volume column, an empty time_column, or
// max_line_bytes == 0.
Status CheckColumnNames(const InputOptions& input, const std::vector<std::string>& feature_columns);

// `text` without leading and trailing spaces and tabs.
std::string_view TrimBlanks(std::string_view text);

// True when `text` is well-formed UTF-8 (RFC 3629: no overlongs, no surrogates, at most
// U+10FFFF). Sample ids go into JSON checkpoints and answers, which must be UTF-8.
bool IsWellFormedUtf8(std::string_view text);

// `text` with every byte that is not part of well-formed UTF-8 written as \xNN.
std::string EscapeIllFormedUtf8(std::string_view text);

// A decimal number (std::from_chars general format, optional leading '+', blanks around
// allowed). kNotANumber when the text is not one; kNotFinite for nan, inf or a value out
// of the range of a double.
bool ReadFeatureValue(std::string_view column, std::string_view text, std::uint64_t line,
                      double* value, RowRejection* rejection);

// Reads [-]digits[.digits] with at most 15 digits in all (at least one before the point,
// and one after it if there is a point) from the start of [begin, end): sets *value to
// the double std::from_chars gives for that text, bit for bit, and returns the end of
// the number; nullptr when the text does not start with such a number, or when more
// digits follow the 15th. Anything else ReadFeatureValue accepts — '+', exponents, "5.",
// ".5", long digit strings — is left to it. Used by ReadFeatureValue and by the CSV
// reader's one-pass row path.
const char* ReadPlainDecimal(const char* begin, const char* end, double* value);

// Epoch seconds or ISO 8601 UTC (base/time_format.h); kBadTime otherwise. `memo`
// (optional) is ParseEventTime's.
bool ReadEventTime(std::string_view column, std::string_view text, std::uint64_t line,
                   double* seconds, RowRejection* rejection, IsoTimeMemo* memo = nullptr);

// A positive finite number of mL; kBadVolume otherwise.
bool ReadVolume(std::string_view column, std::string_view text, std::uint64_t line,
                double* volume_ml, RowRejection* rejection);

}  // namespace seston
