// Cholesky factor of a scatter matrix and everything computed from it: squared
// Mahalanobis distances by triangular solves, the log-determinant from the
// diagonal, solves. An inverse is never formed. A matrix that is not positive
// definite is a normal outcome (constant or collinear columns, n <= p): compute()
// reports it instead of asserting.
#pragma once
#include <Eigen/Core>

#include "data_view.hpp"

namespace ellipsa::core {

class CholeskyFactor {
 public:
  CholeskyFactor() = default;
  explicit CholeskyFactor(const Eigen::MatrixXd& s) { compute(s); }

  // Factors s = L L'. Returns false when s is not symmetric positive definite to
  // working precision (a pivot <= 0 or not finite); ok() then stays false.
  bool compute(const Eigen::MatrixXd& s);
  bool ok() const { return ok_; }
  Index dimension() const { return lower_.rows(); }
  const Eigen::MatrixXd& lower() const { return lower_; }
  // log det s = 2 sum log L_ii.
  double log_determinant() const;
  // (min L_ii / max L_ii)^2: a cheap lower-bound style indicator of conditioning;
  // values near machine epsilon mean the distances carry few correct digits.
  double pivot_ratio() const;
  // min_j L_jj^2 / S_jj: the smallest fraction of a column's variance left after
  // regressing it on the columns before it (1 - R^2). Unlike pivot_ratio() it
  // does not depend on the columns' units; near rounding level it means a
  // column is (nearly) a combination of earlier ones. 0 when not factored.
  double smallest_residual_fraction() const;

  // d2_i = |L^-1 (x_i - centre)|^2 for every row of x.
  Eigen::VectorXd squared_distances(DataView x, const Eigen::VectorXd& centre) const;
  // s^-1 b by two triangular solves.
  Eigen::VectorXd solve(const Eigen::VectorXd& b) const;
  // L^-1 b.
  Eigen::VectorXd whiten(const Eigen::VectorXd& b) const;

 private:
  bool ok_ = false;
  Eigen::MatrixXd lower_;
};

}  // namespace ellipsa::core
