#include "mixture_acceleration.hpp"

#include <cmath>
#include <cstddef>

#include "error.hpp"

namespace ellipsa::core {

namespace {

void require_same_shape(const MixtureModel& a, const MixtureModel& b) {
  if (a.components() != b.components() || a.dimension() != b.dimension() || a.structure != b.structure ||
      a.covariances.size() != b.covariances.size())
    throw Error(ErrorKind::Shape, "mixture acceleration: the iterates differ in shape");
}

// Squared length of c0 m0 + c1 m1 + c2 m2 in the column units (header).
double scaled_norm2(double c0, const MixtureModel& m0, double c1, const MixtureModel& m1, double c2,
                    const MixtureModel& m2, const Eigen::VectorXd& inv_spread) {
  double sum = (c0 * m0.weights + c1 * m1.weights + c2 * m2.weights).squaredNorm();
  const Eigen::RowVectorXd s = inv_spread.transpose();
  for (Index k = 0; k < m0.components(); ++k)
    sum += ((c0 * m0.means.row(k) + c1 * m1.means.row(k) + c2 * m2.means.row(k)).cwiseProduct(s)).squaredNorm();
  const Eigen::MatrixXd cell = inv_spread * inv_spread.transpose();
  for (std::size_t k = 0; k < m0.covariances.size(); ++k)
    sum += (c0 * m0.covariances[k] + c1 * m1.covariances[k] + c2 * m2.covariances[k]).cwiseProduct(cell).squaredNorm();
  return sum;
}

}  // namespace

MixtureModel combine_models(double c0, const MixtureModel& m0, double c1, const MixtureModel& m1, double c2,
                            const MixtureModel& m2) {
  require_same_shape(m0, m1);
  require_same_shape(m0, m2);
  MixtureModel out;
  out.structure = m0.structure;
  out.weights = c0 * m0.weights + c1 * m1.weights + c2 * m2.weights;
  out.means = c0 * m0.means + c1 * m1.means + c2 * m2.means;
  out.covariances.resize(m0.covariances.size());
  for (std::size_t k = 0; k < m0.covariances.size(); ++k)
    out.covariances[k] = c0 * m0.covariances[k] + c1 * m1.covariances[k] + c2 * m2.covariances[k];
  return out;
}

double squarem_step_length(const MixtureModel& m0, const MixtureModel& m1, const MixtureModel& m2,
                           const Eigen::VectorXd& inv_spread) {
  require_same_shape(m0, m1);
  require_same_shape(m0, m2);
  if (inv_spread.size() != m0.dimension()) throw Error(ErrorKind::Shape, "mixture acceleration: one spread per column");
  const double r2 = scaled_norm2(-1.0, m0, 1.0, m1, 0.0, m2, inv_spread);  // theta1 - theta0
  const double v2 = scaled_norm2(1.0, m0, -2.0, m1, 1.0, m2, inv_spread);  // theta2 - 2 theta1 + theta0
  if (!(v2 > 0.0) || !std::isfinite(v2) || !std::isfinite(r2)) return -1.0;
  const double alpha = -std::sqrt(r2 / v2);
  return alpha < -1.0 ? alpha : -1.0;
}

MixtureModel squarem_jump(const MixtureModel& m0, const MixtureModel& m1, const MixtureModel& m2, double alpha) {
  // theta0 - 2 alpha (theta1 - theta0) + alpha^2 (theta2 - 2 theta1 + theta0),
  // collected by iterate; the coefficients sum to 1.
  const double a2 = alpha * alpha;
  return combine_models(1.0 + 2.0 * alpha + a2, m0, -2.0 * alpha - 2.0 * a2, m1, a2, m2);
}

}  // namespace ellipsa::core
