// PortableRandom: the model's only source of randomness, identical on every platform.
//
// std::mt19937_64 is specified bit for bit by the C++ standard, but the standard
// distributions (uniform_real_distribution, uniform_int_distribution, generate_canonical)
// leave their algorithms to the library, so libstdc++ and libc++ turn the same engine
// output into different numbers. A checkpoint or a replay must give the same model for
// the same seed whatever library built the binary, so the conversions from the raw
// 64-bit output are written here.
//
// Thread safety: one instance per thread (it is a value with mutable state).
#pragma once

#include <cstddef>
#include <cstdint>
#include <random>

namespace seston {

class PortableRandom {
 public:
  explicit PortableRandom(std::uint64_t seed) : engine_(seed) {}

  // The raw next output of mt19937_64.
  std::uint64_t NextRaw() { return engine_(); }

  // Uniform on [0, 1): the top 53 bits of one output scaled by 2^-53, so every value is
  // a multiple of 2^-53 and 1.0 is never returned.
  double NextUnit() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }

  // Uniform integer in [0, n), n >= 1, without modulo bias: outputs in the incomplete
  // top block of 2^64 mod n values are rejected and drawn again.
  std::size_t NextBelow(std::size_t n) {
    const std::uint64_t bound = n;
    const std::uint64_t rejected = (0 - bound) % bound;  // == 2^64 mod n
    std::uint64_t raw = engine_();
    while (raw < rejected) raw = engine_();
    return static_cast<std::size_t>(raw % bound);
  }

 private:
  std::mt19937_64 engine_;
};

}  // namespace seston
