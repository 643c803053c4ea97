#include "counts/count_types.h"

#include <cmath>

namespace seston {

std::uint64_t BinCounts::accepted() const {
  std::uint64_t sum = unclassified;
  for (const ClusterCount& cluster : clusters) sum += cluster.count;
  return sum;
}

double PerMl(std::uint64_t count, double volume_ml) {
  if (!(volume_ml > 0)) return std::numeric_limits<double>::quiet_NaN();
  return static_cast<double>(count) / volume_ml;
}

double BinStartOf(std::int64_t index, double bin_seconds) {
  return static_cast<double>(index) * bin_seconds;
}

std::int64_t BinIndexOf(double seconds, double bin_seconds) {
  // floor(seconds / bin_seconds) can be off by one when the quotient rounds across an
  // integer; nudging against BinStartOf keeps index and start consistent.
  auto index = static_cast<std::int64_t>(std::floor(seconds / bin_seconds));
  if (BinStartOf(index, bin_seconds) > seconds) --index;
  if (BinStartOf(index + 1, bin_seconds) <= seconds) ++index;
  return index;
}

}  // namespace seston
