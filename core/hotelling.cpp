#include "hotelling.hpp"

#include <cmath>
#include <string>

#include "cholesky.hpp"
#include "classical.hpp"
#include "distributions.hpp"
#include "error.hpp"

namespace ellipsa::core {
namespace {

void check_limit_arguments(Index m, Index p, double alpha, Index min_m, const char* phase) {
  if (p < 1) throw Error(ErrorKind::Argument, std::string(phase) + " limit: p must be at least 1");
  if (m < min_m)
    throw Error(ErrorKind::Argument, std::string(phase) + " limit: needs m >= " + std::to_string(min_m) +
                                         " reference rows for p = " + std::to_string(p) + ", got " +
                                         std::to_string(m));
  if (!(alpha > 0.0 && alpha < 1.0))
    throw Error(ErrorKind::Argument, std::string(phase) + " limit: alpha must lie in (0, 1)");
}

}  // namespace

// Tracy, Young & Mason (1992): in phase I, m T^2 / (m-1)^2 ~ Beta(p/2, (m-p-1)/2).
double t2_phase1_limit(Index m, Index p, double alpha) {
  check_limit_arguments(m, p, alpha, p + 2, "phase I");
  const double md = static_cast<double>(m), pd = static_cast<double>(p);
  return (md - 1.0) * (md - 1.0) / md * beta_quantile(1.0 - alpha, pd / 2.0, (md - pd - 1.0) / 2.0);
}

// Tracy, Young & Mason (1992): in phase II, m(m-p) T^2 / (p(m+1)(m-1)) ~ F(p, m-p).
double t2_phase2_limit(Index m, Index p, double alpha) {
  check_limit_arguments(m, p, alpha, p + 1, "phase II");
  const double md = static_cast<double>(m), pd = static_cast<double>(p);
  return pd * (md + 1.0) * (md - 1.0) / (md * (md - pd)) * f_quantile(1.0 - alpha, pd, md - pd);
}

OneSampleT2 one_sample_t2(DataView x, const Eigen::VectorXd& mu0) {
  if (mu0.size() != x.cols())
    throw Error(ErrorKind::Shape, "one-sample T^2: hypothesised mean has " + std::to_string(mu0.size()) +
                                      " entries for " + std::to_string(x.cols()) + " columns");
  if (!mu0.allFinite()) throw Error(ErrorKind::Data, "one-sample T^2: hypothesised mean is not finite");
  const ClassicalEstimate fit = classical_estimate(x, Normalisation::ByCountMinusOne);
  const CholeskyFactor chol(fit.covariance);
  if (!chol.ok())
    throw Error(ErrorKind::Singular, "one-sample T^2: the sample covariance is not positive definite");
  const double n = static_cast<double>(x.rows()), p = static_cast<double>(x.cols());
  OneSampleT2 out;
  out.mean = fit.mean;
  out.covariance = fit.covariance;
  out.t2 = n * chol.whiten(fit.mean - mu0).squaredNorm();
  out.df1 = p;
  out.df2 = n - p;
  out.f = (n - p) / ((n - 1.0) * p) * out.t2;
  out.p_value = f_sf(out.f, out.df1, out.df2);
  return out;
}

}  // namespace ellipsa::core
