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
// Range of the shapes (Beta a, b) and degrees of freedom (F df1, df2)
// accepted, measured with Boost 1.74 (tests/core/test_distributions.cpp,
// DistributionDomain):
//  - above: over shapes from 1e-300 to 1e300 in half decades, the inverse
//    incomplete beta loops without end at Beta(3, 1e50) or Beta(1e20, 1e20),
//    and the tails leave [0, 1] (P = -124.4 for Beta(1e20, 1e20) at 0.5) from
//    1e20 on; up to 1e12 every call ends within 8 ms inside its range. The
//    largest shape a control limit asks is (m - p - 1) / 2 or m - p for m
//    reference rows, so the bound leaves room for a trillion rows.
//  - below: Beta(s, s) loses its symmetry P(X > x) + P(X > 1 - x) = 1 at
//    s <= 1e-155 (both tails 1, or 0 everywhere); from 1e-150 up it holds to
//    2 ulp. 1e-100 keeps fifty decades of margin.
// The chi-square functions do not go through the incomplete beta and keep the
// plain check (no hang or NaN over the same sweep).
constexpr double kMinShape = 1e-100;
constexpr double kMaxShape = 1e12;
// Steps of the fallback root search on the cdf (each one cdf evaluation).
constexpr std::uintmax_t kMaxSearchSteps = 300;

void check_shape(double v, const char* name) {
  check_positive(v, name);
  if (v < kMinShape || v > kMaxShape)
    throw Error(ErrorKind::Argument, std::string(name) + " must lie in [1e-100, 1e12]");
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
// closed form (q/1.5)^2 agree), and can give up there altogether (Beta(3, 3) at
// q = 1e-300 throws "no root to be found"; the quantile is (1e-300/10)^(1/3),
// since F(x) ~ x^3 / (3 B(3, 3)) = 10 x^3 near 0). The answer is therefore
// checked against the cdf and, when the cdf at it is off by more than 1e-10
// relative or Boost gave up, searched again with a bracketed root finder on the
// cdf over [0, 1]. `boost_quantile` is Boost's own quantile, called here so its
// failure lands in the search.
template <class Distribution, class BoostQuantile>
double checked_unit_quantile(const Distribution& dist, double q, BoostQuantile&& boost_quantile) {
  double x = std::numeric_limits<double>::quiet_NaN();
  try {
    x = boost_quantile();
  } catch (const boost::math::evaluation_error&) {
    // Searched below.
  }
  if (!(q > 0.0 && q < 1.0)) return x;
  if (std::isfinite(x) && std::abs(cdf(dist, x) - q) <= 1e-10 * q) return x;
  // Bracket first between points a factor 2^32 apart, stepping down from 1,
  // so a quantile far below 1 (4.6e-101 above) is searched with a relative
  // tolerance that means something: from [0, 1], 300 steps stopped at 5.6e-34.
  const auto gap = [&](double t) { return cdf(dist, t) - q; };
  double lo = 0.0, hi = 1.0, gap_lo = -q, gap_hi = 1.0 - q;
  for (double t = 0x1p-32; t > 0.0; t *= 0x1p-32) {
    const double g = gap(t);
    if (g < 0.0) {
      lo = t;
      gap_lo = g;
      break;
    }
    hi = t;
    gap_hi = g;
    if (g == 0.0) return t;
  }
  boost::math::tools::eps_tolerance<double> tol(std::numeric_limits<double>::digits - 3);
  std::uintmax_t iterations = kMaxSearchSteps;
  const auto [a, b] = boost::math::tools::toms748_solve(gap, lo, hi, gap_lo, gap_hi, tol, iterations);
  return 0.5 * (a + b);
}

// The Beta quantile once the arguments are checked; the F quantile calls it
// with half its degrees of freedom (which may lie just below kMinShape).
double beta_quantile_checked_args(double q, double a, double b) {
  const boost::math::beta_distribution<double, Policy> dist(a, b);
  return checked_unit_quantile(dist, q, [&] { return quantile(dist, q); });
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
  check_shape(df1, "numerator degrees of freedom");
  check_shape(df2, "denominator degrees of freedom");
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

// I_y(a, n) for a whole n, by repeated integration by parts of the incomplete
// beta integral ((a)_j the rising factorial):
//   I_y(a, n) = y^a sum_{j<n} (a)_j / j! (1 - y)^j.
// Positive terms, built by recurrence from y^a = exp(-minus_log_y_a), with
// 1 - y passed in directly (no cancellation). Callers use it for n <=
// kClosedFormMaxDf / 2 and minus_log_y_a < kClosedFormMaxHalfX (y^a a normal
// double); elsewhere Boost.
//  - The F tail: the default scoring reference of a classical or shrinkage
//    model is the F law of a new row (Hotelling T^2, phase II), asked once per
//    row with df1 = p; P(F > x) = I_y(df2 / 2, df1 / 2), y = df2 / (df2 + df1 x).
//  - The Beta tail for a whole a: P(X > x) = I_{1-x}(b, a). Boost 1.74 loses
//    digits there as b grows (relative error about 5e-17 b for whole a from 2
//    to 30 and b from 1e4 to 1e9, 5e-8 at b = 1e9, against R's pbeta and a
//    40-digit quadrature), which phase I control limits meet with even p.
// Agreement with Boost and R: tests/core/test_distributions.cpp.
double incomplete_beta_whole_n(double one_minus_y, double minus_log_y_a, double a, int n) {
  double term = std::exp(-minus_log_y_a), sum = term;
  for (int j = 1; j < n; ++j) {
    term *= (a + (j - 1)) / j * one_minus_y;
    sum += term;
  }
  return sum;
}

}  // namespace

double f_sf(double x, double df1, double df2) {
  check_shape(df1, "numerator degrees of freedom");
  check_shape(df2, "denominator degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 1.0;
  if (std::isinf(x)) return 0.0;
  if (df1 <= kClosedFormMaxDf && df1 == 2.0 * std::floor(0.5 * df1)) {
    const double ratio = df1 * x / df2;
    const double minus_log_y_a = 0.5 * df2 * std::log1p(ratio);
    if (minus_log_y_a < kClosedFormMaxHalfX)
      return incomplete_beta_whole_n(ratio / (1.0 + ratio), minus_log_y_a, 0.5 * df2, static_cast<int>(df1) / 2);
  }
  return cdf(complement(boost::math::fisher_f_distribution<double, Policy>(df1, df2), x));
}

double f_quantile(double q, double df1, double df2) {
  check_shape(df1, "numerator degrees of freedom");
  check_shape(df2, "denominator degrees of freedom");
  check_probability(q, false);
  if (q == 0.0) return 0.0;
  double x = std::numeric_limits<double>::quiet_NaN();
  try {
    x = quantile(boost::math::fisher_f_distribution<double, Policy>(df1, df2), q);
  } catch (const boost::math::evaluation_error&) {
    // Searched below.
  }
  if (std::isfinite(x) && std::abs(f_cdf(x, df1, df2) - q) <= 1e-10 * q) return x;
  // Same inverse-beta miss or failure as above (F(1, 4) at q = 1e-12; F(7.5, 3)
  // at q = 1e-300): go through the checked Beta quantile,
  // F = (df2/df1) y/(1-y) with y ~ Beta(df1/2, df2/2).
  const double y = beta_quantile_checked_args(q, df1 / 2.0, df2 / 2.0);
  return df2 * y / (df1 * (1.0 - y));
}

double beta_sf(double x, double a, double b) {
  check_shape(a, "shape a");
  check_shape(b, "shape b");
  check_x(x);
  if (x <= 0.0) return 1.0;
  if (x >= 1.0) return 0.0;
  if (a <= 0.5 * kClosedFormMaxDf && a == std::floor(a)) {
    const double minus_log_y_a = -b * std::log1p(-x);
    if (minus_log_y_a < kClosedFormMaxHalfX) return incomplete_beta_whole_n(x, minus_log_y_a, b, static_cast<int>(a));
  }
  return cdf(complement(boost::math::beta_distribution<double, Policy>(a, b), x));
}

double beta_quantile(double q, double a, double b) {
  check_shape(a, "shape a");
  check_shape(b, "shape b");
  check_probability(q, true);
  return beta_quantile_checked_args(q, a, b);
}

}  // namespace ellipsa::core
