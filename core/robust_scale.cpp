#include "robust_scale.hpp"

#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <cmath>
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

// Smallest value whose cumulative weight (in increasing order) reaches half
// the total: quickselect, expected O(size). Reorders v.
double weighted_median(std::vector<std::pair<double, long long>>& v, long long total) {
  auto by_value = [](const auto& a, const auto& b) { return a.first < b.first; };
  std::size_t lo = 0, hi = v.size();
  long long before = 0;  // weight of everything left of lo
  for (;;) {
    const std::size_t mid = lo + (hi - lo) / 2;
    std::nth_element(v.begin() + static_cast<std::ptrdiff_t>(lo), v.begin() + static_cast<std::ptrdiff_t>(mid),
                     v.begin() + static_cast<std::ptrdiff_t>(hi), by_value);
    long long left = 0;
    for (std::size_t i = lo; i < mid; ++i) left += v[i].second;
    if (mid > lo && 2 * (before + left) >= total) {
      hi = mid;
    } else if (2 * (before + left + v[mid].second) >= total) {
      return v[mid].first;
    } else {
      before += left + v[mid].second;
      lo = mid + 1;
    }
  }
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

double pairwise_difference_order_statistic(const Eigen::Ref<const Eigen::VectorXd>& x,
                                           long long k) {
  const Index n = x.size();
  require_nonempty(n, "pairwise differences");
  const long long pairs = static_cast<long long>(n) * (n - 1) / 2;
  if (k < 1 || k > pairs)
    throw Error(ErrorKind::Argument, "pairwise difference order statistic: rank out of range");
  std::vector<double> y(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) y[static_cast<std::size_t>(i)] = x(i);
  std::sort(y.begin(), y.end());

  // Row i holds the differences y[j] - y[i], j > i, increasing in j; its
  // remaining candidates are the columns left[i] .. right[i] (inclusive).
  const std::size_t un = static_cast<std::size_t>(n);
  std::vector<long long> left(un), right(un), below(un), not_above(un);
  for (std::size_t i = 0; i < un; ++i) {
    left[i] = static_cast<long long>(i) + 1;
    right[i] = n - 1;
  }
  std::vector<std::pair<double, long long>> row_medians;
  row_medians.reserve(un);
  for (;;) {
    long long remaining = 0;
    row_medians.clear();
    for (std::size_t i = 0; i < un; ++i) {
      const long long w = right[i] - left[i] + 1;
      if (w <= 0) continue;
      remaining += w;
      const long long mid = left[i] + (w - 1) / 2;
      row_medians.emplace_back(y[static_cast<std::size_t>(mid)] - y[i], w);
    }
    if (remaining <= std::max<long long>(n, 64)) break;
    // Weighted median of the row medians: at least a quarter of the remaining
    // candidates lie on each side of it.
    const double trial = weighted_median(row_medians, remaining);
    // below[i]: first column j > i with y[j]-y[i] >= trial; not_above[i]: first
    // with y[j]-y[i] > trial. Both are non-decreasing in i (rounded differences
    // are monotone), so two pointers do each count in O(n).
    long long count_below = 0, count_not_above = 0;
    std::size_t jb = 1, ja = 1;
    for (std::size_t i = 0; i < un; ++i) {
      jb = std::max(jb, i + 1);
      while (jb < un && y[jb] - y[i] < trial) ++jb;
      ja = std::max(ja, i + 1);
      while (ja < un && y[ja] - y[i] <= trial) ++ja;
      below[i] = static_cast<long long>(jb);
      not_above[i] = static_cast<long long>(ja);
      count_below += static_cast<long long>(jb - i - 1);
      count_not_above += static_cast<long long>(ja - i - 1);
    }
    if (k <= count_below) {
      for (std::size_t i = 0; i < un; ++i) right[i] = std::min(right[i], below[i] - 1);
    } else if (k <= count_not_above) {
      return trial;
    } else {
      for (std::size_t i = 0; i < un; ++i) left[i] = std::max(left[i], not_above[i]);
    }
  }
  // Few candidates left: everything left of the windows is smaller than the
  // answer, everything right of them larger.
  long long smaller = 0;
  std::vector<double> candidates;
  for (std::size_t i = 0; i < un; ++i) {
    smaller += left[i] - static_cast<long long>(i) - 1;
    for (long long j = left[i]; j <= right[i]; ++j)
      candidates.push_back(y[static_cast<std::size_t>(j)] - y[i]);
  }
  const long long rank = k - smaller;  // 1-based among the candidates
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
