#include "ingest/ndjson_parser.h"

#include <charconv>
#include <nlohmann/json.hpp>
#include <utility>

#include "ingest/field_text.h"

namespace seston {
namespace {

using nlohmann::json;

constexpr std::string_view kCloseKey = "close_sample";
constexpr std::string_view kCloseVolumeKey = "volume_ml";

RowRejection BadRecord(std::uint64_t line, std::string detail) {
  return {line, RejectReason::kBadRecord, std::move(detail)};
}

RowRejection MissingField(std::uint64_t line, std::string_view field) {
  return BadRecord(line, "field \"" + std::string(field) + "\" is missing");
}

RowRejection WrongType(std::uint64_t line, std::string_view field, std::string_view expected,
                       const json& value) {
  return BadRecord(line, "field \"" + std::string(field) + "\" must be " + std::string(expected) +
                             ", got " + value.type_name() + " " + value.dump());
}

// The text of a JSON number or string, for the shared field readers; nullopt for other
// types. Numbers are written into `buffer` in their shortest round-trip form.
std::optional<std::string_view> ScalarText(const json& value, char (&buffer)[32]) {
  if (value.is_string()) return std::string_view(value.get_ref<const std::string&>());
  if (!value.is_number()) return std::nullopt;
  std::to_chars_result written{};
  if (value.is_number_unsigned()) {
    written = std::to_chars(buffer, buffer + sizeof buffer, value.get<std::uint64_t>());
  } else if (value.is_number_integer()) {
    written = std::to_chars(buffer, buffer + sizeof buffer, value.get<std::int64_t>());
  } else {
    written = std::to_chars(buffer, buffer + sizeof buffer, value.get<double>());
  }
  return std::string_view(buffer, static_cast<std::size_t>(written.ptr - buffer));
}

}  // namespace

NdjsonParser::NdjsonParser(const InputOptions& input, std::vector<std::string> feature_columns)
    : input_(input), feature_columns_(std::move(feature_columns)) {}

Result<NdjsonParser> NdjsonParser::Create(const InputOptions& input,
                                          std::vector<std::string> feature_columns) {
  SESTON_RETURN_IF_ERROR(CheckColumnNames(input, feature_columns).WithContext("ndjson parser"));
  return NdjsonParser(input, std::move(feature_columns));
}

ParsedLine NdjsonParser::Parse(std::string_view line, std::uint64_t line_number) const {
  if (line.ends_with('\n')) line.remove_suffix(1);
  if (line.ends_with('\r')) line.remove_suffix(1);
  if (line.size() > input_.max_line_bytes) {
    return RowRejection{line_number, RejectReason::kLineTooLong,
                        "record is " + std::to_string(line.size()) +
                            " bytes, longer than the limit of " +
                            std::to_string(input_.max_line_bytes) + " (input.max_line_bytes)"};
  }
  json record;
  try {
    record = json::parse(line);
  } catch (const json::exception& error) {
    return BadRecord(line_number, std::string("not valid JSON: ") + error.what());
  }
  if (!record.is_object()) {
    return BadRecord(line_number, std::string("expected a JSON object, got ") + record.type_name());
  }
  RowRejection rejection;
  char buffer[32];

  if (const auto close = record.find(kCloseKey); close != record.end()) {
    if (!close->is_string() || close->get_ref<const std::string&>().empty()) {
      return WrongType(line_number, kCloseKey, "a non-empty sample id string", *close);
    }
    const auto volume = record.find(kCloseVolumeKey);
    if (volume == record.end()) return MissingField(line_number, kCloseVolumeKey);
    const std::optional<std::string_view> text = ScalarText(*volume, buffer);
    if (!text) return WrongType(line_number, kCloseVolumeKey, "a number of mL", *volume);
    NdjsonSampleClose closed{close->get<std::string>(), 0.0};
    if (!ReadVolume(kCloseVolumeKey, *text, line_number, &closed.volume_ml, &rejection)) {
      return rejection;
    }
    return closed;
  }

  NdjsonParticle particle;
  const auto time = record.find(input_.time_column);
  if (time == record.end()) return MissingField(line_number, input_.time_column);
  const std::optional<std::string_view> time_text = ScalarText(*time, buffer);
  if (!time_text) {
    return WrongType(line_number, input_.time_column,
                     "epoch seconds (number) or an ISO 8601 string", *time);
  }
  if (!ReadEventTime(input_.time_column, *time_text, line_number, &particle.time_seconds,
                     &rejection)) {
    return rejection;
  }

  particle.values.resize(feature_columns_.size());
  for (std::size_t d = 0; d < feature_columns_.size(); ++d) {
    const std::string& column = feature_columns_[d];
    const auto value = record.find(column);
    if (value == record.end()) return MissingField(line_number, column);
    if (value->is_number()) {
      // Always finite: JSON has no NaN or Inf, and the parser refuses numbers that
      // overflow a double (out_of_range.406, reported above as not valid JSON).
      particle.values[d] = value->get<double>();
    } else if (value->is_string()) {
      if (!ReadFeatureValue(column, value->get_ref<const std::string&>(), line_number,
                            &particle.values[d], &rejection)) {
        return rejection;
      }
    } else {
      return WrongType(line_number, column, "a number or a numeric string", *value);
    }
  }

  if (!input_.volume_column.empty()) {
    if (const auto volume = record.find(input_.volume_column); volume != record.end()) {
      const std::optional<std::string_view> text = ScalarText(*volume, buffer);
      if (!text) return WrongType(line_number, input_.volume_column, "a number of mL", *volume);
      double volume_ml = 0.0;
      if (!ReadVolume(input_.volume_column, *text, line_number, &volume_ml, &rejection)) {
        return rejection;
      }
      particle.volume_ml = volume_ml;
    }
  }

  if (!input_.sample_column.empty()) {
    const auto sample = record.find(input_.sample_column);
    if (sample == record.end()) return MissingField(line_number, input_.sample_column);
    if (!sample->is_string() || sample->get_ref<const std::string&>().empty()) {
      return WrongType(line_number, input_.sample_column, "a non-empty sample id string", *sample);
    }
    particle.sample = sample->get<std::string>();
  }
  return particle;
}

}  // namespace seston
