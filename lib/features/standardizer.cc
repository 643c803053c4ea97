#include "features/standardizer.h"

#include <utility>

namespace seston {

Standardizer::Standardizer(std::vector<std::string> names, bool enabled)
    : names_(std::move(names)), enabled_(enabled), stats_(names_.size()) {}

Result<Standardizer> Standardizer::Create(std::vector<std::string> dimension_names, bool enabled) {
  if (dimension_names.empty()) {
    return Status::InvalidArgument("standardizer: needs at least one dimension, got none");
  }
  return Standardizer(std::move(dimension_names), enabled);
}

void Standardizer::Add(const double* row) {
  if (!enabled_ || frozen_) return;
  for (std::size_t d = 0; d < stats_.size(); ++d) stats_[d].Add(row[d]);
}

Status Standardizer::Freeze() {
  if (frozen_) return Status::FailedPrecondition("standardizer: already frozen");
  if (enabled_ && stats_[0].count() == 0) {
    return Status::FailedPrecondition(
        "standardizer: no warm-up rows were added; at least one is needed to fit mean and sd");
  }
  frozen_ = true;
  ComputeScale();
  return Status::Ok();
}

void Standardizer::ComputeScale() {
  const std::size_t dims = names_.size();
  means_.assign(dims, 0.0);
  scales_.assign(dims, 1.0);
  warnings_.clear();
  if (!enabled_) return;
  for (std::size_t d = 0; d < dims; ++d) {
    means_[d] = stats_[d].mean();
    const double sd = stats_[d].population_sd();
    if (sd > 0.0) {
      scales_[d] = sd;
    } else {
      warnings_.push_back("dimension " + names_[d] + " has sd 0 over " +
                          std::to_string(stats_[d].count()) +
                          " warm-up rows (every value equal); its scale is set to 1, so its "
                          "z-score is the difference from the warm-up mean");
    }
  }
}

void Standardizer::Apply(double* row) const {
  if (!enabled_) return;
  for (std::size_t d = 0; d < means_.size(); ++d) row[d] = (row[d] - means_[d]) / scales_[d];
}

void Standardizer::Inverse(double* row) const {
  if (!enabled_) return;
  for (std::size_t d = 0; d < means_.size(); ++d) row[d] = row[d] * scales_[d] + means_[d];
}

void Standardizer::Apply(RowMatrix* rows) const {
  if (!enabled_) return;
  for (Eigen::Index i = 0; i < rows->rows(); ++i) Apply(rows->row(i).data());
}

nlohmann::json Standardizer::ToJson() const {
  nlohmann::json stats = nlohmann::json::array();
  for (const RunningStats& s : stats_) stats.push_back(s.ToJson());
  return {{"names", names_}, {"enabled", enabled_}, {"frozen", frozen_}, {"stats", stats}};
}

Result<Standardizer> Standardizer::FromJson(const nlohmann::json& json) {
  const auto names = json.find("names");
  const auto enabled = json.find("enabled");
  const auto frozen = json.find("frozen");
  const auto stats = json.find("stats");
  if (!json.is_object() || names == json.end() || !names->is_array() || enabled == json.end() ||
      !enabled->is_boolean() || frozen == json.end() || !frozen->is_boolean() ||
      stats == json.end() || !stats->is_array()) {
    return Status::Corruption(
        "standardizer: expected an object with names (array), enabled, frozen (booleans) and "
        "stats (array)");
  }
  std::vector<std::string> dimension_names;
  for (const auto& name : *names) {
    if (!name.is_string()) return Status::Corruption("standardizer: names must be strings");
    dimension_names.push_back(name.get<std::string>());
  }
  if (stats->size() != dimension_names.size()) {
    return Status::Corruption("standardizer: " + std::to_string(dimension_names.size()) +
                              " names but " + std::to_string(stats->size()) + " stats");
  }
  SESTON_ASSIGN_OR_RETURN(Standardizer standardizer,
                          Create(std::move(dimension_names), enabled->get<bool>()));
  for (std::size_t d = 0; d < stats->size(); ++d) {
    SESTON_ASSIGN_OR_RETURN(standardizer.stats_[d], RunningStats::FromJson((*stats)[d]));
  }
  if (frozen->get<bool>()) SESTON_RETURN_IF_ERROR(standardizer.Freeze());
  return standardizer;
}

}  // namespace seston
