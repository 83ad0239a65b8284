#include "distributions.hpp"

#include <boost/math/distributions/beta.hpp>
#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/fisher_f.hpp>
#include <boost/math/tools/roots.hpp>
#include <cmath>
#include <cstdint>
#include <limits>
#include <string>

#include "error.hpp"

namespace ellipsa::core {
namespace {

// Errors become exceptions of our own type below; Boost must not pick the
// behaviour (its default throws std::domain_error / overflow_error).
using namespace boost::math::policies;
using Policy = policy<domain_error<errno_on_error>, overflow_error<errno_on_error>, evaluation_error<errno_on_error>,
                      promote_double<false>>;

void check_positive(double v, const char* name) {
  if (!(std::isfinite(v) && v > 0.0))
    throw Error(ErrorKind::Argument, std::string(name) + " must be finite and positive");
}
void check_probability(double q, bool allow_one) {
  if (!(q >= 0.0 && (allow_one ? q <= 1.0 : q < 1.0)))
    throw Error(ErrorKind::Argument, allow_one ? "probability must lie in [0, 1]" : "probability must lie in [0, 1)");
}
void check_x(double x) {
  if (std::isnan(x)) throw Error(ErrorKind::Argument, "argument is NaN");
}

// Boost 1.74's inverse incomplete beta can miss deep in the lower tail (Beta(0.5, 2)
// at q = 1e-12 returns 2.25e-27; the quantile is 4.44e-25, as R's qbeta and the
// closed form (q/1.5)^2 agree). The answer is therefore checked against the cdf
// and, when the cdf at it is off by more than 1e-10 relative, searched again with
// a bracketed root finder on the cdf over [0, 1].
template <class Distribution>
double checked_unit_quantile(const Distribution& dist, double q, double x) {
  if (!(q > 0.0 && q < 1.0)) return x;
  const double at = cdf(dist, x);
  if (std::isfinite(x) && std::abs(at - q) <= 1e-10 * q) return x;
  boost::math::tools::eps_tolerance<double> tol(std::numeric_limits<double>::digits - 3);
  std::uintmax_t iterations = 300;
  const auto [lo, hi] = boost::math::tools::toms748_solve([&](double t) { return cdf(dist, t) - q; }, 0.0, 1.0, -q,
                                                          1.0 - q, tol, iterations);
  return 0.5 * (lo + hi);
}

}  // namespace

double chi2_cdf(double x, double df) {
  check_positive(df, "degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 0.0;
  if (std::isinf(x)) return 1.0;
  return cdf(boost::math::chi_squared_distribution<double, Policy>(df), x);
}

namespace {

// Scoring asks for P(chi2(df) > x) once per row with a whole df (the observed
// coordinates), where Boost's incomplete gamma cost about 5 times the
// distance itself. For whole df the upper tail has a closed form (repeated
// integration by parts of the incomplete gamma integral):
//   df = 2m:     Q = e^{-y} sum_{i<m} y^i / i!,                   y = x / 2,
//   df = 2m + 1: Q = erfc(sqrt y) + e^{-y} sum_{i<m} y^{i+1/2} / Gamma(i + 3/2).
// Every term is positive, so the sum keeps its relative accuracy (no
// cancellation); terms are built by recurrence from e^{-y}. Used for df <=
// kClosedFormMaxDf and y < kClosedFormMaxHalfX, where e^{-y} (>= 1e-304)
// and every term stay normal doubles; elsewhere Boost. Agreement with Boost's
// incomplete gamma over that range: tests/core/test_distributions.cpp.
constexpr double kClosedFormMaxDf = 100.0;
constexpr double kClosedFormMaxHalfX = 700.0;

double chi2_sf_whole_df(double x, int df) {
  const double y = 0.5 * x;
  const int m = df / 2;
  double term, sum;
  if (df % 2 == 0) {
    term = std::exp(-y);  // y^0 / 0!
    sum = term;
    for (int i = 1; i < m; ++i) {
      term *= y / i;
      sum += term;
    }
    return sum;
  }
  const double root = std::sqrt(y);
  sum = std::erfc(root);
  if (m == 0) return sum;
  // y^{1/2} e^{-y} / Gamma(3/2) = 2 sqrt(y / pi) e^{-y}; then * y / (i + 1/2).
  term = 2.0 * root * std::exp(-y) / std::sqrt(3.14159265358979323846);
  double tail = term;
  for (int i = 1; i < m; ++i) {
    term *= y / (i + 0.5);
    tail += term;
  }
  return sum + tail;
}

}  // namespace

double chi2_sf(double x, double df) {
  check_positive(df, "degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 1.0;
  if (std::isinf(x)) return 0.0;
  if (df <= kClosedFormMaxDf && df == std::floor(df) && 0.5 * x < kClosedFormMaxHalfX)
    return chi2_sf_whole_df(x, static_cast<int>(df));
  return cdf(complement(boost::math::chi_squared_distribution<double, Policy>(df), x));
}

double chi2_quantile(double q, double df) {
  check_positive(df, "degrees of freedom");
  check_probability(q, false);
  if (q == 0.0) return 0.0;
  return quantile(boost::math::chi_squared_distribution<double, Policy>(df), q);
}

double f_cdf(double x, double df1, double df2) {
  check_positive(df1, "numerator degrees of freedom");
  check_positive(df2, "denominator degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 0.0;
  if (std::isinf(x)) return 1.0;
  // Boost forms df1*x/(df1*x + df2), which rounds to 1 far in the upper tail
  // (F(1,1) at 4e17 gives exactly 1 for 1 - 1e-9); there the complement is
  // computed directly and subtracted from 1, which is exact to half an ulp.
  const boost::math::fisher_f_distribution<double, Policy> dist(df1, df2);
  const double lower = cdf(dist, x);
  return lower > 0.5 ? 1.0 - cdf(complement(dist, x)) : lower;
}

namespace {

// The default scoring reference of a classical or shrinkage model is the F
// law of a new row (Hotelling T^2, phase II), asked once per row with df1 =
// p. For even df1 the tail has a closed form: P(F > x) = I_y(a, b) with y =
// df2 / (df2 + df1 x), a = df2 / 2, b = df1 / 2 a whole number, and
//   I_y(a, b) = y^a sum_{j<b} (a)_j / j! (1 - y)^j
// (repeated integration by parts of the incomplete beta integral; (a)_j the
// rising factorial). Positive terms, built by recurrence from y^a = exp(-a
// log1p(df1 x / df2)), with 1 - y formed directly (no cancellation). Used for
// df1 <= kClosedFormMaxDf and a log y > -kClosedFormMaxHalfX (y^a a normal
// double); elsewhere Boost. Agreement with Boost: tests/core/test_distributions.cpp.
// minus_log_y_a = a log1p(df1 x / df2) = -log(y^a), computed once by the caller.
double f_sf_even_df1(double ratio, double minus_log_y_a, int df1, double df2) {
  const double a = 0.5 * df2;
  const double one_minus_y = ratio / (1.0 + ratio);
  double term = std::exp(-minus_log_y_a), sum = term;
  for (int j = 1; j < df1 / 2; ++j) {
    term *= (a + (j - 1)) / j * one_minus_y;
    sum += term;
  }
  return sum;
}

}  // namespace

double f_sf(double x, double df1, double df2) {
  check_positive(df1, "numerator degrees of freedom");
  check_positive(df2, "denominator degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 1.0;
  if (std::isinf(x)) return 0.0;
  if (df1 <= kClosedFormMaxDf && df1 == 2.0 * std::floor(0.5 * df1)) {
    const double ratio = df1 * x / df2;
    const double minus_log_y_a = 0.5 * df2 * std::log1p(ratio);
    if (minus_log_y_a < kClosedFormMaxHalfX) return f_sf_even_df1(ratio, minus_log_y_a, static_cast<int>(df1), df2);
  }
  return cdf(complement(boost::math::fisher_f_distribution<double, Policy>(df1, df2), x));
}

double f_quantile(double q, double df1, double df2) {
  check_positive(df1, "numerator degrees of freedom");
  check_positive(df2, "denominator degrees of freedom");
  check_probability(q, false);
  if (q == 0.0) return 0.0;
  const double x = quantile(boost::math::fisher_f_distribution<double, Policy>(df1, df2), q);
  if (std::isfinite(x) && std::abs(f_cdf(x, df1, df2) - q) <= 1e-10 * q) return x;
  // Same inverse-beta miss as above (F(1, 4) at q = 1e-12): go through the
  // checked Beta quantile, F = (df2/df1) y/(1-y) with y ~ Beta(df1/2, df2/2).
  const double y = beta_quantile(q, df1 / 2.0, df2 / 2.0);
  return df2 * y / (df1 * (1.0 - y));
}

double beta_sf(double x, double a, double b) {
  check_positive(a, "shape a");
  check_positive(b, "shape b");
  check_x(x);
  if (x <= 0.0) return 1.0;
  if (x >= 1.0) return 0.0;
  return cdf(complement(boost::math::beta_distribution<double, Policy>(a, b), x));
}

double beta_quantile(double q, double a, double b) {
  check_positive(a, "shape a");
  check_positive(b, "shape b");
  check_probability(q, true);
  const boost::math::beta_distribution<double, Policy> dist(a, b);
  return checked_unit_quantile(dist, q, quantile(dist, q));
}

}  // namespace ellipsa::core
