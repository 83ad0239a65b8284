#include "radix_sort.hpp"

#include <bit>
#include <cstddef>

namespace ellipsa::core {

std::uint64_t order_key(double x) {
  const auto bits = std::bit_cast<std::uint64_t>(x);
  constexpr std::uint64_t kSign = std::uint64_t{1} << 63;
  return (bits & kSign) != 0 ? ~bits : bits | kSign;
}

double from_order_key(std::uint64_t k) {
  constexpr std::uint64_t kSign = std::uint64_t{1} << 63;
  return std::bit_cast<double>((k & kSign) != 0 ? k & ~kSign : ~k);
}

void radix_sort(std::vector<std::uint64_t>& keys, std::vector<std::uint32_t>* rows, RadixScratch& s) {
  constexpr int kBits = 11, kPasses = 6;  // 6 * 11 >= 64
  constexpr std::size_t kBuckets = std::size_t{1} << kBits;
  const std::size_t n = keys.size();
  if (n < 2) return;
  s.count.assign(kPasses * kBuckets, 0);
  std::uint32_t* count = s.count.data();
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint64_t k = keys[i];
    for (int d = 0; d < kPasses; ++d) ++count[d * kBuckets + ((k >> (d * kBits)) & (kBuckets - 1))];
  }
  s.keys.resize(n);
  if (rows != nullptr) s.rows.resize(n);
  for (int d = 0; d < kPasses; ++d) {
    std::uint32_t* c = count + d * kBuckets;
    const int shift = d * kBits;
    if (c[(keys[0] >> shift) & (kBuckets - 1)] == n) continue;  // one digit value: the order stands
    std::uint32_t sum = 0;
    for (std::size_t b = 0; b < kBuckets; ++b) {
      const std::uint32_t here = c[b];
      c[b] = sum;
      sum += here;
    }
    if (rows == nullptr) {
      for (std::size_t i = 0; i < n; ++i) s.keys[c[(keys[i] >> shift) & (kBuckets - 1)]++] = keys[i];
    } else {
      for (std::size_t i = 0; i < n; ++i) {
        const std::uint32_t to = c[(keys[i] >> shift) & (kBuckets - 1)]++;
        s.keys[to] = keys[i];
        s.rows[to] = (*rows)[i];
      }
      rows->swap(s.rows);
    }
    keys.swap(s.keys);
  }
}

}  // namespace ellipsa::core
