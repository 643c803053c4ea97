// RecentParticles: the newest classified particles, kept for the status page's scatter.
//
// A ring of at most `capacity` particles: event time, cluster id (0 = unclassified) and
// the feature values in the input's own units (before transform and standardisation),
// so a person reads them as the instrument wrote them. The pipeline adds every particle
// it classifies after warm-up (warm-up particles are held transformed and are not shown);
// the ring is a view aid, not state: it is not checkpointed and starts empty.
//
// Memory: capacity x (dims + 2) numbers. Thread safety: owned by the pipeline thread;
// readers get a copy (Latest) inside their snapshot.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "api/api_views.h"

namespace seston {

class RecentParticles {
 public:
  static constexpr std::size_t kDefaultCapacity = 3000;

  // `columns` name the features, in model order.
  RecentParticles(std::vector<std::string> columns, std::size_t capacity = kDefaultCapacity);

  // Adds one particle; `values` points at columns().size() numbers in input units.
  void Add(double time_seconds, std::uint32_t cluster, const double* values);

  // The newest `limit` particles (all when fewer), oldest first.
  RecentParticlesView Latest(std::size_t limit) const;

  const std::vector<std::string>& columns() const { return columns_; }
  std::size_t size() const { return size_; }

 private:
  std::vector<std::string> columns_;
  std::size_t capacity_;
  std::size_t next_ = 0;  // slot the next particle goes to
  std::size_t size_ = 0;
  std::vector<double> times_;
  std::vector<std::uint32_t> clusters_;
  std::vector<double> values_;  // capacity x dims, row-major
};

}  // namespace seston
