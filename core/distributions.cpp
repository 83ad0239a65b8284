#include "distributions.hpp"

#include <boost/math/distributions/beta.hpp>
#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/fisher_f.hpp>
#include <cmath>
#include <string>

#include "error.hpp"

namespace ellipsa::core {
namespace {

// Errors become exceptions of our own type below; Boost must not pick the
// behaviour (its default throws std::domain_error / overflow_error).
using namespace boost::math::policies;
using Policy = policy<domain_error<errno_on_error>, overflow_error<errno_on_error>,
                      evaluation_error<errno_on_error>, promote_double<false>>;

void check_positive(double v, const char* name) {
  if (!(std::isfinite(v) && v > 0.0))
    throw Error(ErrorKind::Argument, std::string(name) + " must be finite and positive");
}
void check_probability(double q, bool allow_one) {
  if (!(q >= 0.0 && (allow_one ? q <= 1.0 : q < 1.0)))
    throw Error(ErrorKind::Argument, allow_one ? "probability must lie in [0, 1]"
                                               : "probability must lie in [0, 1)");
}
void check_x(double x) {
  if (std::isnan(x)) throw Error(ErrorKind::Argument, "argument is NaN");
}

}  // namespace

double chi2_cdf(double x, double df) {
  check_positive(df, "degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 0.0;
  if (std::isinf(x)) return 1.0;
  return cdf(boost::math::chi_squared_distribution<double, Policy>(df), x);
}

double chi2_sf(double x, double df) {
  check_positive(df, "degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 1.0;
  if (std::isinf(x)) return 0.0;
  return cdf(complement(boost::math::chi_squared_distribution<double, Policy>(df), x));
}

double chi2_quantile(double q, double df) {
  check_positive(df, "degrees of freedom");
  check_probability(q, false);
  if (q == 0.0) return 0.0;
  return quantile(boost::math::chi_squared_distribution<double, Policy>(df), q);
}

double chi2_quantile_upper(double upper, double df) {
  check_positive(df, "degrees of freedom");
  if (!(upper > 0.0 && upper <= 1.0))
    throw Error(ErrorKind::Argument, "upper-tail probability must lie in (0, 1]");
  if (upper == 1.0) return 0.0;
  return quantile(complement(boost::math::chi_squared_distribution<double, Policy>(df), upper));
}

double f_cdf(double x, double df1, double df2) {
  check_positive(df1, "numerator degrees of freedom");
  check_positive(df2, "denominator degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 0.0;
  if (std::isinf(x)) return 1.0;
  return cdf(boost::math::fisher_f_distribution<double, Policy>(df1, df2), x);
}

double f_sf(double x, double df1, double df2) {
  check_positive(df1, "numerator degrees of freedom");
  check_positive(df2, "denominator degrees of freedom");
  check_x(x);
  if (x <= 0.0) return 1.0;
  if (std::isinf(x)) return 0.0;
  return cdf(complement(boost::math::fisher_f_distribution<double, Policy>(df1, df2), x));
}

double f_quantile(double q, double df1, double df2) {
  check_positive(df1, "numerator degrees of freedom");
  check_positive(df2, "denominator degrees of freedom");
  check_probability(q, false);
  if (q == 0.0) return 0.0;
  return quantile(boost::math::fisher_f_distribution<double, Policy>(df1, df2), q);
}

double beta_cdf(double x, double a, double b) {
  check_positive(a, "shape a");
  check_positive(b, "shape b");
  check_x(x);
  if (x <= 0.0) return 0.0;
  if (x >= 1.0) return 1.0;
  return cdf(boost::math::beta_distribution<double, Policy>(a, b), x);
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
  return quantile(boost::math::beta_distribution<double, Policy>(a, b), q);
}

}  // namespace ellipsa::core
