// Fuzz target: CsvReader::Parse on arbitrary bytes.
//
// The first input byte chooses the reader's options (delimiter, whether the file is one
// sample, a short or the default line limit) so that one corpus covers the variants a
// config can set; the rest is the file. Beyond "no crash, no sanitiser report", each
// run checks the promises of csv_reader.h and particle_batch.h: every non-blank data
// line is accepted or rejected exactly once, rejections are in line order, the batch's
// columns agree in size, every sample index is valid and every accepted value is finite.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "fuzz/fuzz_check.h"
#include "ingest/csv_reader.h"

namespace {

seston::InputOptions OptionsFor(std::uint8_t selector) {
  static constexpr char kDelimiters[] = {',', ';', '\t', '|'};
  seston::InputOptions input;
  input.delimiter = kDelimiters[selector & 3];
  if (selector & 4) input.sample_column = "";
  if (selector & 8) input.max_line_bytes = 64;
  return input;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  const std::uint8_t selector = data[0];
  const std::string_view bytes(reinterpret_cast<const char*>(data) + 1, size - 1);

  auto reader = seston::CsvReader::Create(OptionsFor(selector), {"area_um2", "aspect_ratio"});
  FUZZ_CHECK(reader.ok());
  auto parsed = reader->Parse("/drop/S0001.csv", bytes);
  if (!parsed.ok()) {
    FUZZ_CHECK(!parsed.status().message().empty());
    return 0;
  }

  const seston::ParticleBatch& batch = parsed->batch;
  FUZZ_CHECK(batch.dims == 2);
  FUZZ_CHECK(batch.size() + parsed->rejections.size() == parsed->data_rows);
  FUZZ_CHECK(batch.time_seconds.size() == batch.size());
  FUZZ_CHECK(batch.sample_index.size() == batch.size());
  FUZZ_CHECK(batch.values.size() == batch.size() * batch.dims);
  for (std::size_t i = 0; i < batch.size(); ++i) {
    FUZZ_CHECK(batch.sample_index[i] < batch.samples.size());
    FUZZ_CHECK(batch.line[i] > parsed->layout.header_line);
    FUZZ_CHECK(std::isfinite(batch.time_seconds[i]));
    FUZZ_CHECK(i == 0 || batch.line[i] > batch.line[i - 1]);
  }
  for (double value : batch.values) FUZZ_CHECK(std::isfinite(value));
  for (const seston::SampleInfo& sample : batch.samples) {
    FUZZ_CHECK(!sample.id.empty());
    FUZZ_CHECK(!sample.volume_ml || (std::isfinite(*sample.volume_ml) && *sample.volume_ml > 0));
  }
  for (std::size_t i = 0; i < parsed->rejections.size(); ++i) {
    FUZZ_CHECK(parsed->rejections[i].line > parsed->layout.header_line);
    FUZZ_CHECK(i == 0 || parsed->rejections[i].line > parsed->rejections[i - 1].line);
  }
  return 0;
}
