#include "two_sample_tests.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <string>

#include "cholesky.hpp"
#include "distributions.hpp"
#include "error.hpp"

namespace ellipsa::core {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

void check_group(const GroupSummary& g, Index p, const char* what) {
  if (g.mean.size() != p || g.covariance.rows() != p || g.covariance.cols() != p)
    throw Error(ErrorKind::Shape, std::string(what) + ": groups of different dimension");
  if (!(g.n >= 1.0)) throw Error(ErrorKind::Data, std::string(what) + ": a group has no rows");
}

// Columns whose variance is zero (or not positive) in s, for the message.
std::string flat_columns(const Eigen::MatrixXd& s) {
  std::string out;
  for (Index j = 0; j < s.rows(); ++j)
    if (!(s(j, j) > 0.0)) out += (out.empty() ? "" : ", ") + std::to_string(j + 1);
  return out.empty() ? "" : " (no spread in column " + out + ")";
}

}  // namespace

// Hotelling (1931); the F transformation of the two-sample statistic, e.g.
// Johnson & Wichern, Applied Multivariate Statistical Analysis, result 6.2.
TwoSampleT2 two_sample_t2(const GroupSummary& a, const GroupSummary& b) {
  const Index p = a.mean.size();
  if (p < 1) throw Error(ErrorKind::Shape, "two-sample T^2: no variables");
  check_group(a, p, "two-sample T^2");
  check_group(b, p, "two-sample T^2");
  const double n1 = a.n, n2 = b.n, pd = static_cast<double>(p);
  const double df2 = n1 + n2 - pd - 1.0;
  if (df2 < 1.0)
    throw Error(ErrorKind::Data, "two-sample T^2: needs n1 + n2 >= p + 2 rows, got " +
                                     std::to_string(static_cast<long long>(n1 + n2)) + " for p = " + std::to_string(p));
  const Eigen::MatrixXd pooled = ((n1 - 1.0) * a.covariance + (n2 - 1.0) * b.covariance) / (n1 + n2 - 2.0);
  const CholeskyFactor chol(pooled);
  if (!chol.ok())
    throw Error(ErrorKind::Singular,
                "two-sample T^2: the pooled covariance is not positive definite" + flat_columns(pooled));
  TwoSampleT2 out;
  out.t2 = n1 * n2 / (n1 + n2) * chol.whiten(b.mean - a.mean).squaredNorm();
  out.df1 = pd;
  out.df2 = df2;
  out.f = df2 / (pd * (n1 + n2 - 2.0)) * out.t2;
  out.p_value = f_sf(out.f, out.df1, out.df2);
  return out;
}

// Box (1949), Biometrika 36, 317-346: M and the chi-square approximation
// (1 - c1) M ~ chi2(p (p + 1) (g - 1) / 2) with
// c1 = (sum 1/(n_i - 1) - 1/(N - g)) (2p^2 + 3p - 1) / (6 (p + 1) (g - 1)).
BoxM box_m_from_log_determinants(const std::vector<double>& n, const std::vector<double>& log_det,
                                 double log_det_pooled, Index p) {
  if (n.size() != log_det.size()) throw Error(ErrorKind::Shape, "Box's M: one log-determinant per group");
  if (n.size() < 2) throw Error(ErrorKind::Argument, "Box's M: needs at least 2 groups");
  if (p < 1) throw Error(ErrorKind::Argument, "Box's M: p must be at least 1");
  const double g = static_cast<double>(n.size()), pd = static_cast<double>(p);
  double big_n = 0.0, inv_sum = 0.0, weighted_log_det = 0.0;
  for (std::size_t i = 0; i < n.size(); ++i) {
    if (!(n[i] - 1.0 >= pd))
      throw Error(ErrorKind::Data, "Box's M: group " + std::to_string(i + 1) +
                                       " needs at least p + 1 = " + std::to_string(p + 1) + " rows");
    if (!std::isfinite(log_det[i]))
      throw Error(ErrorKind::Singular, "Box's M: the covariance of group " + std::to_string(i + 1) + " is singular");
    big_n += n[i];
    inv_sum += 1.0 / (n[i] - 1.0);
    weighted_log_det += (n[i] - 1.0) * log_det[i];
  }
  if (!std::isfinite(log_det_pooled)) throw Error(ErrorKind::Singular, "Box's M: the pooled covariance is singular");
  BoxM out;
  out.m = (big_n - g) * log_det_pooled - weighted_log_det;
  out.correction = (inv_sum - 1.0 / (big_n - g)) * (2.0 * pd * pd + 3.0 * pd - 1.0) / (6.0 * (pd + 1.0) * (g - 1.0));
  out.chi2 = (1.0 - out.correction) * out.m;
  out.df = pd * (pd + 1.0) * (g - 1.0) / 2.0;
  // M >= 0 in exact arithmetic (the log-determinant is concave); rounding can
  // leave a tiny negative value when the covariances are equal.
  out.p_value = chi2_sf(std::max(out.chi2, 0.0), out.df);
  return out;
}

BoxM box_m(const std::vector<GroupSummary>& groups) {
  if (groups.size() < 2) throw Error(ErrorKind::Argument, "Box's M: needs at least 2 groups");
  const Index p = groups.front().mean.size();
  std::vector<double> n, log_det;
  Eigen::MatrixXd pooled = Eigen::MatrixXd::Zero(p, p);
  double big_n = 0.0;
  for (std::size_t i = 0; i < groups.size(); ++i) {
    const auto& g = groups[i];
    check_group(g, p, "Box's M");
    n.push_back(g.n);
    big_n += g.n;
    pooled += (g.n - 1.0) * g.covariance;
    const CholeskyFactor chol(g.covariance);
    if (!chol.ok() && g.n - 1.0 >= static_cast<double>(p))
      throw Error(ErrorKind::Singular, "Box's M: the covariance of group " + std::to_string(i + 1) +
                                           " is not positive definite" + flat_columns(g.covariance));
    log_det.push_back(chol.ok() ? chol.log_determinant() : -std::numeric_limits<double>::infinity());
  }
  pooled /= big_n - static_cast<double>(groups.size());
  const CholeskyFactor pooled_chol(pooled);
  const double pooled_log_det =
      pooled_chol.ok() ? pooled_chol.log_determinant() : -std::numeric_limits<double>::infinity();
  return box_m_from_log_determinants(n, log_det, pooled_log_det, p);
}

// Welch (1947), Biometrika 34, 28-35. The two-sided p-value uses
// P(|T_df| > |t|) = P(F(1, df) > t^2), an identity of the t and F laws.
WelchT welch_t(double n1, double mean1, double var1, double n2, double mean2, double var2) {
  if (!(n1 >= 2.0 && n2 >= 2.0)) throw Error(ErrorKind::Data, "Welch t: each group needs at least 2 rows");
  if (!(var1 >= 0.0 && var2 >= 0.0)) throw Error(ErrorKind::Argument, "Welch t: variances must be >= 0");
  WelchT out;
  const double a = var1 / n1, b = var2 / n2, se2 = a + b;
  if (!(se2 > 0.0)) {
    out.t = out.df = out.p_value = kNaN;
    return out;
  }
  out.t = (mean2 - mean1) / std::sqrt(se2);
  out.df = se2 * se2 / (a * a / (n1 - 1.0) + b * b / (n2 - 1.0));
  out.p_value = f_sf(out.t * out.t, 1.0, out.df);
  return out;
}

// Holm (1979), Scand. J. Statist. 6, 65-70, as adjusted p-values.
std::vector<double> holm_adjust(const std::vector<double>& p_values) {
  std::vector<std::size_t> order;
  for (std::size_t i = 0; i < p_values.size(); ++i) {
    const double v = p_values[i];
    if (std::isnan(v)) continue;
    if (!(v >= 0.0 && v <= 1.0)) throw Error(ErrorKind::Argument, "Holm: p-values must lie in [0, 1]");
    order.push_back(i);
  }
  // Stable, so tied p-values keep their input order (the result is the same).
  std::stable_sort(order.begin(), order.end(), [&](std::size_t x, std::size_t y) { return p_values[x] < p_values[y]; });
  std::vector<double> out(p_values.size(), kNaN);
  const double m = static_cast<double>(order.size());
  double running = 0.0;
  for (std::size_t k = 0; k < order.size(); ++k) {
    running = std::max(running, std::min(1.0, (m - static_cast<double>(k)) * p_values[order[k]]));
    out[order[k]] = running;
  }
  return out;
}

}  // namespace ellipsa::core
