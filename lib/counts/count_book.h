// CountBook: the counts stage. It keeps, in memory, how many particles of each cluster
// were seen per fixed time bin of event time and per sample, with the volume of water
// analysed, so that concentrations (particles per mL) can be reported for any window.
//
// What goes in. The pipeline tallies one complete sample (all its particles, already
// assigned to clusters) into a SampleTally and hands it over with AddSample; each
// particle is thus counted exactly once, in the bin of its own event time.
//
// Bins. Bin i covers event time [i * bin_seconds, (i + 1) * bin_seconds); it is keyed by
// its start, floor(t / bin_seconds) * bin_seconds. Per bin: particles per cluster,
// unclassified (cluster id 0), rejected, and the volume attributed to the bin.
//
// Volume attribution. A sample's volume is split over the bins its particles fall in,
// in proportion to the sample's accepted particles (classified + unclassified) in each
// bin: share_b = volume_ml * accepted_b / accepted. So the concentration in a bin,
// particles / volume share, equals the sample's own concentration when the sample sits
// in one bin, and a window's concentration is sum(particles) / sum(volume shares). A
// sample with no accepted particle puts all its volume in the bin of first_seconds (as
// do its rejected rows that no bin claims).
//
// Retention. At most retained_bins bins are kept (the oldest are dropped; bins are only
// created where particles fell, so an instrument pause costs nothing) and the newest
// retained_samples SampleTally values.
//
// Count files. The book also remembers, per bin, what was added and not yet handed to
// the CountFileWriter. TakeClosedBins hands over the bins whose end + bin_close_lag has
// been reached by the latest event time; TakeAllPendingBins (at flush or shutdown)
// hands over the rest too. Normally this is one row per bin; a sample arriving after
// its bins were handed over gives a second row for the same bin holding only the late
// part (rows of one bin add up, see count_file_writer.h).
//
// Snapshots. Snapshot() returns an immutable CountBookSnapshot for other threads. Bins
// live in shared chunks of 256 consecutive bin indices; a snapshot copies only the
// chunk pointers and sample pointers, and the book copies a chunk (copy on write) the
// first time it changes one a snapshot still holds. Measured on the build machine (-O2)
// with 20160 bins x 10 clusters and 2000 samples: Snapshot() about 45 us, a snapshot
// followed by an addition (one chunk copied) about 70 us, against about 90 ms for a deep
// copy of all bins and samples. ToJson of that book dumps to about 1.8 MB.
//
// Thread safety: the book is owned by one thread (the pipeline's). Snapshots may be
// read on any thread.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <vector>

#include "base/status.h"
#include "counts/count_book_snapshot.h"
#include "counts/count_types.h"
#include "counts/counts_options.h"

namespace seston {

// One sample's tally as checkpoint JSON, and back. FromJson throws nlohmann::json's
// exceptions on malformed input; the caller turns them into kCorruption.
nlohmann::json SampleTallyToJson(const SampleTally& sample);
SampleTally SampleTallyFromJson(const nlohmann::json& state);

class CountBook {
 public:
  // Fails unless bin_seconds > 0 and finite, bin_close_lag_seconds >= 0,
  // retained_bins >= 1 and retained_samples >= 1.
  static Result<CountBook> Create(const CountsOptions& options);

  // Adds one complete sample. Fails, changing nothing, when the tally is inconsistent:
  // volume not finite or < 0, times not finite or last < first, a bin key not finite,
  // bins not adding up to by_cluster, or bins holding more rejected rows than the sample.
  Status AddSample(const SampleTally& sample);

  // floor(seconds / bin_seconds) * bin_seconds, consistent with the bins' own starts.
  double BinStart(double seconds) const;

  CountsWindow Query(double from_seconds, double to_seconds) const {
    return current_.Query(from_seconds, to_seconds);
  }
  std::vector<BinCounts> Bins(double from_seconds, double to_seconds) const {
    return current_.Bins(from_seconds, to_seconds);
  }
  // The largest last_seconds of any sample added; NaN before the first.
  double latest_event_seconds() const { return current_.latest_event_seconds(); }
  std::size_t bin_count() const { return current_.bin_count(); }
  const std::deque<std::shared_ptr<const SampleTally>>& samples() const {
    return current_.samples();
  }

  std::shared_ptr<const CountBookSnapshot> Snapshot() const;

  // Additions not yet handed over, for bins whose end + bin_close_lag_seconds <=
  // latest_event_seconds(), ascending by start; they are forgotten here.
  std::vector<BinCounts> TakeClosedBins();
  // Every addition not yet handed over, closed or not, ascending by start.
  std::vector<BinCounts> TakeAllPendingBins();

  // Everything (bins, additions not yet handed over, samples, latest event time), exact.
  nlohmann::json ToJson() const;
  // Restores a book from ToJson(). Fails (kCorruption) on malformed state and
  // (kFailedPrecondition) when bin_seconds differs from the one the state was made with.
  // Smaller retention options than before drop the oldest bins and samples.
  static Result<CountBook> FromJson(const nlohmann::json& state, const CountsOptions& options);

 private:
  explicit CountBook(const CountsOptions& options)
      : options_(options), current_(options.bin_seconds) {}

  // The bin of `index`, created empty when missing, in a chunk this book owns alone.
  BinCounts& MutableBin(std::int64_t index);
  void EnforceRetention();

  CountsOptions options_;
  CountBookSnapshot current_;
  std::map<std::int64_t, BinCounts> pending_;  // by bin index: not yet handed over
};

}  // namespace seston
