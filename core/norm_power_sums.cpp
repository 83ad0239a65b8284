#include "norm_power_sums.hpp"

#include <algorithm>

#include "error.hpp"

namespace ellipsa::core {
namespace {
constexpr Index kChunkRows = 4096;
}

NormPowerSums norm_power_sums(DataView x, const Eigen::VectorXd& centre) {
  const Index p = x.cols();
  NormPowerSums s;
  s.rows = static_cast<double>(x.rows());
  s.centre = centre;
  s.first = Eigen::VectorXd::Zero(p);
  s.third = Eigen::VectorXd::Zero(p);
  Eigen::MatrixXd y;
  Eigen::VectorXd norms2;
  for (Index start = 0; start < x.rows(); start += kChunkRows) {
    const Index m = std::min(kChunkRows, x.rows() - start);
    y = x.middleRows(start, m);
    y.rowwise() -= centre.transpose();
    norms2 = y.rowwise().squaredNorm();
    s.first += y.colwise().sum().transpose();
    s.second += norms2.sum();
    s.third.noalias() += y.transpose() * norms2;
    s.fourth += norms2.squaredNorm();
  }
  return s;
}

NormPowerSums recentre(const NormPowerSums& s, const Eigen::MatrixXd& cross_about_mean, const Eigen::VectorXd& to) {
  const double n = s.rows;
  NormPowerSums r;
  r.rows = n;
  r.centre = to;
  if (n == 0.0) {
    r.first = Eigen::VectorXd::Zero(to.size());
    r.third = Eigen::VectorXd::Zero(to.size());
    return r;
  }
  const Eigen::VectorXd d = s.centre - to;  // y' = y + d
  // Cross-products about the old centre: sum y y' = cross_about_mean + first first' / n.
  const Eigen::VectorXd m2d = cross_about_mean * d + s.first * (s.first.dot(d) / n);
  const double dd = d.squaredNorm();
  const double ds1 = d.dot(s.first);  // sum a
  // sum |y'|^2     = second + 2 sum a + n |d|^2
  r.second = s.second + 2.0 * ds1 + n * dd;
  // sum y'         = first + n d
  r.first = s.first + n * d;
  // sum |y'|^2 y'  = third + second d + 2 M2 d + 2 (sum a) d + |d|^2 first + n |d|^2 d
  r.third = s.third + s.second * d + 2.0 * m2d + 2.0 * ds1 * d + dd * s.first + n * dd * d;
  // sum |y'|^4     = fourth + 4 d'M2 d + n |d|^4 + 4 d'third + 2 |d|^2 second + 4 |d|^2 sum a
  r.fourth = s.fourth + 4.0 * d.dot(m2d) + n * dd * dd + 4.0 * d.dot(s.third) + 2.0 * dd * s.second + 4.0 * dd * ds1;
  return r;
}

NormPowerSums combine(const NormPowerSums& a, const NormPowerSums& b) {
  if (a.rows == 0.0) return b;
  if (b.rows == 0.0) return a;
  // NaN entries count as equal: a centre overflowed by huge values (1e308 rows)
  // is NaN in both operands when both were moved to it; the overflow is then
  // reported where a model is made, not as a misuse here (found by fuzzing).
  if (a.centre.size() != b.centre.size() ||
      !(a.centre.array() == b.centre.array() || (a.centre.array().isNaN() && b.centre.array().isNaN())).all())
    throw Error(ErrorKind::Argument, "norm power sums: combining sums about different centres");
  NormPowerSums r;
  r.rows = a.rows + b.rows;
  r.centre = a.centre;
  r.first = a.first + b.first;
  r.second = a.second + b.second;
  r.third = a.third + b.third;
  r.fourth = a.fourth + b.fourth;
  return r;
}

void add_rows(MomentAccumulator& moments, NormPowerSums& norms, DataView x) {
  if (moments.rows() == 0) {
    moments.add(x);
    norms = norm_power_sums(x, moments.mean());
    return;
  }
  const Eigen::MatrixXd cross = moments.cross_products();
  moments.add(x);
  const Eigen::VectorXd& mean = moments.mean();
  norms = combine(recentre(norms, cross, mean), norm_power_sums(x, mean));
}

void merge_state(MomentAccumulator& moments, NormPowerSums& norms, const MomentAccumulator& other_moments,
                 const NormPowerSums& other_norms) {
  if (other_moments.rows() == 0) return;
  if (moments.rows() == 0) {
    moments = other_moments;
    norms = other_norms;
    return;
  }
  const Eigen::MatrixXd cross = moments.cross_products();
  moments.merge(other_moments);
  const Eigen::VectorXd& mean = moments.mean();
  norms = combine(recentre(norms, cross, mean), recentre(other_norms, other_moments.cross_products(), mean));
}

}  // namespace ellipsa::core
