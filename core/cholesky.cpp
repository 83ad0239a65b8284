#include "cholesky.hpp"

#include <Eigen/Cholesky>
#include <algorithm>
#include <cmath>

#include "error.hpp"

namespace ellipsa::core {
namespace {
constexpr Index kChunkRows = 4096;
}

bool CholeskyFactor::compute(const Eigen::MatrixXd& s) {
  ok_ = false;
  if (s.rows() != s.cols()) throw Error(ErrorKind::Shape, "Cholesky: matrix is not square");
  if (!s.allFinite()) {
    lower_.resize(0, 0);
    return false;
  }
  Eigen::LLT<Eigen::MatrixXd> llt(s);
  if (llt.info() != Eigen::Success) {
    lower_.resize(0, 0);
    return false;
  }
  lower_ = llt.matrixL();
  const auto d = lower_.diagonal();
  ok_ = d.allFinite() && (d.array() > 0.0).all();
  return ok_;
}

double CholeskyFactor::log_determinant() const {
  if (!ok_) throw Error(ErrorKind::Singular, "log-determinant of a matrix that is not positive definite");
  return 2.0 * lower_.diagonal().array().log().sum();
}

double CholeskyFactor::smallest_residual_fraction() const {
  if (!ok_ || lower_.rows() == 0) return 0.0;
  // S_jj = sum_k L_jk^2 (row j of L), so no copy of S is needed.
  double smallest = 1.0;
  for (Index j = 0; j < lower_.rows(); ++j) {
    const double pivot = lower_(j, j) * lower_(j, j);
    smallest = std::min(smallest, pivot / lower_.row(j).head(j + 1).squaredNorm());
  }
  return smallest;
}

double CholeskyFactor::pivot_ratio() const {
  if (!ok_ || lower_.rows() == 0) return 0.0;
  const auto d = lower_.diagonal();
  const double r = d.minCoeff() / d.maxCoeff();
  return r * r;
}

Eigen::VectorXd CholeskyFactor::squared_distances(DataView x, const Eigen::VectorXd& centre) const {
  if (!ok_) throw Error(ErrorKind::Singular, "distances need a positive definite scatter matrix");
  const Index p = dimension();
  if (x.cols() != p || centre.size() != p)
    throw Error(ErrorKind::Shape, "distances: data, centre and scatter dimensions differ");
  Eigen::VectorXd d2(x.rows());
  Eigen::MatrixXd y;
  for (Index start = 0; start < x.rows(); start += kChunkRows) {
    const Index m = std::min(kChunkRows, x.rows() - start);
    // Columns of y are the centred rows; one triangular solve whitens them all.
    y = x.middleRows(start, m).transpose();
    y.colwise() -= centre;
    lower_.triangularView<Eigen::Lower>().solveInPlace(y);
    d2.segment(start, m) = y.colwise().squaredNorm().transpose();
    for (Index k = 0; k < m; ++k)
      // A NaN that survives the scaling is left to the caller (the mixture
      // fit's acceleration rejects a candidate by its NaN log-likelihood).
      if (!std::isfinite(d2(start + k)))
        d2(start + k) = whiten_scaled(lower_, x.row(start + k).transpose(), centre).squared_distance;
  }
  return d2;
}

Eigen::VectorXd CholeskyFactor::whiten(const Eigen::VectorXd& b) const {
  if (!ok_) throw Error(ErrorKind::Singular, "solve with a matrix that is not positive definite");
  return lower_.triangularView<Eigen::Lower>().solve(b);
}

Eigen::VectorXd CholeskyFactor::solve(const Eigen::VectorXd& b) const {
  const Eigen::VectorXd z = whiten(b);
  return lower_.transpose().triangularView<Eigen::Upper>().solve(z);
}

int scale_shift(const Eigen::VectorXd& v) {
  int e = 0;
  std::frexp(v.size() ? v.cwiseAbs().maxCoeff() : 0.0, &e);
  return std::max(e, 0);
}

ScaledWhitening whiten_scaled(const Eigen::MatrixXd& lower, const Eigen::VectorXd& x, const Eigen::VectorXd& centre) {
  return whiten_scaled(lower, x, centre, std::max(scale_shift(x), scale_shift(centre)));
}

ScaledWhitening whiten_scaled(const Eigen::MatrixXd& lower, const Eigen::VectorXd& x, const Eigen::VectorXd& centre,
                              int shift) {
  const Index q = x.size();
  ScaledWhitening r;
  r.shift = shift;
  r.d.resize(q);
  for (Index a = 0; a < q; ++a) r.d(a) = std::ldexp(x(a), -shift) - std::ldexp(centre(a), -shift);
  r.w = r.d;
  lower.transpose().triangularView<Eigen::Upper>().solveInPlace<Eigen::OnTheRight>(r.w);
  r.squared_distance = std::ldexp(r.w.squaredNorm(), 2 * shift);
  return r;
}

}  // namespace ellipsa::core
