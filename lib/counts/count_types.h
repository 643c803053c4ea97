// Plain values of the counting stage: what the pipeline hands over for one sample, what
// a time bin holds, and what a window query returns.
//
// Units: times are event-time seconds since 1970-01-01T00:00:00Z (UTC); volumes are mL
// of water analysed; concentrations are particles per mL. Cluster id 0 means
// "unclassified" (the particle was too far from every centre); real clusters are >= 1.
// "Accepted" particles are the classified and unclassified ones together; rejected rows
// (bad values) are counted apart and never enter a concentration.
//
// Thread safety: values; copy freely.
#pragma once

#include <cstdint>
#include <limits>
#include <map>
#include <string>
#include <vector>

namespace seston {

// Particles of one sample that fall in one time bin.
struct BinTally {
  std::map<std::uint32_t, std::uint64_t> by_cluster;  // cluster id -> particles; 0 = unclassified
  std::uint64_t rejected = 0;                         // rejected rows whose time fell here
};

// One complete sample, tallied by the pipeline and handed to the counts stage at once.
struct SampleTally {
  std::string sample_id;
  std::string source;        // where it came from (input file name), for people
  double first_seconds = 0;  // event time of the sample's first particle, s
  double last_seconds = 0;   // event time of its last particle, s (>= first_seconds)
  double volume_ml = 0;      // water analysed for the whole sample, mL (>= 0)
  std::map<std::uint32_t, std::uint64_t> by_cluster;  // accepted particles; 0 = unclassified
  std::uint64_t rejected = 0;                         // rejected rows of the sample
  // The same particles split by time bin, keyed by bin start (any time inside the bin is
  // accepted as key and re-binned). For every cluster id the bins must add up to
  // by_cluster; their rejected may add up to less than `rejected` (rows whose time was
  // unusable), the rest is put in the bin of first_seconds.
  std::map<double, BinTally> by_bin;
};

struct ClusterCount {
  std::uint32_t cluster_id = 0;  // >= 1
  std::uint64_t count = 0;
  bool operator==(const ClusterCount&) const = default;
};

// One time bin [start_seconds, start_seconds + bin_seconds).
struct BinCounts {
  double start_seconds = 0;
  std::vector<ClusterCount> clusters;  // ascending id, ids >= 1, every count > 0
  std::uint64_t unclassified = 0;
  std::uint64_t rejected = 0;
  double volume_ml = 0;  // volume attributed to the bin, mL (see CountBook)

  std::uint64_t accepted() const;  // sum of clusters + unclassified
  bool operator==(const BinCounts&) const = default;
};

struct ClusterWindowCount {
  std::uint32_t cluster_id = 0;
  std::uint64_t count = 0;
  double concentration_per_ml = 0;  // count / window volume; NaN when the volume is 0
};

// Totals over the bins of a window. Concentrations are NaN when the window holds no
// volume (no sample, or only samples of volume 0); a JSON writer should show null.
struct CountsWindow {
  double from_seconds = std::numeric_limits<double>::quiet_NaN();  // start of the first
                                                                   // bin found; NaN: none
  double to_seconds = std::numeric_limits<double>::quiet_NaN();    // end of the last bin found
  std::uint64_t bins = 0;                                          // bins found in the window
  std::vector<ClusterWindowCount> clusters;  // ascending id, clusters with count > 0
  std::uint64_t unclassified = 0;
  double unclassified_per_ml = std::numeric_limits<double>::quiet_NaN();
  std::uint64_t rejected = 0;
  std::uint64_t total = 0;  // accepted particles (clusters + unclassified)
  double total_per_ml = std::numeric_limits<double>::quiet_NaN();
  double volume_ml = 0;
};

// Particles per mL: count / volume_ml, NaN when volume_ml is not > 0.
double PerMl(std::uint64_t count, double volume_ml);

// Index of the bin holding event time `seconds`: the integer i with
// BinStartOf(i) <= seconds < BinStartOf(i + 1), computed so that it agrees exactly with
// BinStartOf in floating point (BinIndexOf(BinStartOf(i)) == i). bin_seconds > 0.
std::int64_t BinIndexOf(double seconds, double bin_seconds);
// i * bin_seconds: the start of bin i, s.
double BinStartOf(std::int64_t index, double bin_seconds);

}  // namespace seston
