// Correlation from a covariance matrix: R_ij = S_ij / sqrt(S_ii S_jj). The
// divisor (n or n-1) cancels, so the correlation is the same for either
// normalisation of S.
#pragma once
#include <Eigen/Core>

namespace ellipsa::core {

// Throws Error(Shape) when s is not square, Error(Data) naming the first column
// whose variance is zero, negative or not finite (a constant column has no
// correlation). The diagonal is exactly 1 and off-diagonal entries are clamped to
// [-1, 1] (rounding can push a perfect correlation a few ulps past 1).
Eigen::MatrixXd correlation_from_covariance(const Eigen::MatrixXd& s);

}  // namespace ellipsa::core
