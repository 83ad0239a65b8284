// Shrinkage covariance estimates for p close to n or p > n: a convex
// combination of the sample covariance S (divisor n) and the scaled identity
// mu*I, mu = tr(S)/p. Both estimates are positive definite whenever mu > 0 and
// the intensity is positive, which the sample covariance is not for n <= p.
#pragma once
#include <Eigen/Core>

#include "data_view.hpp"

namespace ellipsa::core {

enum class ShrinkageMethod {
  LedoitWolf,           // Ledoit & Wolf (2004), J. Multivariate Anal. 88, 365-411
  OracleApproximating,  // OAS, Chen, Wiesel, Eldar & Hero (2010), IEEE TSP 58, 5016-5029
};

struct ShrinkageEstimate {
  Eigen::VectorXd mean;               // sample mean
  Eigen::MatrixXd covariance;         // intensity*mu*I + (1-intensity)*S
  Eigen::MatrixXd sample_covariance;  // S, divisor n (maximum likelihood)
  double intensity = 0.0;             // weight on the target, in [0, 1]
  double target_scale = 0.0;          // mu = tr(S)/p
  Index rows = 0;                     // n
};

// Throws Error(Data) for fewer than 2 rows or a NaN/Inf entry (select complete
// rows first), Error(Shape) for no columns, Error(Data) when every column is
// constant (mu = 0: the target is the zero matrix). When S is already a
// multiple of the identity (always so for p = 1) the target equals S and any
// intensity gives the same estimate; the reported intensity is then 1, the
// limit of both formulas as S approaches the target.
// `threads`: see MomentAccumulator::set_threads (the result does not depend on it).
ShrinkageEstimate shrinkage_estimate(DataView x, ShrinkageMethod method, int threads = 1);

// The same estimate from moments gathered elsewhere (a stream of chunks):
// n rows, their mean, cross-products sum (x - mean)(x - mean)' and, for
// Ledoit-Wolf, sum |x - mean|^4 (norm_power_sums.hpp; ignored by OAS). The
// same errors as above for n < 2 and for a zero trace. `fourth_unit`: the sum
// of fourth powers is given in units of fourth_unit^4 (shrinkage_estimate
// passes it scaled; 1 = the data's units).
// The intensity is computed in units of a power of two near sqrt(tr(S)/p)
// (an exact rescaling), so that tr(S^2) and the fourth powers neither
// overflow for data near 1e150 nor underflow for data near 1e-150.
ShrinkageEstimate shrinkage_from_moments(Index n, const Eigen::VectorXd& mean, const Eigen::MatrixXd& cross_products,
                                         double sum_fourth_powers_of_norms, ShrinkageMethod method,
                                         double fourth_unit = 1.0);

// The power of two nearest sqrt(mu) (mu > 0): the unit in which the
// intensities are computed.
double shrinkage_unit(double mu);

}  // namespace ellipsa::core
