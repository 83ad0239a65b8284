#include "order_statistics.hpp"

#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <limits>

#include "error.hpp"

namespace ellipsa::core {

// Small inputs: std::nth_element on a copy. Large inputs: a deterministic
// strided sample brackets the k-th value (Floyd & Rivest 1975, "Expected time
// bounds for selection", CACM 18), one pass counts the values under the
// bracket and copies those inside it, and std::nth_element finishes on that
// small remainder. When the sample misleads (the k-th value falls outside the
// bracket), the full copy is selected instead: slower, never wrong.
OrderPair order_statistics(const double* v, Index n, Index k, std::vector<double>& buf) {
  if (!(k >= 0 && k < n)) throw Error(ErrorKind::Argument, "order statistic: rank outside the sample");
  if (k == 0) {
    const double lowest = *std::min_element(v, v + n);
    return {lowest, lowest};
  }
  constexpr Index kSmall = 8192;
  const auto on_copy = [&]() {
    buf.assign(v, v + n);
    const auto kth = buf.begin() + k;
    std::nth_element(buf.begin(), kth, buf.begin() + n);
    return OrderPair{*std::max_element(buf.begin(), kth), *kth};
  };
  if (n <= kSmall) return on_copy();
  constexpr Index kSample = 2048;
  buf.resize(static_cast<std::size_t>(n + kSample));
  double* sample = buf.data() + n;
  for (Index i = 0; i < kSample; ++i) sample[i] = v[(i * n) / kSample];
  // Rank of the k-th value inside the sample, +- 4 binomial standard deviations.
  const double q = (static_cast<double>(k) + 0.5) / static_cast<double>(n);
  const Index r = static_cast<Index>(q * kSample);
  const Index gap = 8 + static_cast<Index>(4.0 * std::sqrt(kSample * q * (1.0 - q)));
  const double inf = std::numeric_limits<double>::infinity();
  double lo = -inf, hi = inf;
  Index from = 0;
  if (r - gap >= 0) {
    std::nth_element(sample, sample + (r - gap), sample + kSample);
    lo = sample[r - gap];
    from = r - gap + 1;
  }
  if (r + gap < kSample) {
    std::nth_element(sample + from, sample + (r + gap), sample + kSample);
    hi = sample[r + gap];
  }
  Index under = 0, inside = 0;
  double* keep = buf.data();
  for (Index i = 0; i < n; ++i) {  // branch-free: the tests are unpredictable
    const double x = v[i];
    keep[inside] = x;
    under += x < lo;
    inside += (x >= lo) & (x <= hi);
  }
  if (k < under || k >= under + inside) return on_copy();
  double* kth = keep + (k - under);
  std::nth_element(keep, kth, keep + inside);
  if (kth != keep) return {*std::max_element(keep, kth), *kth};
  double under_max = -inf;  // rare: value k-1 lies under the bracket
  for (Index i = 0; i < n; ++i)
    if (v[i] < lo) under_max = std::max(under_max, v[i]);
  return {under_max, *kth};
}

double median_of(const double* v, Index n, std::vector<double>& buf) {
  if (n < 1) throw Error(ErrorKind::Data, "median of an empty sample");
  if (n == 1) return v[0];
  const OrderPair m = order_statistics(v, n, n / 2, buf);
  if (n % 2 == 1) return m.at;
  // Opposite signs: the sum cannot overflow (the difference can: -1e308 and
  // 1e308). Same signs: the difference cannot overflow (the sum can).
  if ((m.below < 0.0) != (m.at < 0.0)) return (m.below + m.at) / 2.0;
  return m.below + (m.at - m.below) / 2.0;
}

double mad_about(const double* v, Index n, double centre, std::vector<double>& dev, std::vector<double>& buf) {
  if (n < 1) throw Error(ErrorKind::Data, "MAD of an empty sample");
  dev.resize(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) dev[static_cast<std::size_t>(i)] = std::abs(v[i] - centre);
  static const double q75 = boost::math::quantile(boost::math::normal_distribution<double>(), 0.75);
  return median_of(dev.data(), n, buf) / q75;
}

}  // namespace ellipsa::core
