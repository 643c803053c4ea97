#include "counts/count_book_snapshot.h"

#include <algorithm>
#include <cmath>

namespace seston {

template <typename Visit>
void CountBookSnapshot::ForEachBin(double from_seconds, double to_seconds, Visit visit) const {
  if (!(from_seconds < to_seconds)) return;  // also refuses NaN bounds
  auto it = chunks_.begin();
  if (std::isfinite(from_seconds)) {
    std::int64_t first_index = BinIndexOf(from_seconds, bin_seconds_);
    // Floor division: the chunk key of a negative index rounds down too.
    std::int64_t key = first_index / counts_internal::kBinsPerChunk;
    if (first_index % counts_internal::kBinsPerChunk < 0) --key;
    it = chunks_.lower_bound(key);
  }
  for (; it != chunks_.end(); ++it) {
    for (const BinCounts& bin : it->second->bins) {
      if (bin.start_seconds >= to_seconds) return;
      if (bin.start_seconds >= from_seconds) visit(bin);
    }
  }
}

CountsWindow CountBookSnapshot::Query(double from_seconds, double to_seconds) const {
  CountsWindow window;
  std::map<std::uint32_t, std::uint64_t> by_cluster;
  ForEachBin(from_seconds, to_seconds, [&](const BinCounts& bin) {
    if (window.bins == 0) window.from_seconds = bin.start_seconds;
    window.to_seconds = bin.start_seconds + bin_seconds_;
    ++window.bins;
    for (const ClusterCount& cluster : bin.clusters)
      by_cluster[cluster.cluster_id] += cluster.count;
    window.unclassified += bin.unclassified;
    window.rejected += bin.rejected;
    window.total += bin.accepted();
    window.volume_ml += bin.volume_ml;
  });
  for (const auto& [id, count] : by_cluster) {
    window.clusters.push_back({id, count, PerMl(count, window.volume_ml)});
  }
  window.unclassified_per_ml = PerMl(window.unclassified, window.volume_ml);
  window.total_per_ml = PerMl(window.total, window.volume_ml);
  return window;
}

std::vector<BinCounts> CountBookSnapshot::Bins(double from_seconds, double to_seconds) const {
  std::vector<BinCounts> bins;
  ForEachBin(from_seconds, to_seconds, [&](const BinCounts& bin) { bins.push_back(bin); });
  return bins;
}

}  // namespace seston
