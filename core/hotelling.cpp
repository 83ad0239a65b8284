#include "hotelling.hpp"

#include <cmath>
#include <cstdio>
#include <string>

#include "cholesky.hpp"
#include "classical.hpp"
#include "distributions.hpp"
#include "error.hpp"

namespace ellipsa::core {
namespace {

std::string number_text(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

void check_limit_arguments(double m, Index p, double alpha, double min_m, const char* phase) {
  if (p < 1) throw Error(ErrorKind::Argument, std::string(phase) + " limit: p must be at least 1");
  if (!(m >= min_m))
    throw Error(ErrorKind::Argument, std::string(phase) + " limit: needs m >= " + number_text(min_m) +
                                         " reference rows for p = " + std::to_string(p) + ", got " + number_text(m));
  if (!(alpha > 0.0 && alpha < 1.0))
    throw Error(ErrorKind::Argument, std::string(phase) + " limit: alpha must lie in (0, 1)");
}

// Phase I needs m > p + 1 (integer counts: m >= p + 2), phase II m > p.
double phase1_min(Index p, bool integer) { return static_cast<double>(p) + (integer ? 2.0 : 1.0 + 1e-9); }
double phase2_min(Index p, bool integer) { return static_cast<double>(p) + (integer ? 1.0 : 1e-9); }

// Above this many reference rows both phases use their large-sample law, T^2 ~
// chi2(p): the F and Beta functions stop at 1e12 degrees of freedom
// (core/distributions.cpp kMaxShape), and there the exact laws differ from
// the limit by a relative O(p / m), below 1e-9 for p <= 1000, smaller than
// the incomplete beta's own error at such shapes.
constexpr double kChiSquareLimitRows = 1e12;

}  // namespace

// Tracy, Young & Mason (1992): in phase I, m T^2 / (m-1)^2 ~ Beta(p/2, (m-p-1)/2).
double t2_phase1_limit_real(double m, Index p, double alpha) {
  check_limit_arguments(m, p, alpha, phase1_min(p, false), "phase I");
  const double pd = static_cast<double>(p);
  if (m > kChiSquareLimitRows) return chi2_quantile(1.0 - alpha, pd);
  return (m - 1.0) * (m - 1.0) / m * beta_quantile(1.0 - alpha, pd / 2.0, (m - pd - 1.0) / 2.0);
}

double t2_phase1_sf(double t2, double m, Index p) {
  check_limit_arguments(m, p, 0.5, phase1_min(p, false), "phase I");
  const double pd = static_cast<double>(p), u = m * t2 / ((m - 1.0) * (m - 1.0));
  if (m > kChiSquareLimitRows) return chi2_sf(t2, pd);
  if (u >= 1.0) return 0.0;
  return beta_sf(std::max(u, 0.0), pd / 2.0, (m - pd - 1.0) / 2.0);
}

// Tracy, Young & Mason (1992): in phase II, m(m-p) T^2 / (p(m+1)(m-1)) ~ F(p, m-p).
double t2_phase2_limit_real(double m, Index p, double alpha) {
  check_limit_arguments(m, p, alpha, phase2_min(p, false), "phase II");
  const double pd = static_cast<double>(p);
  if (m > kChiSquareLimitRows) return chi2_quantile(1.0 - alpha, pd);
  return pd * (m + 1.0) * (m - 1.0) / (m * (m - pd)) * f_quantile(1.0 - alpha, pd, m - pd);
}

double t2_phase2_sf(double t2, double m, Index p) {
  check_limit_arguments(m, p, 0.5, phase2_min(p, false), "phase II");
  const double pd = static_cast<double>(p);
  if (m > kChiSquareLimitRows) return chi2_sf(t2, pd);
  return f_sf(std::max(t2, 0.0) * m * (m - pd) / (pd * (m + 1.0) * (m - 1.0)), pd, m - pd);
}

double t2_phase1_limit(Index m, Index p, double alpha) {
  check_limit_arguments(static_cast<double>(m), p, alpha, phase1_min(p, true), "phase I");
  return t2_phase1_limit_real(static_cast<double>(m), p, alpha);
}

double t2_phase2_limit(Index m, Index p, double alpha) {
  check_limit_arguments(static_cast<double>(m), p, alpha, phase2_min(p, true), "phase II");
  return t2_phase2_limit_real(static_cast<double>(m), p, alpha);
}

}  // namespace ellipsa::core
