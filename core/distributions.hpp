// Distribution functions through Boost.Math: the chi-square, F and Beta
// quantiles and tail probabilities behind every p-value, cutoff and control
// limit. Arguments are checked here (Error(Argument)) so Boost's own error
// policy never decides what a caller sees.
#pragma once

namespace ellipsa::core {

// Lower-tail probability P(X <= x) and upper-tail P(X > x) for X ~ chi2(df).
// The upper tail is computed directly (not 1 - lower) so tiny p-values keep
// their digits.
double chi2_cdf(double x, double df);
double chi2_sf(double x, double df);
// The q-quantile, q in [0, 1): P(X <= chi2_quantile(q, df)) = q.
double chi2_quantile(double q, double df);

double f_cdf(double x, double df1, double df2);
double f_sf(double x, double df1, double df2);
double f_quantile(double q, double df1, double df2);

double beta_sf(double x, double a, double b);
double beta_quantile(double q, double a, double b);

}  // namespace ellipsa::core
