#include "drift/page_hinkley.h"

#include <algorithm>
#include <cmath>
#include <string>

namespace seston {

Result<PageHinkley> PageHinkley::Create(PageHinkleyParameters parameters) {
  if (!(parameters.delta >= 0 && std::isfinite(parameters.delta))) {
    return Status::InvalidArgument("Page-Hinkley delta is " + std::to_string(parameters.delta) +
                                   "; must be finite and >= 0");
  }
  if (!(parameters.lambda > 0 && std::isfinite(parameters.lambda))) {
    return Status::InvalidArgument("Page-Hinkley lambda is " + std::to_string(parameters.lambda) +
                                   "; must be finite and > 0");
  }
  if (!(parameters.alpha > 0 && parameters.alpha <= 1)) {
    return Status::InvalidArgument("Page-Hinkley alpha is " + std::to_string(parameters.alpha) +
                                   "; must be in (0, 1]");
  }
  return PageHinkley(parameters);
}

bool PageHinkley::Add(double x) {
  if (!std::isfinite(x)) return alarm();
  ++n_;
  mean_ += (x - mean_) / static_cast<double>(n_);
  cumulative_ = parameters_.alpha * cumulative_ + (x - mean_ - parameters_.delta);
  minimum_ = std::min(minimum_, cumulative_);
  return alarm();
}

void PageHinkley::Reset() {
  n_ = 0;
  mean_ = 0;
  cumulative_ = 0;
  minimum_ = 0;
}

nlohmann::json PageHinkley::ToJson() const {
  return {{"n", n_}, {"mean", mean_}, {"cumulative", cumulative_}, {"minimum", minimum_}};
}

Result<PageHinkley> PageHinkley::FromJson(const nlohmann::json& state,
                                          PageHinkleyParameters parameters) {
  SESTON_ASSIGN_OR_RETURN(PageHinkley test, Create(parameters));
  try {
    test.n_ = state.at("n").get<std::uint64_t>();
    test.mean_ = state.at("mean").get<double>();
    test.cumulative_ = state.at("cumulative").get<double>();
    test.minimum_ = state.at("minimum").get<double>();
  } catch (const nlohmann::json::exception& error) {
    return Status::Corruption(std::string("Page-Hinkley state: ") + error.what());
  }
  if (!std::isfinite(test.mean_) || !std::isfinite(test.cumulative_) ||
      !std::isfinite(test.minimum_) || test.minimum_ > test.cumulative_ || test.minimum_ > 0) {
    return Status::Corruption(
        "Page-Hinkley state: mean, cumulative and minimum must be finite with "
        "minimum <= min(0, cumulative), got " +
        state.dump());
  }
  return test;
}

}  // namespace seston
