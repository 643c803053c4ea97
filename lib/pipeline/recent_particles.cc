#include "pipeline/recent_particles.h"

#include <algorithm>

namespace seston {

RecentParticles::RecentParticles(std::vector<std::string> columns, std::size_t capacity)
    : columns_(std::move(columns)),
      capacity_(std::max<std::size_t>(1, capacity)),
      times_(capacity_),
      clusters_(capacity_),
      values_(capacity_ * columns_.size()) {}

void RecentParticles::Add(double time_seconds, std::uint32_t cluster, const double* values) {
  const std::size_t dims = columns_.size();
  times_[next_] = time_seconds;
  clusters_[next_] = cluster;
  std::copy(values, values + dims, values_.begin() + static_cast<std::ptrdiff_t>(next_ * dims));
  next_ = (next_ + 1) % capacity_;
  size_ = std::min(size_ + 1, capacity_);
}

RecentParticlesView RecentParticles::Latest(std::size_t limit) const {
  const std::size_t dims = columns_.size();
  const std::size_t count = std::min(limit, size_);
  RecentParticlesView view;
  view.columns = columns_;
  view.particles.reserve(count);
  for (std::size_t k = 0; k < count; ++k) {
    // Oldest of the `count` newest first: walk back from next_.
    const std::size_t slot = (next_ + capacity_ - count + k) % capacity_;
    const auto begin = values_.begin() + static_cast<std::ptrdiff_t>(slot * dims);
    view.particles.push_back(
        {times_[slot], clusters_[slot],
         std::vector<double>(begin, begin + static_cast<std::ptrdiff_t>(dims))});
  }
  return view;
}

}  // namespace seston
