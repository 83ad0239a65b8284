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

  // d2_i = |L^-1 (x_i - centre)|^2 for every row of x; +inf where it exceeds
  // double precision (see whiten_scaled); NaN only for a NaN input or a solve
  // that fails even in scaled units.
  Eigen::VectorXd squared_distances(DataView x, const Eigen::VectorXd& centre) const;
  // s^-1 b by two triangular solves.
  Eigen::VectorXd solve(const Eigen::VectorXd& b) const;
  // L^-1 b.
  Eigen::VectorXd whiten(const Eigen::VectorXd& b) const;

 private:
  bool ok_ = false;
  Eigen::MatrixXd lower_;
};

// A finite row can still give a NaN or infinite squared distance: x - centre
// overflows (x = -1e308 against a centre of 1e308), or the whitened
// coordinates do, or inf - inf meets in the triangular solve. Such a row is
// whitened again in units of s = 2^shift >= 1, the power of two at or above
// every |x_j| and |centre_j|: the centred coordinates d/s = x/s - centre/s are
// then at most 2 in size (division by a power of two is exact), and
// d2 = s^2 |L^-1 d/s|^2, where only the final scaling can overflow, to +inf,
// which is then the true value. Callers use it only for a row whose plain
// distance is not finite, so ordinary rows keep their bits. `lower` is L of
// the scatter (or of the sub-matrix of the row's observed coordinates).
struct ScaledWhitening {
  Eigen::RowVectorXd d, w;        // d / s and (L^-1 d / s)'
  int shift = 0;                  // s = 2^shift
  double squared_distance = 0.0;  // s^2 |w|^2: +inf beyond double precision; NaN only if the solve still fails
};
ScaledWhitening whiten_scaled(const Eigen::MatrixXd& lower, const Eigen::VectorXd& x, const Eigen::VectorXd& centre);
// The same in units of 2^shift given by the caller (who compares several
// centres in one unit); shift must cover every |x_j| and |centre_j|.
ScaledWhitening whiten_scaled(const Eigen::MatrixXd& lower, const Eigen::VectorXd& x, const Eigen::VectorXd& centre,
                              int shift);
// The shift whiten_scaled() uses: the exponent of the power of two at or
// above every |v_j| (at least 0).
int scale_shift(const Eigen::VectorXd& v);

}  // namespace ellipsa::core
