#include "ranks.hpp"

#include <algorithm>
#include <array>
#include <bit>

#include "error.hpp"

namespace ellipsa::core {
namespace {

// An unsigned key whose order is the order of the doubles (no NaN): flip all
// bits of a negative value, set the sign bit of a non-negative one. -0 is
// mapped to +0 first so that the two compare equal, as the doubles do.
std::uint64_t order_key(double x) {
  const std::uint64_t bits = std::bit_cast<std::uint64_t>(x == 0.0 ? 0.0 : x);
  constexpr std::uint64_t kSign = std::uint64_t{1} << 63;
  return (bits & kSign) != 0 ? ~bits : bits | kSign;
}

// Below this many values the comparison sort is as fast (a radix pass clears
// and scans 2048-entry histograms).
constexpr Eigen::Index kRadixMinRows = 4096;
constexpr int kDigitBits = 11;  // 6 passes over 64-bit keys; the histograms stay in L1
constexpr int kPasses = (64 + kDigitBits - 1) / kDigitBits;
constexpr std::size_t kBins = std::size_t{1} << kDigitBits;

// LSD radix sort of (key, row), stable, so equal keys stay in row order; a
// pass whose digit is the same for every key is skipped.
void radix_sort(RankWorkspace& w, std::size_t n) {
  std::vector<std::array<std::uint32_t, kBins>> count(kPasses);
  for (auto& c : count) c.fill(0);
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint64_t k = w.keys[i];
    for (int d = 0; d < kPasses; ++d) ++count[static_cast<std::size_t>(d)][(k >> (d * kDigitBits)) & (kBins - 1)];
  }
  w.keys2.resize(n);
  w.rows2.resize(n);
  for (int d = 0; d < kPasses; ++d) {
    auto& c = count[static_cast<std::size_t>(d)];
    const int shift = d * kDigitBits;
    if (c[(w.keys[0] >> shift) & (kBins - 1)] == n) continue;  // one digit value: the order stands
    std::uint32_t offset = 0;
    for (auto& b : c) {
      const std::uint32_t here = b;
      b = offset;
      offset += here;
    }
    for (std::size_t i = 0; i < n; ++i) {
      const std::uint64_t k = w.keys[i];
      const std::uint32_t to = c[(k >> shift) & (kBins - 1)]++;
      w.keys2[to] = k;
      w.rows2[to] = w.rows[i];
    }
    w.keys.swap(w.keys2);
    w.rows.swap(w.rows2);
  }
}

}  // namespace

long long average_ranks(const Eigen::Ref<const Eigen::VectorXd>& v, Eigen::Ref<Eigen::VectorXd> r, RankWorkspace& w) {
  const Eigen::Index n = v.size();
  if (r.size() != n) throw Error(ErrorKind::Argument, "ranks: the output has another length than the sample");
  if (n >= (Eigen::Index{1} << 32)) throw Error(ErrorKind::Argument, "ranks: more than 2^32 - 1 values");
  const auto un = static_cast<std::size_t>(n);
  w.keys.resize(un);
  w.rows.resize(un);
  for (std::size_t i = 0; i < un; ++i) {
    w.keys[i] = order_key(v(static_cast<Eigen::Index>(i)));
    w.rows[i] = static_cast<std::uint32_t>(i);
  }
  if (n >= kRadixMinRows) {
    radix_sort(w, un);
  } else {
    // Sort (key, row) pairs packed in the two vectors through an index order.
    std::vector<std::pair<std::uint64_t, std::uint32_t>> pairs(un);
    for (std::size_t i = 0; i < un; ++i) pairs[i] = {w.keys[i], w.rows[i]};
    std::sort(pairs.begin(), pairs.end());
    for (std::size_t i = 0; i < un; ++i) {
      w.keys[i] = pairs[i].first;
      w.rows[i] = pairs[i].second;
    }
  }
  long long tied_pairs = 0;
  for (std::size_t i = 0; i < un;) {
    std::size_t j = i;
    while (j + 1 < un && w.keys[j + 1] == w.keys[i]) ++j;
    const double average = 0.5 * static_cast<double>(i + j) + 1.0;
    for (std::size_t k = i; k <= j; ++k) r(static_cast<Eigen::Index>(w.rows[k])) = average;
    tied_pairs += static_cast<long long>(j - i) * static_cast<long long>(j - i + 1) / 2;
    i = j + 1;
  }
  return tied_pairs;
}

}  // namespace ellipsa::core
