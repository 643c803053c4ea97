// A thread-safe ApiBackend for the API tests: answers with fixed views and records the
// arguments of every call.
#pragma once

#include <mutex>
#include <optional>
#include <stdexcept>

#include "api/api_backend.h"

namespace seston::testing {

class FakeBackend final : public ApiBackend {
 public:
  struct CountsCall {
    std::optional<double> from, to, window;
  };

  HealthView Health() override {
    std::lock_guard lock(mutex);
    if (throw_on_health) throw std::runtime_error("snapshot missing");
    return health;
  }
  Result<CountsView> Counts(std::optional<double> from, std::optional<double> to,
                            std::optional<double> window) override {
    std::lock_guard lock(mutex);
    counts_calls.push_back({from, to, window});
    if (!counts_status.ok()) return counts_status;
    return counts;
  }
  std::vector<ClusterView> Clusters() override {
    std::lock_guard lock(mutex);
    return clusters;
  }
  Status SetLabel(std::uint32_t id, std::string label) override {
    std::lock_guard lock(mutex);
    for (ClusterView& cluster : clusters) {
      if (cluster.id == id) {
        cluster.label = std::move(label);
        return Status::Ok();
      }
    }
    return Status::NotFound("no cluster with id " + std::to_string(id));
  }
  nlohmann::json Alerts() override {
    std::lock_guard lock(mutex);
    return alerts;
  }
  Status AcceptBaseline() override {
    std::lock_guard lock(mutex);
    ++baselines_accepted;
    return baseline_status;
  }
  std::string Metrics() override {
    std::lock_guard lock(mutex);
    return metrics;
  }

  std::mutex mutex;  // tests set the fields below before requests run
  HealthView health;
  bool throw_on_health = false;
  CountsView counts;
  Status counts_status;
  std::vector<CountsCall> counts_calls;
  std::vector<ClusterView> clusters;
  nlohmann::json alerts = {{"active", nlohmann::json::array()},
                           {"recent", nlohmann::json::array()}};
  Status baseline_status;
  int baselines_accepted = 0;
  std::string metrics;
};

}  // namespace seston::testing
