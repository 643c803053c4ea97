// Kernel benchmarks (Google Benchmark): figures, not pass/fail; not run in CI.
//
//   BM_ParseCsv          CsvReader::Parse of seston-sim sample files (5 feature columns,
//                        ISO 8601 times): bytes/s and rows/s ("items").
//   BM_AssignNearest     nearest-centre assignment of 65536 points, d ∈ {4, 8, 16} ×
//                        k ∈ {8, 16, 32, 64}, for each method (0 auto, 1 loop, 2 matrix
//                        product): particles/s.
//   BM_MiniBatchUpdate   MiniBatchKMeans::ProcessBatch (decay, assign, novelty test,
//                        centre update) in batches of 256, d = 8, k = 16: particles/s.
//
// Data are seeded, so two runs measure the same work. Run:
//   build/tools/bench/seston-kernels-bench --benchmark_min_time=0.2
#include <benchmark/benchmark.h>

#include <random>
#include <string>
#include <vector>

#include "base/matrix.h"
#include "ingest/csv_reader.h"
#include "model/mini_batch_kmeans.h"
#include "model/nearest_centre.h"
#include "seston-sim/sample_generator.h"

namespace seston {
namespace {

// Centres on a seeded random grid, points drawn around them with unit sd.
RowMatrix SeededCentres(int k, int d, std::uint64_t seed) {
  std::mt19937_64 engine(seed);
  std::uniform_real_distribution<double> uniform(-4, 4);
  RowMatrix centres(k, d);
  for (int j = 0; j < k; ++j) {
    for (int t = 0; t < d; ++t) centres(j, t) = uniform(engine);
  }
  return centres;
}

RowMatrix SeededPoints(const RowMatrix& centres, int n, std::uint64_t seed) {
  std::mt19937_64 engine(seed);
  std::normal_distribution<double> normal(0, 1);
  std::uniform_int_distribution<int> pick(0, static_cast<int>(centres.rows()) - 1);
  RowMatrix points(n, centres.cols());
  for (int i = 0; i < n; ++i) {
    const int j = pick(engine);
    for (Eigen::Index t = 0; t < centres.cols(); ++t) points(i, t) = centres(j, t) + normal(engine);
  }
  return points;
}

void BM_ParseCsv(benchmark::State& state) {
  sim::SimulatorOptions options;
  options.concentration_scale = 10;  // about 8600 rows per file, as in the replay benchmark
  auto generator = sim::SampleGenerator::Create(options);
  if (!generator.ok()) {
    state.SkipWithError(generator.status().message().c_str());
    return;
  }
  std::vector<std::string> files;
  std::uint64_t rows_per_round = 0, bytes_per_round = 0;
  for (std::uint64_t n = 0; n < 8; ++n) {
    const sim::SimulatedSample sample = generator->Generate(n);
    files.push_back(sim::FormatCsv(sample, options.groups, false));
    rows_per_round += sample.particles.size();
    bytes_per_round += files.back().size();
  }
  InputOptions input;
  auto reader = CsvReader::Create(
      input, {"area_um2", "esd_um", "aspect_ratio", "perimeter_um", "grey_level"});
  if (!reader.ok()) {
    state.SkipWithError(reader.status().message().c_str());
    return;
  }
  for (auto _ : state) {
    for (const auto& text : files) {
      auto parsed = reader->Parse("bench.csv", text);
      benchmark::DoNotOptimize(parsed);
    }
  }
  state.SetBytesProcessed(static_cast<std::int64_t>(state.iterations() * bytes_per_round));
  state.SetItemsProcessed(static_cast<std::int64_t>(state.iterations() * rows_per_round));
}
BENCHMARK(BM_ParseCsv)->Unit(benchmark::kMillisecond);

void BM_AssignNearest(benchmark::State& state) {
  const int d = static_cast<int>(state.range(0));
  const int k = static_cast<int>(state.range(1));
  const auto method = static_cast<NearestCentreMethod>(state.range(2));
  const RowMatrix centres = SeededCentres(k, d, 7);
  const RowMatrix points = SeededPoints(centres, 65536, 11);
  std::vector<int> index;
  std::vector<double> squared;
  for (auto _ : state) {
    AssignNearest(points, centres, &index, &squared, method);
    benchmark::DoNotOptimize(index.data());
    benchmark::ClobberMemory();
  }
  state.SetItemsProcessed(state.iterations() * points.rows());
}
BENCHMARK(BM_AssignNearest)
    ->ArgNames({"d", "k", "method"})
    ->ArgsProduct({{4, 8, 16}, {8, 16, 32, 64}, {0, 1, 2}})
    ->Unit(benchmark::kMillisecond);

void BM_MiniBatchUpdate(benchmark::State& state) {
  constexpr int kDims = 8, kClusters = 16, kBatch = 256;
  const RowMatrix centres = SeededCentres(kClusters, kDims, 3);
  const RowMatrix warmup = SeededPoints(centres, 20000, 5);
  const RowMatrix stream = SeededPoints(centres, 65536, 9);
  ModelOptions options;
  options.k = kClusters;
  options.restarts = 2;
  options.half_life_particles = 50000;
  auto created = MiniBatchKMeans::Create(options, warmup, 0);
  if (!created.ok()) {
    state.SkipWithError(created.status().message().c_str());
    return;
  }
  std::vector<RowMatrix> batches;
  for (Eigen::Index start = 0; start < stream.rows(); start += kBatch) {
    batches.emplace_back(stream.middleRows(start, kBatch));
  }
  std::vector<std::uint32_t> ids;
  std::vector<double> distances;
  double seconds = 0;
  for (auto _ : state) {
    state.PauseTiming();
    MiniBatchKMeans model = *created;  // every round starts from the same model
    state.ResumeTiming();
    for (const auto& batch : batches) {
      model.ProcessBatch(batch, seconds, seconds + 1, &ids, &distances);
      seconds += 1;
    }
    benchmark::DoNotOptimize(ids.data());
  }
  state.SetItemsProcessed(state.iterations() * stream.rows());
}
BENCHMARK(BM_MiniBatchUpdate)->Unit(benchmark::kMillisecond);

}  // namespace
}  // namespace seston

BENCHMARK_MAIN();
