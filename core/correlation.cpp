#include "correlation.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "error.hpp"

namespace ellipsa::core {

Eigen::MatrixXd correlation_from_covariance(const Eigen::MatrixXd& s) {
  if (s.rows() != s.cols()) throw Error(ErrorKind::Shape, "correlation: covariance is not square");
  const Eigen::Index p = s.rows();
  Eigen::VectorXd inv_sd(p);
  for (Eigen::Index j = 0; j < p; ++j) {
    const double v = s(j, j);
    if (!(std::isfinite(v) && v > 0.0))
      throw Error(ErrorKind::Data, "correlation: column " + std::to_string(j) + " (0-based) has variance " +
                                       std::to_string(v) + "; a constant column has no correlation");
    inv_sd(j) = 1.0 / std::sqrt(v);
  }
  Eigen::MatrixXd r = inv_sd.asDiagonal() * s * inv_sd.asDiagonal();
  for (Eigen::Index j = 0; j < p; ++j)
    for (Eigen::Index i = 0; i < p; ++i) r(i, j) = i == j ? 1.0 : std::clamp(r(i, j), -1.0, 1.0);
  return r;
}

}  // namespace ellipsa::core
