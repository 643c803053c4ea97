#include "seston-sim/random_source.h"

#include <cmath>
#include <numbers>

namespace seston::sim {

std::uint64_t RandomSource::DeriveSeed(std::uint64_t seed, std::uint64_t stream) {
  std::uint64_t z = seed + (stream + 1) * 0x9e3779b97f4a7c15ULL;
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

double RandomSource::Uniform() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }

double RandomSource::Normal() {
  if (has_spare_normal_) {
    has_spare_normal_ = false;
    return spare_normal_;
  }
  // 1 - Uniform() is in (0, 1], so the logarithm is finite.
  double radius = std::sqrt(-2.0 * std::log(1.0 - Uniform()));
  double angle = 2.0 * std::numbers::pi * Uniform();
  spare_normal_ = radius * std::sin(angle);
  has_spare_normal_ = true;
  return radius * std::cos(angle);
}

std::uint64_t RandomSource::Poisson(double mean) {
  constexpr double kPartMean = 30.0;
  std::uint64_t total = 0;
  while (mean > 0.0) {
    double part = mean < kPartMean ? mean : kPartMean;
    mean -= part;
    double limit = std::exp(-part);
    double product = Uniform();
    while (product >= limit) {
      ++total;
      product *= Uniform();
    }
  }
  return total;
}

}  // namespace seston::sim
