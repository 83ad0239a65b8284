// "Is the bulk elliptical?": Mardia's (1970) multivariate skewness and
// kurtosis of a set of rows, with their large-sample reference laws. A robust
// profile (MCD family) is only as good as the elliptical shape it assumes;
// these two numbers say whether the rows it was fitted on look normal.
#pragma once
#include <Eigen/Core>

#include "data_view.hpp"

namespace ellipsa::core {

struct MardiaTest {
  Index n = 0, p = 0;
  double skewness = 0.0;            // b1 = (1/n^2) sum_ij g_ij^3
  double skewness_statistic = 0.0;  // n b1 / 6, ~ chi2(skewness_df) for a normal sample
  double skewness_df = 0.0;         // p (p + 1) (p + 2) / 6
  double skewness_p_value = 0.0;    // upper tail
  double kurtosis = 0.0;            // b2 = (1/n) sum_i g_ii^2
  double kurtosis_expected = 0.0;   // centre of the reference law (see kurtosis_centre)
  double kurtosis_z = 0.0;          // (b2 - kurtosis_expected) / sqrt(8 p (p + 2) / n), ~ N(0, 1)
  double kurtosis_p_value = 0.0;    // two-sided
};

// Mardia (1970), Biometrika 57, 519-530: g_ij = (x_i - m)' S^-1 (x_j - m) with
// the sample mean m and covariance S with divisor n. kurtosis_centre is the
// expected b2 of the reference law: p (p + 2) for a random normal sample
// (pass a negative value for it), or a caller's value for selected rows
// (see truncated_kurtosis_centre). Rows must be finite (Error(Data)); needs
// n > p + 1 (Error(Data)); Error(Singular) when S is not positive definite.
//
// b1 is computed from the third-moment tensor of the whitened rows,
// b1 = sum_rst (mean_i z_ir z_is z_it)^2, an identity that avoids the n x n
// matrix of g_ij: n p^3 / 2 flops in matrix products, p^3 / 2 memory plus
// one chunk of rows.
MardiaTest mardia(DataView x, double kurtosis_centre = -1.0);

// Expected b2 (to first order) of normal rows kept by a hard cutoff
// d2 <= chi2q(p, level) and then standardised by their own covariance:
// p (p + 2) F_{p+4}(c) F_p(c) / F_{p+2}(c)^2 with c = chi2q(p, level), from the
// moments of the radially truncated normal (Tallis 1963, Ann. Math. Statist.
// 34, 940-944): E[d2^k | d2 <= c] = p (p+2) ... (p+2k-2) F_{p+2k}(c) / F_p(c).
double truncated_kurtosis_centre(Index p, double level);

}  // namespace ellipsa::core
