#include "robust_scale.hpp"

#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <random>
#include <utility>
#include <vector>

#include "error.hpp"

namespace ellipsa::core {
namespace {

void require_nonempty(Index n, const char* what) {
  if (n <= 0) throw Error(ErrorKind::Data, std::string(what) + " of an empty sample");
}

double median_in_place(std::vector<double>& v) {
  const std::size_t n = v.size();
  const std::size_t mid = n / 2;
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(mid), v.end());
  const double upper = v[mid];
  if (n % 2 == 1) return upper;
  const double lower = *std::max_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(mid));
  // Midpoint written so that it cannot overflow for huge values of equal sign.
  return lower + (upper - lower) / 2.0;
}

}  // namespace

double median(const Eigen::Ref<const Eigen::VectorXd>& x) {
  require_nonempty(x.size(), "median");
  std::vector<double> v(x.data(), x.data() + x.size());
  if (x.innerStride() != 1)
    for (Index i = 0; i < x.size(); ++i) v[static_cast<std::size_t>(i)] = x(i);
  return median_in_place(v);
}

double mad(const Eigen::Ref<const Eigen::VectorXd>& x) {
  require_nonempty(x.size(), "MAD");
  const double m = median(x);
  std::vector<double> v(static_cast<std::size_t>(x.size()));
  for (Index i = 0; i < x.size(); ++i) v[static_cast<std::size_t>(i)] = std::abs(x(i) - m);
  const boost::math::normal_distribution<double> z;
  return median_in_place(v) / boost::math::quantile(z, 0.75);
}

double qn_consistency_constant() {
  const boost::math::normal_distribution<double> z;
  return 1.0 / (std::sqrt(2.0) * boost::math::quantile(z, 0.625));
}

namespace {

// Ascending sort of finite doubles. Below a few hundred values std::sort;
// above, an LSD radix sort on order-preserving 64-bit keys (the IEEE bit
// pattern with the sign bit flipped for non-negative values and all bits
// flipped for negative ones), 11 bits per pass, passes whose digit is the same
// for every key skipped. -0.0 sorts before +0.0; both compare equal, so the
// sorted sequence of values is the one std::sort gives.
void sort_values(std::vector<double>& v) {
  const std::size_t n = v.size();
  if (n < 512) {
    std::sort(v.begin(), v.end());
    return;
  }
  constexpr int kBits = 11, kPasses = 6;  // 6 * 11 >= 64
  constexpr std::size_t kBuckets = std::size_t{1} << kBits;
  std::vector<std::uint64_t> key(n), tmp(n);
  std::vector<std::size_t> count(kPasses * kBuckets, 0);
  for (std::size_t i = 0; i < n; ++i) {
    std::uint64_t b;
    std::memcpy(&b, &v[i], sizeof b);
    b = (b >> 63) ? ~b : (b | (std::uint64_t{1} << 63));
    key[i] = b;
    for (int d = 0; d < kPasses; ++d) ++count[d * kBuckets + ((b >> (d * kBits)) & (kBuckets - 1))];
  }
  for (int d = 0; d < kPasses; ++d) {
    std::size_t* c = count.data() + d * kBuckets;
    if (c[(key[0] >> (d * kBits)) & (kBuckets - 1)] == n) continue;  // one digit value: no-op pass
    std::size_t sum = 0;
    for (std::size_t b = 0; b < kBuckets; ++b) {
      const std::size_t t = c[b];
      c[b] = sum;
      sum += t;
    }
    for (std::size_t i = 0; i < n; ++i) tmp[c[(key[i] >> (d * kBits)) & (kBuckets - 1)]++] = key[i];
    key.swap(tmp);
  }
  for (std::size_t i = 0; i < n; ++i) {
    std::uint64_t b = key[i];
    b = (b >> 63) ? (b & ~(std::uint64_t{1} << 63)) : ~b;
    std::memcpy(&v[i], &b, sizeof b);
  }
}

// Candidate pairs (i, j), i < j, of the implicit matrix d(i, j) = y[j] - y[i]
// over sorted y: row i keeps columns lo[i] .. hi[i] - 1. Rows are increasing
// in j and (computed differences being monotone in both arguments) columns are
// decreasing in i, so every "first column with d >= t" is non-decreasing in i
// and lo, hi stay non-decreasing in i: one forward sweep finds all of them.
struct PairWindows {
  const std::vector<double>& y;
  std::vector<Index> lo, hi;
  long long left_of_windows = 0;  // pairs excluded on the small side
  long long size = 0;             // pairs inside the windows

  // sorted: ascending values followed by one +inf sentinel.
  explicit PairWindows(const std::vector<double>& sorted) : y(sorted) {
    const Index n = static_cast<Index>(y.size()) - 1;
    lo.resize(static_cast<std::size_t>(n));
    hi.assign(static_cast<std::size_t>(n), n);
    for (Index i = 0; i < n; ++i) lo[static_cast<std::size_t>(i)] = i + 1;
    size = static_cast<long long>(n) * (n - 1) / 2;
  }

  // For every row the first column in its window with d >= t (strict = false)
  // or d > t (strict = true), clamped to the window; returns their total
  // offset from lo, i.e. the number of candidates below t (or <= t).
  // The first such column over all j is non-decreasing in i, so a merge-like
  // walk of at most 2n steps finds all of them; it is written without
  // data-dependent branches (y holds a +inf sentinel at index n). The rows are
  // cut into kChains ranges walked in lock step: each walk is one long chain
  // of dependent loads, and interleaving independent chains hides the latency.
  template <bool strict>
  long long split(double t, std::vector<Index>& at) const {
    const std::size_t n = y.size() - 1;
    at.resize(n);
    const double* yy = y.data();
    auto keep_going = [t](double d) { return strict ? (d <= t) : (d < t); };
    constexpr int kChains = 4;
    std::size_t i[kChains], end[kChains], j[kChains];
    for (int c = 0; c < kChains; ++c) {
      i[c] = n * static_cast<std::size_t>(c) / kChains;
      end[c] = n * static_cast<std::size_t>(c + 1) / kChains;
      // Start column of the chain: the first j with !keep_going(y[j] - y[i]).
      const double yi = i[c] < n ? yy[i[c]] : 0.0;
      j[c] = static_cast<std::size_t>(
          std::partition_point(yy, yy + n, [&](double yj) { return keep_going(yj - yi); }) - yy);
    }
    auto step = [&](int c) {
      const bool advance_j = (j[c] < n) & keep_going(yy[j[c]] - yy[i[c]]);
      at[i[c]] = static_cast<Index>(j[c]);
      j[c] += advance_j;
      i[c] += !advance_j;
    };
    for (;;) {
      bool all_running = true;
      for (int c = 0; c < kChains; ++c) all_running = all_running && i[c] < end[c];
      if (!all_running) break;
      for (int c = 0; c < kChains; ++c) step(c);
    }
    for (int c = 0; c < kChains; ++c)
      while (i[c] < end[c]) step(c);
    long long total = 0;
    for (std::size_t r = 0; r < n; ++r) {
      const Index cut = std::clamp(at[r], lo[r], hi[r]);
      at[r] = cut;
      total += cut - lo[r];
    }
    return total;
  }
};

}  // namespace

// Selection of the k-th smallest pairwise difference in the implicit sorted
// matrix of Croux & Rousseeuw (1992, "Time-efficient algorithms for two highly
// robust estimators of scale"): after one sort, no difference is stored; each
// round brackets the answer by two trial values and counts the differences
// below each trial value in O(n) with a monotone sweep. Croux & Rousseeuw take
// the weighted median of the row medians as the trial value, which removes at
// least a quarter of the candidates per round (about log_{4/3}(n^2) rounds).
// Here the trial values come from a random sample of the remaining candidates
// instead, placed a few standard errors either side of the target's expected
// sample rank (the sampling idea of Floyd & Rivest 1975, "Expected time bounds
// for selection"): each round keeps about 1/15 of the candidates, so a handful
// of O(n) sweeps suffice. The sample only steers which counts are taken; the
// result is the exact order statistic whatever it draws, and the generator has
// a fixed seed, so the work done is also reproducible.
double pairwise_difference_order_statistic(const Eigen::Ref<const Eigen::VectorXd>& x,
                                           long long k) {
  const Index n = x.size();
  require_nonempty(n, "pairwise differences");
  const long long pairs = static_cast<long long>(n) * (n - 1) / 2;
  if (k < 1 || k > pairs)
    throw Error(ErrorKind::Argument, "pairwise difference order statistic: rank out of range");
  std::vector<double> y(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) y[static_cast<std::size_t>(i)] = x(i);
  sort_values(y);
  y.push_back(std::numeric_limits<double>::infinity());  // sentinel for the sweeps
  const std::size_t un = static_cast<std::size_t>(n);

  PairWindows w(y);
  std::vector<Index> cut_lo, cut_hi;
  std::vector<long long> positions;
  std::vector<double> sample;
  std::mt19937_64 engine(0x51a7c0de5eedULL);
  // sample_size: 4096 (each round keeps about 1/20 of the candidates) for
  // large n; smaller for small n, where sampling would cost more than sweeps.
  const long long sample_size = std::clamp<long long>(static_cast<long long>(n) / 8, 256, 4096);
  const long long enumerate_below = std::max<long long>(static_cast<long long>(n), 16 * sample_size);
  while (w.size > enumerate_below) {
    // Uniform sample of the candidates: sorted random positions in [0, size),
    // located by one sweep over the rows' cumulative window widths.
    positions.clear();
    for (long long s = 0; s < sample_size; ++s)
      // Modulo bias (< size / 2^64) only nudges the sample, never the result.
      positions.push_back(static_cast<long long>(engine() % static_cast<std::uint64_t>(w.size)));
    std::sort(positions.begin(), positions.end());
    sample.clear();
    {
      std::size_t row = 0;
      long long row_start = 0;  // position of the first candidate of `row`
      for (long long u : positions) {
        while (u >= row_start + (w.hi[row] - w.lo[row])) {
          row_start += w.hi[row] - w.lo[row];
          ++row;
        }
        const Index col = w.lo[row] + static_cast<Index>(u - row_start);
        sample.push_back(y[static_cast<std::size_t>(col)] - y[row]);
      }
    }
    // Target rank among the candidates, and its expected place in the sample
    // +- 3.5 standard deviations.
    const long long rank = k - w.left_of_windows;  // 1-based among the candidates
    const double f = static_cast<double>(rank) / static_cast<double>(w.size);
    const double centre = f * static_cast<double>(sample_size);
    const double spread = 3.5 * std::sqrt(static_cast<double>(sample_size) * f * (1.0 - f)) + 2.0;
    const long long s_lo = static_cast<long long>(std::floor(centre - spread));
    const long long s_hi = static_cast<long long>(std::ceil(centre + spread));
    const bool have_lo = s_lo >= 0, have_hi = s_hi < sample_size;
    double t_lo = 0.0, t_hi = 0.0;
    if (have_lo) {
      std::nth_element(sample.begin(), sample.begin() + s_lo, sample.end());
      t_lo = sample[static_cast<std::size_t>(s_lo)];
    }
    if (have_hi) {
      std::nth_element(sample.begin(), sample.begin() + s_hi, sample.end());
      t_hi = sample[static_cast<std::size_t>(s_hi)];
    }
    // below: candidates < t_lo; not_above: candidates <= t_hi.
    const long long below = have_lo ? w.split<false>(t_lo, cut_lo) : 0;
    const long long not_above = have_hi ? w.split<true>(t_hi, cut_hi) : w.size;
    if (rank <= below) {  // answer < t_lo: keep the candidates below t_lo
      w.hi.swap(cut_lo);
      w.size = below;
    } else if (rank > not_above) {  // answer > t_hi: keep those above t_hi
      w.lo.swap(cut_hi);
      w.left_of_windows += not_above;
      w.size -= not_above;
    } else if (not_above - below < w.size) {  // t_lo <= answer <= t_hi: keep those between
      if (have_hi) w.hi.swap(cut_hi);
      if (have_lo) w.lo.swap(cut_lo);
      w.left_of_windows += below;
      w.size = not_above - below;
    } else {
      // No progress: every candidate lies in [t_lo, t_hi], which happens with
      // heavy ties. Split at one sampled value t instead: the answer is below
      // t, equal to t, or above it, and either case removes every copy of t.
      const std::size_t mid = static_cast<std::size_t>(std::clamp<long long>(static_cast<long long>(centre), 0, sample_size - 1));
      std::nth_element(sample.begin(), sample.begin() + static_cast<std::ptrdiff_t>(mid), sample.end());
      const double t = sample[mid];
      const long long lt = w.split<false>(t, cut_lo), le = w.split<true>(t, cut_hi);
      if (rank > lt && rank <= le) return t;
      if (rank <= lt) {
        w.hi.swap(cut_lo);
        w.size = lt;
      } else {
        w.lo.swap(cut_hi);
        w.left_of_windows += le;
        w.size -= le;
      }
    }
  }
  // Few candidates left: everything left of the windows is smaller than the
  // answer, everything right of them larger.
  std::vector<double> candidates;
  candidates.reserve(static_cast<std::size_t>(w.size));
  for (std::size_t i = 0; i < un; ++i)
    for (Index j = w.lo[i]; j < w.hi[i]; ++j) candidates.push_back(y[static_cast<std::size_t>(j)] - y[i]);
  const long long rank = k - w.left_of_windows;
  if (rank < 1 || rank > static_cast<long long>(candidates.size()))
    throw Error(ErrorKind::Data, "pairwise difference selection lost its rank (internal error)");
  auto nth = candidates.begin() + static_cast<std::ptrdiff_t>(rank - 1);
  std::nth_element(candidates.begin(), nth, candidates.end());
  return *nth;
}

double qn_scale(const Eigen::Ref<const Eigen::VectorXd>& x) {
  const Index n = x.size();
  require_nonempty(n, "Qn");
  if (n == 1) return 0.0;
  const long long h = n / 2 + 1;
  const long long k = h * (h - 1) / 2;
  return qn_consistency_constant() * pairwise_difference_order_statistic(x, k);
}

}  // namespace ellipsa::core
