// CholeskyFactor (core/cholesky) cross-checked against LAPACK's dpotrf/dpotrs on
// random SPD matrices of random size and condition 1e2..1e12; failures on
// matrices that are not positive definite are reported, not asserted.
#include <gtest/gtest.h>
#include <lapacke.h>

#include <Eigen/QR>
#include <cmath>
#include <limits>
#include <random>

#include "core/cholesky.hpp"
#include "core/error.hpp"

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd gaussian(std::mt19937_64& rng, Index r, Index c) {
  std::normal_distribution<double> g;
  Eigen::MatrixXd m(r, c);
  for (Index j = 0; j < c; ++j)
    for (Index i = 0; i < r; ++i) m(i, j) = g(rng);
  return m;
}

// Q diag(lambda) Q' with eigenvalues log-spaced from 1 to `condition`, times a
// random scale: the 2-norm condition number is `condition` (to rounding).
Eigen::MatrixXd spd_with_condition(std::mt19937_64& rng, Index p, double condition) {
  const Eigen::MatrixXd q = Eigen::HouseholderQR<Eigen::MatrixXd>(gaussian(rng, p, p)).householderQ();
  Eigen::VectorXd lambda(p);
  for (Index i = 0; i < p; ++i)
    lambda(i) = std::pow(condition, p == 1 ? 0.0 : static_cast<double>(i) / static_cast<double>(p - 1));
  const double scale = std::exp(std::uniform_real_distribution<double>(-5, 5)(rng));
  Eigen::MatrixXd s = scale * q * lambda.asDiagonal() * q.transpose();
  return 0.5 * (s + s.transpose());
}

struct LapackResult {
  int info;
  Eigen::MatrixXd factor;
};
LapackResult lapack_potrf(const Eigen::MatrixXd& s) {
  LapackResult r{0, s};
  const int p = static_cast<int>(s.rows());
  r.info = LAPACKE_dpotrf(LAPACK_COL_MAJOR, 'L', p, r.factor.data(), p);
  return r;
}
Eigen::MatrixXd lapack_potrs(const Eigen::MatrixXd& factor, Eigen::MatrixXd b) {
  const int p = static_cast<int>(factor.rows());
  EXPECT_EQ(LAPACKE_dpotrs(LAPACK_COL_MAJOR, 'L', p, static_cast<int>(b.cols()), factor.data(), p, b.data(), p), 0);
  return b;
}

}  // namespace

TEST(CholeskyVsLapack, RandomSpdAcrossConditionNumbers) {
  std::mt19937_64 rng(101);
  const double eps = std::numeric_limits<double>::epsilon();
  for (double condition : {1e2, 1e4, 1e6, 1e8, 1e10, 1e12}) {
    for (int trial = 0; trial < 6; ++trial) {
      const Index p = 1 + static_cast<Index>(rng() % 60);
      const Eigen::MatrixXd s = spd_with_condition(rng, p, condition);
      CholeskyFactor chol;
      ASSERT_TRUE(chol.compute(s)) << "p=" << p << " cond=" << condition;
      const LapackResult ref = lapack_potrf(s);
      ASSERT_EQ(ref.info, 0);
      const Eigen::MatrixXd lref = ref.factor.triangularView<Eigen::Lower>();

      // The factor itself: both are backward stable; the forward difference is
      // bounded by about condition * eps relative to |L|.
      const double tol = 50.0 * p * eps * condition;
      EXPECT_LE((chol.lower() - lref).norm() / lref.norm(), tol) << "p=" << p << " cond=" << condition;

      // log det = 2 sum log L_ii: absolute error of order p * condition * eps.
      const double logdet_ref = 2.0 * lref.diagonal().array().log().sum();
      EXPECT_NEAR(chol.log_determinant(), logdet_ref, std::max(1e-12, tol) * std::max(1.0, std::abs(logdet_ref)));

      // Solves against dpotrs.
      const Eigen::VectorXd b = gaussian(rng, p, 1);
      const Eigen::VectorXd x = chol.solve(b);
      const Eigen::VectorXd xref = lapack_potrs(ref.factor, b);
      EXPECT_LE((x - xref).norm() / xref.norm(), tol);
      // Residual is small in the backward sense regardless of condition.
      EXPECT_LE((s * x - b).norm() / (s.norm() * x.norm()), 50.0 * p * eps);

      // Distances: d2 = d' S^-1 d through dpotrs, for a block of rows.
      const Index n = 1 + static_cast<Index>(rng() % 5000);
      const Eigen::MatrixXd data = gaussian(rng, n, p);
      const Eigen::VectorXd centre = gaussian(rng, p, 1);
      const Eigen::VectorXd d2 = chol.squared_distances(make_view(data), centre);
      const Eigen::MatrixXd centred = (data.rowwise() - centre.transpose()).transpose();
      const Eigen::MatrixXd solved = lapack_potrs(ref.factor, centred);
      const Eigen::VectorXd d2ref = (centred.array() * solved.array()).colwise().sum().transpose();
      EXPECT_LE(((d2 - d2ref).array().abs() / d2ref.array()).maxCoeff(), tol);
      // whiten: |L^-1 b|^2 = b' S^-1 b.
      EXPECT_NEAR(chol.whiten(b).squaredNorm(), b.dot(xref), tol * std::abs(b.dot(xref)) + 1e-300);
    }
  }
}

TEST(CholeskyVsLapack, StridedRowMajorDataGiveTheSameDistances) {
  std::mt19937_64 rng(102);
  const Eigen::MatrixXd s = spd_with_condition(rng, 7, 1e3);
  const CholeskyFactor chol(s);
  ASSERT_TRUE(chol.ok());
  const Eigen::MatrixXd data = gaussian(rng, 9000, 7);
  const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> rm = data;
  const Eigen::VectorXd c = Eigen::VectorXd::Zero(7);
  const Eigen::VectorXd a = chol.squared_distances(make_view(data), c);
  const Eigen::VectorXd b = chol.squared_distances(make_view(rm.data(), 9000, 7, 7, 1), c);
  EXPECT_LE((a - b).cwiseAbs().maxCoeff(), 1e-12 * a.maxCoeff());
}

TEST(CholeskyFailures, ReportedNotAsserted) {
  std::mt19937_64 rng(103);
  // Indefinite: one negative eigenvalue. LAPACK agrees that it is not SPD.
  Eigen::MatrixXd s = spd_with_condition(rng, 6, 10.0);
  const Eigen::VectorXd v = gaussian(rng, 6, 1).normalized();
  s -= 20.0 * s.norm() * v * v.transpose();
  CholeskyFactor chol;
  EXPECT_FALSE(chol.compute(s));
  EXPECT_FALSE(chol.ok());
  EXPECT_GT(lapack_potrf(s).info, 0);
  EXPECT_THROW(chol.log_determinant(), Error);
  EXPECT_THROW(chol.solve(Eigen::VectorXd::Ones(6)), Error);
  EXPECT_THROW(chol.squared_distances(make_view(Eigen::MatrixXd::Ones(3, 6)), Eigen::VectorXd::Zero(6)), Error);
  EXPECT_EQ(chol.pivot_ratio(), 0.0);

  // NaN entry.
  Eigen::MatrixXd with_nan = spd_with_condition(rng, 4, 10.0);
  with_nan(2, 1) = with_nan(1, 2) = std::numeric_limits<double>::quiet_NaN();
  EXPECT_FALSE(chol.compute(with_nan));
  // Covariance of data with a constant column: a zero row and column.
  Eigen::MatrixXd constant = spd_with_condition(rng, 5, 10.0);
  constant.row(3).setZero();
  constant.col(3).setZero();
  EXPECT_FALSE(chol.compute(constant));
  EXPECT_GT(lapack_potrf(constant).info, 0);
  // Exactly collinear columns: x2 = x0 + x1 (rank 2 of 3).
  const Eigen::MatrixXd x = gaussian(rng, 50, 2);
  Eigen::MatrixXd y(50, 3);
  y << x, x.col(0) + x.col(1);
  const Eigen::MatrixXd centred = y.rowwise() - y.colwise().mean();
  EXPECT_FALSE(chol.compute(centred.transpose() * centred / 49.0) && chol.pivot_ratio() > 1e-12);
  // Not square: a shape error, not a numerical outcome.
  EXPECT_THROW(chol.compute(Eigen::MatrixXd::Ones(2, 3)), Error);
  // A good matrix after a failure works again.
  EXPECT_TRUE(chol.compute(Eigen::MatrixXd::Identity(3, 3) * 4.0));
  EXPECT_NEAR(chol.log_determinant(), 3.0 * std::log(4.0), 1e-15);
  EXPECT_EQ(chol.pivot_ratio(), 1.0);
}

// The residual fraction L_jj^2 / S_jj is 1 - R^2 of column j on the columns
// before it (algebra of the Cholesky factor: S_jj = sum_k L_jk^2). For a 2 x 2
// covariance [[a, c], [c, b]] the second column's fraction is 1 - c^2 / (a b),
// the first column's is 1; the value does not change when columns are rescaled.
TEST(Cholesky, SmallestResidualFractionIsOneMinusSquaredCorrelationAndUnitFree) {
  CholeskyFactor chol;
  Eigen::Matrix2d s;
  s << 4.0, 1.2, 1.2, 1.0;  // r = 1.2 / 2 = 0.6
  ASSERT_TRUE(chol.compute(s));
  EXPECT_NEAR(chol.smallest_residual_fraction(), 1.0 - 0.36, 1e-15);
  // Rescale column 1 by 1e6 (a variance of 4e12): same fraction, far smaller pivot ratio.
  const Eigen::Matrix2d scale = Eigen::Vector2d(1e6, 1.0).asDiagonal();
  ASSERT_TRUE(chol.compute(scale * s * scale));
  EXPECT_NEAR(chol.smallest_residual_fraction(), 0.64, 1e-14);
  EXPECT_LT(chol.pivot_ratio(), 1e-12);
  EXPECT_EQ(CholeskyFactor().smallest_residual_fraction(), 0.0);
}
