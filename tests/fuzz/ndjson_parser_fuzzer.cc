// Fuzz target: NdjsonParser::Parse on every line of arbitrary bytes.
//
// The first input byte chooses the options (named samples or not, a short or the
// default line limit); the rest is split at LF as the socket server splits a stream.
// Beyond "no crash, no sanitiser report", each line must give a particle with one
// finite value per feature and a finite time, a sample close with a non-empty id and a
// positive finite volume, or a rejection carrying the line number it was given.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string_view>
#include <variant>

#include "fuzz/fuzz_check.h"
#include "ingest/ndjson_parser.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  seston::InputOptions input;
  if (data[0] & 1) input.sample_column = "";
  if (data[0] & 2) input.max_line_bytes = 64;
  auto parser = seston::NdjsonParser::Create(input, {"area_um2", "aspect_ratio"});
  FUZZ_CHECK(parser.ok());

  std::string_view rest(reinterpret_cast<const char*>(data) + 1, size - 1);
  std::uint64_t line_number = 0;
  while (!rest.empty()) {
    const std::size_t end = rest.find('\n');
    const std::string_view line = rest.substr(0, end);
    rest = end == std::string_view::npos ? std::string_view() : rest.substr(end + 1);
    ++line_number;

    const seston::ParsedLine parsed = parser->Parse(line, line_number);
    if (const auto* particle = std::get_if<seston::NdjsonParticle>(&parsed)) {
      FUZZ_CHECK(particle->values.size() == 2);
      FUZZ_CHECK(std::isfinite(particle->time_seconds));
      for (double value : particle->values) FUZZ_CHECK(std::isfinite(value));
      FUZZ_CHECK(input.sample_column.empty() ? particle->sample.empty()
                                             : !particle->sample.empty());
      FUZZ_CHECK(!particle->volume_ml ||
                 (std::isfinite(*particle->volume_ml) && *particle->volume_ml > 0));
    } else if (const auto* close = std::get_if<seston::NdjsonSampleClose>(&parsed)) {
      FUZZ_CHECK(!close->sample.empty());
      FUZZ_CHECK(std::isfinite(close->volume_ml) && close->volume_ml > 0);
    } else {
      FUZZ_CHECK(std::get<seston::RowRejection>(parsed).line == line_number);
    }
  }
  return 0;
}
