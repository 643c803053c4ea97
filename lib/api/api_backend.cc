#include "api/api_backend.h"

#include <map>

namespace seston {

Result<SeriesView> ApiBackend::Series(std::optional<double> to_seconds, double step_seconds,
                                      int steps) {
  const double span = step_seconds * steps;
  // The whole span first: it settles where the series ends when `to` is not given.
  SESTON_ASSIGN_OR_RETURN(CountsView whole, Counts(std::nullopt, to_seconds, span));
  SeriesView series;
  series.to_seconds = whole.to_seconds;
  series.from_seconds = whole.to_seconds - span;
  series.step_seconds = step_seconds;
  std::map<std::uint32_t, std::string> labels;
  for (int i = 0; i < steps; ++i) {
    const double from = series.from_seconds + step_seconds * i;
    const double to = i + 1 == steps ? series.to_seconds : from + step_seconds;
    SESTON_ASSIGN_OR_RETURN(CountsView point, Counts(from, to, std::nullopt));
    for (const CountsView::Row& row : point.clusters) labels[row.id] = row.label;
    series.points.push_back(std::move(point));
  }
  for (auto& [id, label] : labels) series.clusters.emplace_back(id, std::move(label));
  return series;
}

RecentParticlesView ApiBackend::RecentParticles(std::size_t) { return {}; }

}  // namespace seston
