#include "pipeline/service_snapshot.h"

namespace seston {

void SnapshotBoard::Publish(std::shared_ptr<const ServiceSnapshot> snapshot) {
  std::shared_ptr<const ServiceSnapshot> old;
  {
    std::lock_guard<std::mutex> lock(mutex_);
    old = std::move(latest_);
    latest_ = std::move(snapshot);
  }
  // `old` may be the last reference to a large snapshot: it is freed here, outside the lock.
}

std::shared_ptr<const ServiceSnapshot> SnapshotBoard::Latest() const {
  std::lock_guard<std::mutex> lock(mutex_);
  return latest_;
}

}  // namespace seston
