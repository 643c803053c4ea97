#include "model/mini_batch_kmeans.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <string>

#include "model/kmeans_fitter.h"
#include "model/nearest_centre.h"

namespace seston {
namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();
constexpr int kJsonFormat = 1;

// The q quantile (0 < q < 1) of sorted values by linear interpolation between order
// statistics (Hyndman & Fan 1996, definition 7).
double InterpolatedQuantile(const std::vector<double>& sorted, double q) {
  const double position = q * static_cast<double>(sorted.size() - 1);
  const std::size_t below = static_cast<std::size_t>(std::floor(position));
  const std::size_t above = std::min(below + 1, sorted.size() - 1);
  const double fraction = position - static_cast<double>(below);
  return sorted[below] + fraction * (sorted[above] - sorted[below]);
}

Status CheckOptions(const ModelOptions& options) {
  const auto fail = [](const std::string& what) {
    return Status::InvalidArgument("model options: " + what);
  };
  if (options.k < 0) {
    return fail("k must be 0 (auto) or at least 1, got " + std::to_string(options.k));
  }
  if (options.restarts < 1) {
    return fail("restarts must be at least 1, got " + std::to_string(options.restarts));
  }
  if (options.max_iterations < 1) {
    return fail("max_iterations must be at least 1, got " + std::to_string(options.max_iterations));
  }
  if (!(options.half_life_particles >= 0) || !std::isfinite(options.half_life_particles)) {
    return fail("half_life_particles must be a finite number >= 0 (0 = never forget), got " +
                std::to_string(options.half_life_particles));
  }
  if (!(options.half_life_seconds >= 0) || !std::isfinite(options.half_life_seconds)) {
    return fail("half_life_seconds must be a finite number >= 0 (0 = off), got " +
                std::to_string(options.half_life_seconds));
  }
  if (!(options.novelty_quantile > 0 && options.novelty_quantile <= 1)) {
    return fail("novelty_quantile must be in (0, 1] (1 = no novelty), got " +
                std::to_string(options.novelty_quantile));
  }
  if (options.novelty_buffer < 1) return fail("novelty_buffer must be at least 1");
  return Status::Ok();
}

// JSON has no infinity or NaN: they are written as null and read back as the value the
// field uses for "none" (+infinity for thresholds, NaN for silhouettes).
nlohmann::json NumberOrNull(double value) {
  return std::isfinite(value) ? nlohmann::json(value) : nlohmann::json(nullptr);
}
double NumberOr(const nlohmann::json& value, double if_null) {
  return value.is_null() ? if_null : value.get<double>();
}

nlohmann::json VectorToJson(const Eigen::VectorXd& vector) {
  return nlohmann::json(std::vector<double>(vector.data(), vector.data() + vector.size()));
}
Eigen::VectorXd VectorFromJson(const nlohmann::json& json) {
  const std::vector<double> values = json.get<std::vector<double>>();
  return Eigen::Map<const Eigen::VectorXd>(values.data(), static_cast<Eigen::Index>(values.size()));
}

// The cluster with this id in `clusters` (const or not), or nullptr. The list is in
// increasing id order: ids are issued in order and clusters are only appended.
template <typename Clusters>
auto* FindById(Clusters& clusters, std::uint32_t id) {
  auto it =
      std::lower_bound(clusters.begin(), clusters.end(), id,
                       [](const auto& cluster, std::uint32_t key) { return cluster.id < key; });
  return it != clusters.end() && it->id == id ? &*it : nullptr;
}

}  // namespace

Result<MiniBatchKMeans> MiniBatchKMeans::Create(const ModelOptions& options,
                                                const RowMatrix& warmup_points,
                                                double warmup_end_seconds) {
  SESTON_RETURN_IF_ERROR(CheckOptions(options));
  MiniBatchKMeans model;
  int k = options.k;
  if (k == 0) {
    SESTON_ASSIGN_OR_RETURN(KSelection selection, SelectK(warmup_points, options));
    k = selection.chosen_k;
    model.k_selection_ = std::move(selection);
  }
  auto fitted = FitKMeans(warmup_points, k, options.restarts, options.max_iterations, options.seed);
  if (!fitted.ok()) return fitted.status().WithContext("model warm-up fit");
  const KMeansFit& fit = *fitted;
  model.dims_ = static_cast<int>(warmup_points.cols());
  model.half_life_particles_ = options.half_life_particles;
  model.half_life_seconds_ = options.half_life_seconds;
  model.novelty_capacity_ = options.novelty_buffer;
  model.last_seconds_ = warmup_end_seconds;
  std::vector<std::vector<double>> member_distances(k);
  for (Eigen::Index i = 0; i < warmup_points.rows(); ++i) {
    const int label = fit.labels[i];
    member_distances[label].push_back((warmup_points.row(i) - fit.centres.row(label)).norm());
  }
  for (int c = 0; c < k; ++c) {
    std::vector<double>& distances = member_distances[c];
    std::sort(distances.begin(), distances.end());
    double sum_of_squares = 0;
    for (double distance : distances) sum_of_squares += distance * distance;
    const double threshold = options.novelty_quantile >= 1
                                 ? kInfinity
                                 : InterpolatedQuantile(distances, options.novelty_quantile);
    const double spread = std::sqrt(sum_of_squares / static_cast<double>(distances.size()));
    model.AddCluster(fit.centres.row(c).transpose(), static_cast<double>(fit.sizes[c]), threshold,
                     spread, warmup_end_seconds);
  }
  return model;
}

void MiniBatchKMeans::AssignToActive(const RowMatrix& points,
                                     const std::vector<const Cluster*>& active,
                                     std::vector<int>* nearest,
                                     std::vector<double>* squared_distance) const {
  if (active.empty()) return;
  RowMatrix centres(static_cast<Eigen::Index>(active.size()), dims_);
  for (std::size_t c = 0; c < active.size(); ++c) {
    centres.row(static_cast<Eigen::Index>(c)) = active[c]->centre.transpose();
  }
  AssignNearest(points, centres, nearest, squared_distance);
}

void MiniBatchKMeans::Classify(const RowMatrix& points, std::vector<std::uint32_t>* ids,
                               std::vector<double>* distances) const {
  assert(points.cols() == dims_);
  const Eigen::Index rows = points.rows();
  ids->assign(rows, 0);
  distances->assign(rows, kInfinity);
  std::vector<const Cluster*> active;
  for (const Cluster& cluster : clusters_) {
    if (!cluster.retired) active.push_back(&cluster);
  }
  std::vector<int> nearest;
  std::vector<double> squared_distance;
  AssignToActive(points, active, &nearest, &squared_distance);
  for (Eigen::Index i = 0; i < rows && !active.empty(); ++i) {
    const Cluster& cluster = *active[nearest[i]];
    const double distance = std::sqrt(squared_distance[i]);
    (*distances)[i] = distance;
    if (distance <= cluster.novelty_threshold) (*ids)[i] = cluster.id;
  }
}

void MiniBatchKMeans::ProcessBatch(const RowMatrix& points, double batch_first_seconds,
                                   double batch_last_seconds, std::vector<std::uint32_t>* ids,
                                   std::vector<double>* distances,
                                   std::span<const double> row_seconds) {
  assert(points.cols() == dims_);
  assert(row_seconds.empty() || static_cast<Eigen::Index>(row_seconds.size()) == points.rows());
  const Eigen::Index rows = points.rows();
  ids->assign(rows, 0);
  distances->assign(rows, kInfinity);

  double halvings = 0;
  if (half_life_particles_ > 0) halvings += static_cast<double>(rows) / half_life_particles_;
  if (half_life_seconds_ > 0) {
    halvings += std::max(0.0, batch_last_seconds - last_seconds_) / half_life_seconds_;
  }
  last_seconds_ = std::max(last_seconds_, batch_last_seconds);
  const double decay = std::exp2(-halvings);

  std::vector<Cluster*> active;
  for (Cluster& cluster : clusters_) {
    if (cluster.retired) continue;
    cluster.weight *= decay;
    active.push_back(&cluster);
  }

  std::vector<int> nearest;
  std::vector<double> squared_distance;
  AssignToActive(points, {active.begin(), active.end()}, &nearest, &squared_distance);
  for (Eigen::Index i = 0; i < rows; ++i) {
    if (!active.empty()) {
      Cluster& cluster = *active[nearest[i]];
      const double distance = std::sqrt(squared_distance[i]);
      (*distances)[i] = distance;
      if (distance <= cluster.novelty_threshold) {
        (*ids)[i] = cluster.id;
        ++cluster.assigned;
        cluster.weight += 1;
        cluster.centre += (points.row(i).transpose() - cluster.centre) / cluster.weight;
        continue;
      }
    }
    if (novelty_.size() == novelty_capacity_) novelty_.pop_front();
    novelty_.push_back({next_novelty_sequence_++,
                        row_seconds.empty() ? batch_first_seconds : row_seconds[i],
                        points.row(i).transpose()});
  }
}

const MiniBatchKMeans::Cluster* MiniBatchKMeans::FindCluster(std::uint32_t id) const {
  return FindById(clusters_, id);
}

int MiniBatchKMeans::active_count() const {
  return static_cast<int>(std::count_if(clusters_.begin(), clusters_.end(),
                                        [](const Cluster& cluster) { return !cluster.retired; }));
}

std::uint32_t MiniBatchKMeans::AddCluster(const Eigen::VectorXd& centre, double weight,
                                          double novelty_threshold, double spread,
                                          double born_seconds) {
  assert(centre.size() == dims_);
  Cluster cluster;
  cluster.id = next_id_++;
  cluster.centre = centre;
  cluster.weight = weight;
  cluster.novelty_threshold = novelty_threshold;
  cluster.spread = spread;
  cluster.born_seconds = born_seconds;
  clusters_.push_back(std::move(cluster));
  return clusters_.back().id;
}

Status MiniBatchKMeans::RetireCluster(std::uint32_t id, double seconds) {
  Cluster* cluster = FindById(clusters_, id);
  if (cluster == nullptr) {
    return Status::NotFound("model: no cluster with id " + std::to_string(id) +
                            "; ids run from 1 to " + std::to_string(next_id_ - 1));
  }
  if (cluster->retired) {
    return Status::FailedPrecondition("model: cluster " + std::to_string(id) +
                                      " is already retired");
  }
  cluster->retired = true;
  cluster->retired_seconds = seconds;
  return Status::Ok();
}

void MiniBatchKMeans::RemoveNoveltyPoints(std::span<const std::uint64_t> sequences) {
  std::vector<std::uint64_t> doomed(sequences.begin(), sequences.end());
  std::sort(doomed.begin(), doomed.end());
  std::erase_if(novelty_, [&doomed](const NoveltyPoint& entry) {
    return std::binary_search(doomed.begin(), doomed.end(), entry.sequence);
  });
}

nlohmann::json MiniBatchKMeans::ToJson() const {
  nlohmann::json clusters = nlohmann::json::array();
  for (const Cluster& cluster : clusters_) {
    clusters.push_back({{"id", cluster.id},
                        {"centre", VectorToJson(cluster.centre)},
                        {"weight", cluster.weight},
                        {"novelty_threshold", NumberOrNull(cluster.novelty_threshold)},
                        {"spread", cluster.spread},
                        {"assigned", cluster.assigned},
                        {"born_seconds", cluster.born_seconds},
                        {"retired", cluster.retired},
                        {"retired_seconds", cluster.retired_seconds}});
  }
  nlohmann::json novelty = nlohmann::json::array();
  for (const NoveltyPoint& entry : novelty_) {
    novelty.push_back({{"sequence", entry.sequence},
                       {"seconds", entry.seconds},
                       {"point", VectorToJson(entry.point)}});
  }
  nlohmann::json selection = nullptr;
  if (k_selection_) {
    nlohmann::json scores = nlohmann::json::array();
    for (const KScore& score : k_selection_->scores) {
      scores.push_back(
          {{"k", score.k}, {"sse", score.sse}, {"silhouette", NumberOrNull(score.silhouette)}});
    }
    selection = {{"chosen_k", k_selection_->chosen_k},
                 {"rule", k_selection_->rule},
                 {"scores", std::move(scores)}};
  }
  return {{"format", kJsonFormat},
          {"dims", dims_},
          {"half_life_particles", half_life_particles_},
          {"half_life_seconds", half_life_seconds_},
          {"novelty_capacity", novelty_capacity_},
          {"last_seconds", last_seconds_},
          {"next_id", next_id_},
          {"next_novelty_sequence", next_novelty_sequence_},
          {"clusters", std::move(clusters)},
          {"novelty", std::move(novelty)},
          {"k_selection", std::move(selection)}};
}

Result<MiniBatchKMeans> MiniBatchKMeans::FromJson(const nlohmann::json& json) {
  MiniBatchKMeans model;
  const char* key = "format";
  try {
    if (json.at(key).get<int>() != kJsonFormat) {
      return Status::Corruption("model state: format " + json.at(key).dump() +
                                " is not supported; this build reads format " +
                                std::to_string(kJsonFormat));
    }
    key = "dims";
    model.dims_ = json.at(key).get<int>();
    key = "half_life_particles";
    model.half_life_particles_ = json.at(key).get<double>();
    key = "half_life_seconds";
    model.half_life_seconds_ = json.at(key).get<double>();
    key = "novelty_capacity";
    model.novelty_capacity_ = json.at(key).get<std::size_t>();
    key = "last_seconds";
    model.last_seconds_ = json.at(key).get<double>();
    key = "next_id";
    model.next_id_ = json.at(key).get<std::uint32_t>();
    key = "next_novelty_sequence";
    model.next_novelty_sequence_ = json.at(key).get<std::uint64_t>();
    key = "clusters";
    for (const nlohmann::json& item : json.at(key)) {
      Cluster cluster;
      cluster.id = item.at("id").get<std::uint32_t>();
      cluster.centre = VectorFromJson(item.at("centre"));
      cluster.weight = item.at("weight").get<double>();
      cluster.novelty_threshold = NumberOr(item.at("novelty_threshold"), kInfinity);
      cluster.spread = item.at("spread").get<double>();
      cluster.assigned = item.at("assigned").get<std::uint64_t>();
      cluster.born_seconds = item.at("born_seconds").get<double>();
      cluster.retired = item.at("retired").get<bool>();
      cluster.retired_seconds = item.at("retired_seconds").get<double>();
      model.clusters_.push_back(std::move(cluster));
    }
    key = "novelty";
    for (const nlohmann::json& item : json.at(key)) {
      model.novelty_.push_back({item.at("sequence").get<std::uint64_t>(),
                                item.at("seconds").get<double>(),
                                VectorFromJson(item.at("point"))});
    }
    key = "k_selection";
    const nlohmann::json& selection = json.at(key);
    if (!selection.is_null()) {
      KSelection restored;
      restored.chosen_k = selection.at("chosen_k").get<int>();
      restored.rule = selection.at("rule").get<std::string>();
      for (const nlohmann::json& score : selection.at("scores")) {
        restored.scores.push_back(
            {score.at("k").get<int>(), score.at("sse").get<double>(),
             NumberOr(score.at("silhouette"), std::numeric_limits<double>::quiet_NaN())});
      }
      model.k_selection_ = std::move(restored);
    }
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("model state: key \"") + key + "\": " + error.what());
  }
  if (model.dims_ < 1) {
    return Status::Corruption("model state: dims must be at least 1, got " +
                              std::to_string(model.dims_));
  }
  if (model.novelty_capacity_ < 1) {
    return Status::Corruption("model state: novelty_capacity must be at least 1");
  }
  std::uint32_t previous_id = 0;
  for (const Cluster& cluster : model.clusters_) {
    if (cluster.id <= previous_id || cluster.id >= model.next_id_) {
      return Status::Corruption("model state: cluster id " + std::to_string(cluster.id) +
                                " is out of order, repeated or not below next_id " +
                                std::to_string(model.next_id_));
    }
    previous_id = cluster.id;
    if (cluster.centre.size() != model.dims_ || !cluster.centre.allFinite() ||
        !(cluster.weight >= 0)) {
      return Status::Corruption("model state: cluster " + std::to_string(cluster.id) +
                                " needs a finite centre of " + std::to_string(model.dims_) +
                                " values and a weight >= 0");
    }
  }
  if (model.novelty_.size() > model.novelty_capacity_) {
    return Status::Corruption("model state: " + std::to_string(model.novelty_.size()) +
                              " novelty points exceed the capacity " +
                              std::to_string(model.novelty_capacity_));
  }
  for (const NoveltyPoint& entry : model.novelty_) {
    if (entry.point.size() != model.dims_ || entry.sequence >= model.next_novelty_sequence_) {
      return Status::Corruption("model state: novelty point " + std::to_string(entry.sequence) +
                                " has the wrong size or a sequence not below "
                                "next_novelty_sequence");
    }
  }
  return model;
}

}  // namespace seston
