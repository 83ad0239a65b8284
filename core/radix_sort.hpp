// The one radix sort of the core: doubles (no NaN) ordered through their bit
// patterns, for the sorts on large samples that Qn (robust_scale.cpp) and
// DetMCD's ranks (ranks.cpp) need. An LSD radix sort with 11-bit digits (six
// passes cover 64 bits); a pass whose digit is the same for every key is
// skipped. Stable: equal keys keep their order.
#pragma once
#include <cstdint>
#include <vector>

namespace ellipsa::core {

// An unsigned key whose order is the order of the doubles: the sign bit set
// for a non-negative value, all bits flipped for a negative one. -0 gets a
// key below +0 (callers that want them equal map -0 to +0 first).
std::uint64_t order_key(double x);
// The double whose order_key() is k.
double from_order_key(std::uint64_t k);

// Scratch of radix_sort(); keeping it between calls saves the allocations.
struct RadixScratch {
  std::vector<std::uint64_t> keys;
  std::vector<std::uint32_t> rows, count;
};

// Sorts keys ascending, stably; when rows is not null it has keys.size()
// entries and travels with the keys (its entry i follows key i). n must be
// below 2^32.
void radix_sort(std::vector<std::uint64_t>& keys, std::vector<std::uint32_t>* rows, RadixScratch& scratch);

}  // namespace ellipsa::core
