// CountBookSnapshot: an immutable view of a CountBook at one instant, for readers on
// other threads (HTTP API, metrics). Get one from CountBook::Snapshot(); it stays valid
// and unchanged however the book moves on, and costs little to take (see CountBook).
//
// Units as in counts/count_types.h. Thread safety: every method is const and the
// object never changes, so any number of threads may read one snapshot at once.
#pragma once

#include <cstddef>
#include <cstdint>
#include <deque>
#include <limits>
#include <map>
#include <memory>
#include <vector>

#include "counts/count_types.h"

namespace seston {

namespace counts_internal {

// Bins of consecutive indices [k * kBinsPerChunk, (k + 1) * kBinsPerChunk) that exist,
// ascending by start. Chunks are shared between the book and its snapshots and copied
// by the book before it changes one that a snapshot still holds.
inline constexpr std::int64_t kBinsPerChunk = 256;
struct BinChunk {
  std::vector<BinCounts> bins;
};

}  // namespace counts_internal

class CountBookSnapshot {
 public:
  // Totals over the bins whose start lies in [from_seconds, to_seconds).
  CountsWindow Query(double from_seconds, double to_seconds) const;
  // The bins whose start lies in [from_seconds, to_seconds), ascending.
  std::vector<BinCounts> Bins(double from_seconds, double to_seconds) const;
  // Latest event time seen (the largest last_seconds of any sample); NaN before the first.
  double latest_event_seconds() const { return latest_event_seconds_; }
  double bin_seconds() const { return bin_seconds_; }
  std::size_t bin_count() const { return bin_count_; }
  // The newest samples kept (at most CountsOptions::retained_samples), oldest first.
  const std::deque<std::shared_ptr<const SampleTally>>& samples() const { return samples_; }

 private:
  friend class CountBook;
  explicit CountBookSnapshot(double bin_seconds) : bin_seconds_(bin_seconds) {}

  // Calls visit(bin) for each bin with start in [from_seconds, to_seconds), ascending.
  template <typename Visit>
  void ForEachBin(double from_seconds, double to_seconds, Visit visit) const;

  double bin_seconds_;
  std::map<std::int64_t, std::shared_ptr<counts_internal::BinChunk>> chunks_;  // by chunk key
  std::size_t bin_count_ = 0;
  std::deque<std::shared_ptr<const SampleTally>> samples_;
  double latest_event_seconds_ = std::numeric_limits<double>::quiet_NaN();
};

}  // namespace seston
