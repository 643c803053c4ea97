#include "counts/count_book.h"

#include <gtest/gtest.h>

#include <atomic>
#include <cmath>
#include <mutex>
#include <random>
#include <thread>

namespace seston {
namespace {

constexpr double kDay = 1764633600;  // 2025-12-02T00:00:00Z

CountsOptions Options(double bin_seconds = 60) {
  CountsOptions options;
  options.bin_seconds = bin_seconds;
  return options;
}

CountBook MakeBook(const CountsOptions& options) {
  auto book = CountBook::Create(options);
  EXPECT_TRUE(book.ok()) << book.status().ToString();
  return std::move(book).value();
}

// A sample whose particles all fall in the bin of `first_seconds`.
SampleTally OneBinSample(std::string id, double first_seconds, double volume_ml,
                         std::map<std::uint32_t, std::uint64_t> by_cluster) {
  SampleTally sample;
  sample.sample_id = std::move(id);
  sample.source = sample.sample_id + ".csv";
  sample.first_seconds = first_seconds;
  sample.last_seconds = first_seconds + 1;
  sample.volume_ml = volume_ml;
  sample.by_cluster = by_cluster;
  sample.by_bin[first_seconds].by_cluster = by_cluster;
  return sample;
}

const ClusterWindowCount* Find(const CountsWindow& window, std::uint32_t id) {
  for (const auto& cluster : window.clusters) {
    if (cluster.cluster_id == id) return &cluster;
  }
  return nullptr;
}

TEST(CountBook, ConcentrationIsParticlesCountedOverVolumeAnalysed) {
  // Common practice (shared/reference/README.md, facts of the trade): concentration of a
  // class = particles counted / volume of water analysed, per mL.
  CountBook book = MakeBook(Options());
  ASSERT_TRUE(
      book.AddSample(OneBinSample("skerry-b-0001", kDay + 5, 3.0, {{1, 150}, {2, 30}, {0, 6}}))
          .ok());
  CountsWindow window = book.Query(kDay, kDay + 60);
  EXPECT_EQ(window.bins, 1u);
  EXPECT_EQ(window.volume_ml, 3.0);
  ASSERT_EQ(window.clusters.size(), 2u);
  EXPECT_EQ(Find(window, 1)->count, 150u);
  EXPECT_EQ(Find(window, 1)->concentration_per_ml, 50.0);
  EXPECT_EQ(Find(window, 2)->concentration_per_ml, 10.0);
  EXPECT_EQ(window.unclassified, 6u);
  EXPECT_EQ(window.unclassified_per_ml, 2.0);
  EXPECT_EQ(window.total, 186u);
  EXPECT_EQ(window.total_per_ml, 62.0);
}

TEST(CountBook, SampleSpanningTwoBinsSplitsVolumeByParticleShare) {
  CountBook book = MakeBook(Options());
  SampleTally sample;
  sample.sample_id = "skerry-b-0002";
  sample.first_seconds = kDay + 40;
  sample.last_seconds = kDay + 75;
  sample.volume_ml = 3.0;
  sample.by_cluster = {{1, 25}, {0, 5}};
  sample.by_bin[kDay].by_cluster = {{1, 15}, {0, 5}};  // 20 of the 30 particles
  sample.by_bin[kDay + 60].by_cluster = {{1, 10}};     // 10 of the 30
  ASSERT_TRUE(book.AddSample(sample).ok());

  std::vector<BinCounts> bins = book.Bins(kDay, kDay + 120);
  ASSERT_EQ(bins.size(), 2u);
  EXPECT_EQ(bins[0].volume_ml, 2.0);  // 3 mL * 20 / 30
  EXPECT_EQ(bins[1].volume_ml, 1.0);  // 3 mL * 10 / 30
  // A bin's concentration is its particles over its volume share ...
  EXPECT_EQ(Find(book.Query(kDay, kDay + 60), 1)->concentration_per_ml, 7.5);         // 15 / 2
  EXPECT_EQ(Find(book.Query(kDay + 60, kDay + 120), 1)->concentration_per_ml, 10.0);  // 10 / 1
  // ... and over both bins it is the sample's own: 25 / 3.
  CountsWindow both = book.Query(kDay, kDay + 120);
  EXPECT_EQ(both.volume_ml, 3.0);
  EXPECT_DOUBLE_EQ(Find(both, 1)->concentration_per_ml, 25.0 / 3.0);
}

TEST(CountBook, SampleWithoutAcceptedParticlesPutsVolumeAndRejectsInFirstBin) {
  CountBook book = MakeBook(Options());
  SampleTally sample;
  sample.sample_id = "skerry-b-0003";
  sample.first_seconds = kDay + 130;
  sample.last_seconds = kDay + 200;
  sample.volume_ml = 1.5;
  sample.rejected = 7;
  sample.by_bin[kDay + 180].rejected = 2;  // the other 5 had no usable time
  ASSERT_TRUE(book.AddSample(sample).ok());
  std::vector<BinCounts> bins = book.Bins(kDay, kDay + 600);
  ASSERT_EQ(bins.size(), 2u);
  EXPECT_EQ(bins[0].start_seconds, kDay + 120);
  EXPECT_EQ(bins[0].volume_ml, 1.5);
  EXPECT_EQ(bins[0].rejected, 5u);
  EXPECT_EQ(bins[1].start_seconds, kDay + 180);
  EXPECT_EQ(bins[1].volume_ml, 0.0);
  EXPECT_EQ(bins[1].rejected, 2u);
  EXPECT_EQ(book.Query(kDay, kDay + 600).rejected, 7u);
}

TEST(CountBook, WindowSumsExactlyTheBinsStartingInsideIt) {
  CountBook book = MakeBook(Options());
  ASSERT_TRUE(book.AddSample(OneBinSample("a", kDay + 10, 2.0, {{1, 10}, {2, 4}})).ok());
  ASSERT_TRUE(book.AddSample(OneBinSample("b", kDay + 70, 1.0, {{1, 3}, {0, 1}})).ok());
  ASSERT_TRUE(book.AddSample(OneBinSample("c", kDay + 130, 4.0, {{2, 8}})).ok());

  CountsWindow first_two = book.Query(kDay, kDay + 120);  // [00:00, 00:02): bins a and b
  EXPECT_EQ(first_two.bins, 2u);
  EXPECT_EQ(first_two.from_seconds, kDay);
  EXPECT_EQ(first_two.to_seconds, kDay + 120);
  EXPECT_EQ(Find(first_two, 1)->count, 13u);
  EXPECT_EQ(Find(first_two, 2)->count, 4u);
  EXPECT_EQ(first_two.unclassified, 1u);
  EXPECT_EQ(first_two.total, 18u);
  EXPECT_EQ(first_two.volume_ml, 3.0);
  EXPECT_EQ(Find(first_two, 2)->concentration_per_ml, 4.0 / 3.0);

  // A bin starting exactly at `to` is outside; one starting at `from` inside.
  CountsWindow last = book.Query(kDay + 60, kDay + 180);
  EXPECT_EQ(last.bins, 2u);
  EXPECT_EQ(last.total, 12u);
  EXPECT_EQ(last.from_seconds, kDay + 60);
  EXPECT_EQ(last.to_seconds, kDay + 180);

  CountsWindow empty = book.Query(kDay + 600, kDay + 900);
  EXPECT_EQ(empty.bins, 0u);
  EXPECT_TRUE(std::isnan(empty.from_seconds));
  EXPECT_TRUE(std::isnan(empty.total_per_ml));
}

TEST(CountBook, ZeroVolumeGivesNanConcentrationNotInfinity) {
  CountBook book = MakeBook(Options());
  ASSERT_TRUE(book.AddSample(OneBinSample("dry", kDay, 0.0, {{1, 4}})).ok());
  CountsWindow window = book.Query(kDay, kDay + 60);
  EXPECT_EQ(Find(window, 1)->count, 4u);
  EXPECT_TRUE(std::isnan(Find(window, 1)->concentration_per_ml));
}

TEST(CountBook, KeepsAtMostRetainedBinsDroppingTheOldest) {
  CountsOptions options = Options();
  options.retained_bins = 5;
  options.retained_samples = 3;
  CountBook book = MakeBook(options);
  for (int i = 0; i < 8; ++i) {
    ASSERT_TRUE(book.AddSample(OneBinSample("s" + std::to_string(i), kDay + 60 * i, 1.0,
                                            {{1, static_cast<std::uint64_t>(i + 1)}}))
                    .ok());
  }
  EXPECT_EQ(book.bin_count(), 5u);
  CountsWindow all = book.Query(0, 1e10);
  EXPECT_EQ(all.from_seconds, kDay + 60 * 3);  // bins 0, 1, 2 dropped
  EXPECT_EQ(all.total, 4u + 5 + 6 + 7 + 8);
  ASSERT_EQ(book.samples().size(), 3u);
  EXPECT_EQ(book.samples().front()->sample_id, "s5");
  EXPECT_EQ(book.samples().back()->sample_id, "s7");
}

TEST(CountBook, RetentionHoldsAcrossChunksOfSparseBins) {
  CountsOptions options = Options(1);
  options.retained_bins = 300;
  CountBook book = MakeBook(options);
  for (int i = 0; i < 1000; ++i) {  // every third second: bins spread over 12 chunks
    ASSERT_TRUE(book.AddSample(OneBinSample("s", kDay + 3 * i, 1.0, {{1, 1}})).ok());
  }
  EXPECT_EQ(book.bin_count(), 300u);
  EXPECT_EQ(book.Query(0, 1e10).total, 300u);
  EXPECT_EQ(book.Query(0, 1e10).from_seconds, kDay + 3 * 700);
}

TEST(CountBook, SnapshotIsUnaffectedByLaterAdditions) {
  CountBook book = MakeBook(Options());
  ASSERT_TRUE(book.AddSample(OneBinSample("a", kDay, 2.0, {{1, 10}})).ok());
  std::shared_ptr<const CountBookSnapshot> snapshot = book.Snapshot();
  ASSERT_TRUE(book.AddSample(OneBinSample("b", kDay + 1, 2.0, {{1, 6}, {3, 2}})).ok());
  ASSERT_TRUE(book.AddSample(OneBinSample("c", kDay + 3600, 1.0, {{2, 5}})).ok());

  CountsWindow then = snapshot->Query(0, 1e10);
  EXPECT_EQ(then.total, 10u);
  EXPECT_EQ(then.volume_ml, 2.0);
  EXPECT_EQ(then.clusters.size(), 1u);
  EXPECT_EQ(snapshot->samples().size(), 1u);
  EXPECT_EQ(snapshot->latest_event_seconds(), kDay + 1);
  CountsWindow now = book.Query(0, 1e10);
  EXPECT_EQ(now.total, 23u);
  EXPECT_EQ(now.volume_ml, 5.0);
  EXPECT_EQ(book.samples().size(), 3u);
}

TEST(CountBook, SnapshotsReadOnAnotherThreadKeepTheirTotalsWhileTheBookMovesOn) {
  CountsOptions options = Options(1);
  options.retained_bins = 600;  // retention drops bins that older snapshots still hold
  CountBook book = MakeBook(options);
  std::vector<std::pair<std::shared_ptr<const CountBookSnapshot>, std::uint64_t>> taken;
  std::atomic<bool> done{false};
  std::atomic<int> mismatches{0};
  std::mutex mutex;
  std::thread reader([&] {
    while (!done.load()) {
      std::vector<std::pair<std::shared_ptr<const CountBookSnapshot>, std::uint64_t>> copy;
      {
        std::lock_guard lock(mutex);
        copy = taken;
      }
      for (const auto& [snapshot, total] : copy) {
        if (snapshot->Query(0, 1e10).total != total) ++mismatches;
      }
    }
  });
  for (int i = 0; i < 2000; ++i) {
    // Every tenth sample lands in an old bin, so shared chunks are copied before changes.
    double when = kDay + (i % 10 == 0 ? i / 2 : i);
    ASSERT_TRUE(book.AddSample(OneBinSample("s", when, 1.0, {{1, 1}, {2, 2}})).ok());
    if (i % 50 == 0) {
      std::lock_guard lock(mutex);
      taken.emplace_back(book.Snapshot(), book.Query(0, 1e10).total);
    }
  }
  done = true;
  reader.join();
  EXPECT_EQ(mismatches.load(), 0);
  EXPECT_EQ(taken.back().first->Query(0, 1e10).total, taken.back().second);
}

TEST(CountBook, RefusesTallyWhoseBinsDoNotAddUpAndChangesNothing) {
  CountBook book = MakeBook(Options());
  SampleTally sample = OneBinSample("bad", kDay, 1.0, {{1, 10}});
  sample.by_cluster[1] = 11;  // one particle in no bin
  Status status = book.AddSample(sample);
  EXPECT_EQ(status.code(), StatusCode::kInvalidArgument);
  EXPECT_NE(status.message().find("\"bad\""), std::string::npos) << status.message();
  EXPECT_EQ(book.bin_count(), 0u);
  EXPECT_TRUE(book.samples().empty());
  EXPECT_TRUE(std::isnan(book.latest_event_seconds()));

  SampleTally negative = OneBinSample("neg", kDay, -1.0, {{1, 1}});
  EXPECT_EQ(book.AddSample(negative).code(), StatusCode::kInvalidArgument);
}

TEST(CountBook, HandsOverBinsOnceClosedAndLateDataAsASecondRow) {
  CountsOptions options = Options();
  options.bin_close_lag_seconds = 120;
  CountBook book = MakeBook(options);
  ASSERT_TRUE(book.AddSample(OneBinSample("a", kDay + 10, 1.0, {{1, 4}})).ok());
  EXPECT_TRUE(book.TakeClosedBins().empty());  // latest is 00:00:11, bin closes at 00:03
  ASSERT_TRUE(book.AddSample(OneBinSample("b", kDay + 180, 1.0, {{1, 2}})).ok());
  std::vector<BinCounts> closed = book.TakeClosedBins();
  ASSERT_EQ(closed.size(), 1u);
  EXPECT_EQ(closed[0].start_seconds, kDay);
  EXPECT_EQ(closed[0].accepted(), 4u);
  EXPECT_TRUE(book.TakeClosedBins().empty());  // handed over once

  ASSERT_TRUE(book.AddSample(OneBinSample("late", kDay + 20, 0.5, {{2, 3}})).ok());
  closed = book.TakeClosedBins();
  ASSERT_EQ(closed.size(), 1u);  // only the late part of bin 00:00
  EXPECT_EQ(closed[0].start_seconds, kDay);
  EXPECT_EQ(closed[0].clusters, (std::vector<ClusterCount>{{2, 3}}));
  EXPECT_EQ(closed[0].volume_ml, 0.5);
  EXPECT_EQ(book.Query(kDay, kDay + 60).total, 7u);  // the book itself holds the whole bin

  std::vector<BinCounts> rest = book.TakeAllPendingBins();
  ASSERT_EQ(rest.size(), 1u);
  EXPECT_EQ(rest[0].start_seconds, kDay + 180);
}

TEST(CountBook, BinStartAgreesWithBinIndexForAwkwardWidths) {
  for (double width : {0.1, 0.3, 7.0, 60.0, 86400.0 / 7}) {
    for (std::int64_t i = 17640000; i < 17640000 + 2000; ++i) {
      ASSERT_EQ(BinIndexOf(BinStartOf(i, width), width), i) << width;
      ASSERT_EQ(BinIndexOf(std::nextafter(BinStartOf(i, width), -1e300), width), i - 1);
    }
  }
}

// Random samples over many bins, with a sample of the same kind added later to an old
// bin; returns the book and the particles it was given.
struct Particle {
  double seconds;
  std::uint32_t cluster;
};

void AddRandomSamples(CountBook& book, std::mt19937_64& random, int samples,
                      std::vector<std::pair<SampleTally, std::vector<Particle>>>* record) {
  std::uniform_real_distribution<double> start(kDay, kDay + 5000);
  std::uniform_real_distribution<double> span(0, 40);
  std::uniform_real_distribution<double> volume(0.5, 5);
  std::uniform_int_distribution<int> size(0, 40);
  std::uniform_int_distribution<std::uint32_t> cluster(0, 6);
  for (int s = 0; s < samples; ++s) {
    SampleTally sample;
    sample.sample_id = "r" + std::to_string(s);
    sample.first_seconds = start(random);
    sample.last_seconds = sample.first_seconds + span(random);
    sample.volume_ml = volume(random);
    std::vector<Particle> particles;
    std::uniform_real_distribution<double> when(sample.first_seconds, sample.last_seconds);
    int n = size(random);
    for (int p = 0; p < n; ++p) particles.push_back({when(random), cluster(random)});
    for (const Particle& particle : particles) {
      ++sample.by_cluster[particle.cluster];
      ++sample.by_bin[book.BinStart(particle.seconds)].by_cluster[particle.cluster];
    }
    ASSERT_TRUE(book.AddSample(sample).ok());
    if (record) record->emplace_back(sample, particles);
  }
}

TEST(CountBook, QueriesMatchAPerParticleReferenceOnRandomSamples) {
  CountsOptions options = Options(7);  // 5000 s / 7 s: about 715 bins in 3 chunks
  CountBook book = MakeBook(options);
  std::mt19937_64 random(20261202);
  std::vector<std::pair<SampleTally, std::vector<Particle>>> record;
  AddRandomSamples(book, random, 400, &record);

  std::uniform_real_distribution<double> edge(kDay - 100, kDay + 5100);
  for (int q = 0; q < 200; ++q) {
    double a = edge(random), b = edge(random);
    double from = std::min(a, b), to = std::max(a, b);
    // Reference: particle by particle, volume share by share.
    std::map<std::uint32_t, std::uint64_t> counts;
    double volume = 0;
    for (const auto& [sample, particles] : record) {
      std::uint64_t accepted = particles.size();
      std::map<double, std::uint64_t> per_bin;
      for (const Particle& particle : particles) {
        double bin_start = std::floor(particle.seconds / 7) * 7;
        if (bin_start >= from && bin_start < to) ++counts[particle.cluster];
        ++per_bin[bin_start];
      }
      if (accepted == 0) {
        double bin_start = std::floor(sample.first_seconds / 7) * 7;
        if (bin_start >= from && bin_start < to) volume += sample.volume_ml;
      }
      for (const auto& [bin_start, n] : per_bin) {
        if (bin_start >= from && bin_start < to) volume += sample.volume_ml * n / accepted;
      }
    }
    CountsWindow window = book.Query(from, to);
    EXPECT_NEAR(window.volume_ml, volume, 1e-9 * (1 + volume));
    EXPECT_EQ(window.unclassified, counts[0]);
    for (std::uint32_t id = 1; id <= 6; ++id) {
      const ClusterWindowCount* found = Find(window, id);
      EXPECT_EQ(found ? found->count : 0u, counts[id]) << "cluster " << id;
    }
  }
}

TEST(CountBook, JsonRoundTripRestoresEverythingExactly) {
  CountsOptions options = Options(7);
  CountBook book = MakeBook(options);
  std::mt19937_64 random(7);
  AddRandomSamples(book, random, 150, nullptr);
  (void)book.TakeClosedBins();
  AddRandomSamples(book, random, 20, nullptr);  // pending additions, some late

  // Through text, as a checkpoint does.
  nlohmann::json saved = nlohmann::json::parse(book.ToJson().dump());
  auto restored = CountBook::FromJson(saved, options);
  ASSERT_TRUE(restored.ok()) << restored.status().ToString();
  EXPECT_EQ(restored->ToJson(), book.ToJson());
  EXPECT_EQ(restored->Bins(0, 1e10), book.Bins(0, 1e10));  // doubles compared exactly
  EXPECT_EQ(restored->latest_event_seconds(), book.latest_event_seconds());
  EXPECT_EQ(restored->samples().size(), book.samples().size());
  EXPECT_EQ(restored->TakeAllPendingBins(), book.TakeAllPendingBins());
}

TEST(CountBook, FromJsonRefusesAnotherBinWidth) {
  CountBook book = MakeBook(Options(60));
  ASSERT_TRUE(book.AddSample(OneBinSample("a", kDay, 1.0, {{1, 1}})).ok());
  auto restored = CountBook::FromJson(book.ToJson(), Options(30));
  ASSERT_FALSE(restored.ok());
  EXPECT_EQ(restored.status().code(), StatusCode::kFailedPrecondition);
  EXPECT_NE(restored.status().message().find("bin_seconds"), std::string::npos);
  auto malformed = CountBook::FromJson(nlohmann::json{{"format", 1}}, Options(60));
  EXPECT_EQ(malformed.status().code(), StatusCode::kCorruption);
}

TEST(CountBook, CreateRefusesZeroBinWidth) {
  auto book = CountBook::Create(Options(0));
  ASSERT_FALSE(book.ok());
  EXPECT_NE(book.status().message().find("counts.bin_seconds"), std::string::npos);
}

}  // namespace
}  // namespace seston
