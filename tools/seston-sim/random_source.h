// RandomSource: the simulator's only source of randomness.
//
// std::mt19937_64 is specified bit-for-bit by the C++ standard, but the standard's
// distributions (uniform_real_distribution, normal_distribution, poisson_distribution)
// are not: libstdc++ and libc++ turn the same engine output into different numbers. The
// simulator promises byte-identical files for the same seed on any toolchain, so the
// conversions below are written here, each a published textbook method.
//
// Thread safety: one RandomSource per thread; it is a small value, copy it freely.
#pragma once

#include <cstdint>
#include <random>

namespace seston::sim {

class RandomSource {
 public:
  explicit RandomSource(std::uint64_t seed) : engine_(seed) {}

  // A seed for stream `stream` of `seed` (SplitMix64 finaliser), so sample n's numbers
  // depend only on (seed, n) and not on which samples were drawn before it.
  static std::uint64_t DeriveSeed(std::uint64_t seed, std::uint64_t stream);

  // Uniform on [0, 1) with 53 random bits.
  double Uniform();
  // Uniform on [low, high).
  double Uniform(double low, double high) { return low + (high - low) * Uniform(); }
  // Standard normal by the Box-Muller transform (both values used, the second cached).
  double Normal();
  // Poisson with mean `mean` >= 0. Knuth's product-of-uniforms method on parts of mean
  // at most 30 (a sum of independent Poisson variables is Poisson with the summed mean),
  // which is exact, avoids exp(-mean) underflowing, and costs O(mean) uniforms - the
  // same order as drawing the particles themselves.
  std::uint64_t Poisson(double mean);

 private:
  std::mt19937_64 engine_;
  bool has_spare_normal_ = false;
  double spare_normal_ = 0.0;
};

}  // namespace seston::sim
