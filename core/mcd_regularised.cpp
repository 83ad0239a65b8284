#include "mcd_regularised.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>

#include "distributions.hpp"
#include "error.hpp"
#include "mcd_deterministic.hpp"
#include "robust_scale.hpp"

namespace ellipsa::core {
namespace {

// Smallest rho in [0, 1) with cond(rho I + (1 - rho) A) <= kappa, for a
// symmetric positive semidefinite A with extreme eigenvalues lo <= hi:
// (rho + (1-rho) hi) = kappa (rho + (1-rho) lo) solved for rho.
double rho_for_condition(double lo, double hi, double kappa) {
  lo = std::max(lo, 0.0);
  const double excess = hi - kappa * lo;
  if (excess <= 0.0) return 0.0;
  return excess / ((kappa - 1.0) + excess);
}

struct Extremes {
  double lo, hi;
};
Extremes extreme_eigenvalues(const Eigen::MatrixXd& a) {
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(a, Eigen::EigenvaluesOnly);
  return {es.eigenvalues()(0), es.eigenvalues()(a.rows() - 1)};
}

struct RegularisedFit {
  std::vector<Index> rows;
  Eigen::VectorXd mean;
  Eigen::MatrixXd k;
  CholeskyFactor chol;
  double log_det = std::numeric_limits<double>::infinity();
};

RegularisedFit regularised_fit(const Eigen::MatrixXd& z, std::vector<Index> rows, double rho, double c) {
  mcd_detail::SubsetFit f = mcd_detail::fit_subset(z, std::move(rows));
  RegularisedFit r;
  r.rows = std::move(f.rows);
  r.mean = std::move(f.mean);
  r.k = (1.0 - rho) * c * f.cov;
  r.k.diagonal().array() += rho;
  if (!r.chol.compute(r.k))
    throw Error(ErrorKind::Singular, "MRCD: regularised scatter not positive definite (rho = 0 with singular S(H))");
  r.log_det = r.chol.log_determinant();
  return r;
}

// Boudt, Rousseeuw, Vanduffel & Verdonck (2020): C-step on K(H).
int regularised_c_steps(const Eigen::MatrixXd& z, Index h, double rho, double c, RegularisedFit& f, int max_steps) {
  int steps = 0;
  while (steps < max_steps) {
    ++steps;
    const Eigen::VectorXd d2 = f.chol.squared_distances(make_view(z), f.mean);
    std::vector<Index> rows = mcd_detail::smallest_h(d2, h, z);
    if (rows == f.rows) break;
    RegularisedFit next = regularised_fit(z, std::move(rows), rho, c);
    if (next.log_det > f.log_det) break;  // rounding between equal determinants
    f = std::move(next);
  }
  return steps;
}

// Start subset from a DetMCD starting scatter, regularised towards I.
std::vector<Index> start_subset(const Eigen::MatrixXd& z, const Eigen::MatrixXd& s, Index h, double kappa) {
  const Index p = z.cols();
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(s);
  const Eigen::MatrixXd& e = es.eigenvectors();
  const Eigen::MatrixXd b = z * e;
  Eigen::VectorXd lambda(p);
  for (Index l = 0; l < p; ++l) {
    const double q = qn_scale(b.col(l));
    lambda(l) = q * q;
  }
  const double rho = rho_for_condition(lambda.minCoeff(), lambda.maxCoeff(), kappa);
  const Eigen::VectorXd reg = (rho + (1.0 - rho) * lambda.array()).matrix();
  const Eigen::MatrixXd y = z * e * reg.cwiseSqrt().cwiseInverse().asDiagonal() * e.transpose();
  Eigen::RowVectorXd med(p);
  for (Index j = 0; j < p; ++j) med(j) = median(y.col(j));
  const Eigen::VectorXd d2 = (y.rowwise() - med).rowwise().squaredNorm();
  return mcd_detail::smallest_h(d2, h, z);
}

}  // namespace

RobustFit mrcd(DataView x, const MrcdOptions& opt) {
  mcd_detail::check_input(x, opt.alpha, false, "MRCD");
  if (!(opt.max_condition > 1.0)) throw Error(ErrorKind::Argument, "MRCD: max_condition must exceed 1");
  if (opt.max_csteps < 1) throw Error(ErrorKind::Argument, "MRCD: max_csteps must be positive");
  const Index n = x.rows(), p = x.cols();
  const Index h = std::clamp<Index>(static_cast<Index>(std::ceil(opt.alpha * static_cast<double>(n))), (n + 1) / 2, n);
  const double kappa = opt.max_condition;
  mcd_detail::report_progress(opt.progress, "standardise", 0.0);
  const mcd_detail::Standardised st = mcd_detail::standardise(x, mcd_detail::ColumnScale::Qn);
  const Eigen::MatrixXd& z = st.z;
  const double c = mcd_consistency_factor(h, n, p);

  mcd_detail::report_progress(opt.progress, "starting estimates", 0.05);
  const std::vector<Eigen::MatrixXd> starts = mcd_detail::deterministic_starts(z, p <= 20);
  std::vector<std::vector<Index>> subsets;
  double rho = 0.0;
  for (const auto& s : starts) {
    subsets.push_back(start_subset(z, s, h, kappa));
    const mcd_detail::SubsetFit f = mcd_detail::fit_subset(z, subsets.back());
    const Extremes ex = extreme_eigenvalues(c * f.cov);
    rho = std::max(rho, rho_for_condition(ex.lo, ex.hi, kappa));
  }
  std::optional<RegularisedFit> best;
  int iterations = 0;
  for (std::size_t k = 0; k < subsets.size(); ++k) {
    mcd_detail::report_progress(opt.progress, "C-steps",
                                0.2 + 0.7 * static_cast<double>(k) / static_cast<double>(subsets.size()));
    RegularisedFit f = regularised_fit(z, subsets[k], rho, c);
    iterations += regularised_c_steps(z, h, rho, c, f, opt.max_csteps);
    if (!best || f.log_det < best->log_det) best = std::move(f);
  }
  // Keep the bound on the final subset too.
  {
    const mcd_detail::SubsetFit f = mcd_detail::fit_subset(z, best->rows);
    const Extremes ex = extreme_eigenvalues(c * f.cov);
    const double need = rho_for_condition(ex.lo, ex.hi, kappa);
    if (need > rho) {
      rho = need;
      best = regularised_fit(z, best->rows, rho, c);
    }
  }
  RobustFit r;
  r.h = h;
  r.h_subset = best->rows;
  r.rho = rho;
  r.consistency_factor = c;
  r.reweight_level = opt.flag_level;
  r.target = "identity on median/Qn-standardised columns (diag(Qn^2) in original units)";
  const Extremes kx = extreme_eigenvalues(best->k);
  r.condition_number = kx.hi / kx.lo;
  r.raw_location = st.centre + st.scale.cwiseProduct(best->mean);
  r.raw_scatter = st.scale.asDiagonal() * best->k * st.scale.asDiagonal();
  r.raw_log_det = best->log_det + 2.0 * st.scale.array().log().sum();
  r.location = r.raw_location;
  r.raw_d2 = best->chol.squared_distances(make_view(z), best->mean);
  // The regularised scatter has no chi-square consistency factor (p >= n
  // leaves no room for one): it is rescaled so that the median distance of the
  // fitting rows is chi2_p(0.5), the usual median calibration (common
  // practice; no published factor for MRCD). The factor is reported as the
  // reweighting factor; the final scatter, the flags stored with the fit and
  // later scoring against the chi-square all use this one number.
  const double pd = static_cast<double>(p);
  const double med = median(r.raw_d2);
  r.reweight_factor = med > 0.0 && std::isfinite(med) ? med / chi2_quantile(0.5, pd) : 1.0;
  r.scatter = r.reweight_factor * r.raw_scatter;
  r.robust_d2 = r.raw_d2 / r.reweight_factor;
  const double cutoff = chi2_quantile(opt.flag_level, pd);
  r.outlier.resize(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) r.outlier[static_cast<std::size_t>(i)] = r.robust_d2(i) > cutoff;
  r.iterations = iterations;
  r.starts = static_cast<int>(subsets.size());
  mcd_detail::report_progress(opt.progress, "done", 1.0);
  return r;
}

}  // namespace ellipsa::core
