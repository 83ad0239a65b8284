#include "ranks.hpp"

#include <algorithm>
#include <utility>

#include "error.hpp"

namespace ellipsa::core {
namespace {

// Below this many values the comparison sort is as fast (a radix sort clears
// and scans six 2048-entry histograms).
constexpr Eigen::Index kRadixMinRows = 4096;

}  // namespace

void RankWorkspace::reserve(Eigen::Index n) {
  const auto un = static_cast<std::size_t>(n);
  keys.reserve(un);
  rows.reserve(un);
  radix.keys.reserve(un);
  radix.rows.reserve(un);
  radix.count.reserve(6 * 2048);
}

long long average_ranks(const Eigen::Ref<const Eigen::VectorXd>& v, Eigen::Ref<Eigen::VectorXd> r, RankWorkspace& w) {
  const Eigen::Index n = v.size();
  if (r.size() != n) throw Error(ErrorKind::Argument, "ranks: the output has another length than the sample");
  if (n >= (Eigen::Index{1} << 32)) throw Error(ErrorKind::Argument, "ranks: more than 2^32 - 1 values");
  const auto un = static_cast<std::size_t>(n);
  w.keys.resize(un);
  w.rows.resize(un);
  for (std::size_t i = 0; i < un; ++i) {
    const double x = v(static_cast<Eigen::Index>(i));
    w.keys[i] = order_key(x == 0.0 ? 0.0 : x);  // -0 and +0 tie, as they compare
    w.rows[i] = static_cast<std::uint32_t>(i);
  }
  if (n >= kRadixMinRows) {
    radix_sort(w.keys, &w.rows, w.radix);
  } else {
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
