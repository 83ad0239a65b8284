// The one random source of the core: one 64-bit seed gives the same draws on
// every platform and standard library (FAST-MCD's subsets, k-means++ starts,
// the permutations of the robust comparison).
#pragma once
#include <cstdint>
#include <random>

namespace ellipsa::core {

// Draws built directly on std::mt19937_64, whose output sequence the C++ standard
// fixes. The standard distributions (uniform_int_distribution, ...) are avoided on
// purpose: their algorithms differ between standard libraries.
class PortableRandom {
 public:
  explicit PortableRandom(std::uint64_t seed) : engine_(seed) {}
  // Uniform on [0, 1) with 53 random bits (the top bits of one 64-bit draw).
  double uniform() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }
  // Uniform integer in [0, n), n >= 1, without modulo bias: a draw v is
  // returned as v mod n unless it falls in the incomplete last block of
  // 2^64 mod n values, which is redrawn.
  std::uint64_t below(std::uint64_t n);
  // A fresh 64-bit value, e.g. to seed an independent stream.
  std::uint64_t next() { return engine_(); }

 private:
  std::mt19937_64 engine_;
};

}  // namespace ellipsa::core
