// Tests that compare groups of rows through their summaries (count, mean,
// covariance): Hotelling's two-sample T^2, Box's M, Welch's t for one
// variable, and Holm's step-down adjustment of several p-values. They work
// on summaries so that each one is checked against the published worked
// examples, which print summaries, and so that the classical and the robust
// comparison share one formula (core/batch_compare.cpp).
#pragma once
#include <Eigen/Core>
#include <vector>

#include "data_view.hpp"

namespace ellipsa::core {

// A group as the tests see it. covariance has divisor n - 1 (for the robust
// comparison: a consistent robust scatter in its place).
struct GroupSummary {
  double n = 0.0;
  Eigen::VectorXd mean;
  Eigen::MatrixXd covariance;
};

struct TwoSampleT2 {
  double t2 = 0.0;              // n1 n2 / (n1 + n2) d' S_pooled^-1 d, d = mean2 - mean1
  double f = 0.0;               // (n1 + n2 - p - 1) / (p (n1 + n2 - 2)) T^2
  double df1 = 0.0, df2 = 0.0;  // p, n1 + n2 - p - 1
  double p_value = 0.0;         // P(F(df1, df2) > f)
};

// Hotelling (1931) two-sample T^2 with the pooled covariance
// ((n1-1) S1 + (n2-1) S2) / (n1 + n2 - 2). Throws Error(Shape) for groups of
// different dimension, Error(Data) when n1 + n2 - p - 1 < 1 or a count is
// below 1, Error(Singular) when the pooled covariance is not positive
// definite (the message names the columns without pooled spread).
TwoSampleT2 two_sample_t2(const GroupSummary& a, const GroupSummary& b);

struct BoxM {
  double m = 0.0;           // (N - g) ln|S_pooled| - sum (n_i - 1) ln|S_i|
  double correction = 0.0;  // c1 (Box 1949)
  double chi2 = 0.0;        // (1 - c1) M
  double df = 0.0;          // p (p + 1) (g - 1) / 2
  double p_value = 0.0;     // P(chi2(df) > chi2)
};

// Box (1949) M test of equal covariance matrices in g >= 2 groups with its
// chi-square approximation. Each covariance needs n_i - 1 >= p and must be
// positive definite (Error(Data) / Error(Singular) naming the group).
// Sensitive to non-normality: a heavy-tailed bulk rejects equal covariances
// too often.
BoxM box_m(const std::vector<GroupSummary>& groups);
// The same from the log-determinants, as printed in worked examples.
BoxM box_m_from_log_determinants(const std::vector<double>& n, const std::vector<double>& log_det,
                                 double log_det_pooled, Index p);

struct WelchT {
  double t = 0.0;        // (mean2 - mean1) / sqrt(v1/n1 + v2/n2)
  double df = 0.0;       // Welch-Satterthwaite degrees of freedom
  double p_value = 0.0;  // two-sided, from Student's t with df
};

// Welch (1947) unequal-variance t test for one variable (variances with
// divisor n - 1). Counts must be at least 2 (Error(Data)). When both
// variances are zero the test is undefined: t, df and p_value are NaN.
WelchT welch_t(double n1, double mean1, double var1, double n2, double mean2, double var2);

// Holm (1979) step-down adjusted p-values, in the input order: with the m
// finite p-values sorted ascending, adj_(k) = max_{j <= k} min(1, (m - j + 1) p_(j)).
// Rejecting where adj <= a is Holm's procedure at family-wise level a. NaN
// entries stay NaN and do not count towards m. Throws Error(Argument) for a
// finite value outside [0, 1].
std::vector<double> holm_adjust(const std::vector<double>& p_values);

}  // namespace ellipsa::core
