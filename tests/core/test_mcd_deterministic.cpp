// DetMCD properties: row-permutation invariance, repeatability, breakdown,
// consistency, exact fit, bad input.
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <limits>
#include <numeric>

#include "core/error.hpp"
#include "core/mcd_deterministic.hpp"
#include "core/moments.hpp"
#include "test_mcd_common.hpp"

using namespace ellipsa::core;

TEST(DetMcd, RowPermutationInvariant) {
  for (const Index n : {Index{47}, Index{400}}) {
    Eigen::MatrixXd x = mcd_test::normal_data(n, 3, 5 + static_cast<std::uint64_t>(n));
    for (Index i = 0; i < n / 6; ++i) x.row(i).array() += 5.0;
    x.row(n - 1) = x.row(n - 2);  // an exact duplicate row
    std::vector<Index> perm(static_cast<std::size_t>(n));
    std::iota(perm.begin(), perm.end(), Index{0});
    std::mt19937_64 g(3);
    for (Index i = n - 1; i > 0; --i)
      std::swap(perm[static_cast<std::size_t>(i)], perm[static_cast<std::size_t>(g() % (i + 1))]);
    Eigen::MatrixXd y(n, 3);
    for (Index i = 0; i < n; ++i) y.row(i) = x.row(perm[static_cast<std::size_t>(i)]);
    const RobustFit fx = det_mcd(make_view(x));
    const RobustFit fy = det_mcd(make_view(y));
    // Same subset of rows (as values), same estimates to rounding.
    EXPECT_NEAR(fx.raw_log_det, fy.raw_log_det, 1e-11);
    EXPECT_NEAR((fx.location - fy.location).norm(), 0.0, 1e-12);
    EXPECT_NEAR((fx.scatter - fy.scatter).norm(), 0.0, 1e-11);
    for (Index i = 0; i < n; ++i)
      EXPECT_EQ(fy.outlier[static_cast<std::size_t>(i)],
                fx.outlier[static_cast<std::size_t>(perm[static_cast<std::size_t>(i)])]);
    // Repeatable bit for bit.
    const RobustFit again = det_mcd(make_view(x));
    EXPECT_TRUE((again.scatter.array() == fx.scatter.array()).all());
  }
}

TEST(DetMcd, BreakdownBoundedClassicalNot) {
  const Index n = 100, p = 3;
  const Eigen::MatrixXd clean = mcd_test::normal_data(n, p, 77);
  const RobustFit ref = det_mcd(make_view(clean));
  std::mt19937_64 g(9);
  for (int pattern = 0; pattern < 2; ++pattern) {
    Eigen::MatrixXd x = clean;
    for (Index i = 0; i < n - ref.h; ++i)
      for (Index j = 0; j < p; ++j) {
        const double u = static_cast<double>(g() % 1000) / 1000.0;
        x(i, j) = pattern == 0 ? 1e6 + u : (g() % 2 ? 1e6 : -1e6) * (1 + u);
      }
    const RobustFit f = det_mcd(make_view(x));
    ASSERT_FALSE(f.exact_fit);
    // Same bound as for FAST-MCD: location within 1, relative eigenvalues in [0.2, 5].
    EXPECT_LT((f.location - ref.location).norm(), 1.0);
    Eigen::GeneralizedSelfAdjointEigenSolver<Eigen::MatrixXd> es(f.scatter, ref.scatter);
    EXPECT_GT(es.eigenvalues().minCoeff(), 0.2);
    EXPECT_LT(es.eigenvalues().maxCoeff(), 5.0);
    const MeanCovariance cl = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
    EXPECT_GT(cl.mean.norm() + cl.covariance.norm(), 1e5);
  }
}

// Same reasoning and tolerances as FastMcd.ConsistentAtTheNormal.
TEST(DetMcd, ConsistentAtTheNormal) {
  const Index n = 20000, p = 5;
  Eigen::MatrixXd a(p, p);
  a << 1, 0, 0, 0, 0, 0.5, 2, 0, 0, 0, -0.3, 0.2, 0.5, 0, 0, 0, 0, 1, 3, 0, 0.1, 0.1, 0.1, 0.1, 1;
  const Eigen::MatrixXd sigma = a * a.transpose();
  const Eigen::MatrixXd x = mcd_test::normal_data(n, p, 2025) * a.transpose();
  const RobustFit f = det_mcd(make_view(x));
  Eigen::GeneralizedSelfAdjointEigenSolver<Eigen::MatrixXd> es(f.scatter, sigma);
  EXPECT_GT(es.eigenvalues().minCoeff(), 0.92);
  EXPECT_LT(es.eigenvalues().maxCoeff(), 1.08);
  EXPECT_LT(f.location.cwiseAbs().maxCoeff(), 0.1);
  EXPECT_EQ(f.starts, 6);
}

TEST(DetMcd, ExactFitReportsHyperplane) {
  const Index n = 40;
  Eigen::MatrixXd x = mcd_test::normal_data(n, 3, 31);
  for (Index i = 0; i < 30; ++i) x(i, 2) = 2.0 * x(i, 0) - x(i, 1) + 5.0;
  for (Index i = 30; i < n; ++i) x(i, 2) += 3.0;
  const RobustFit f = det_mcd(make_view(x));
  ASSERT_TRUE(f.exact_fit);
  EXPECT_EQ(f.hyperplane.rows_on, 30);
  Eigen::Vector3d expected(2.0, -1.0, -1.0);
  expected /= expected.norm();
  const double sign = f.hyperplane.normal.dot(expected) > 0 ? 1.0 : -1.0;
  EXPECT_NEAR((sign * f.hyperplane.normal - expected).norm(), 0.0, 1e-9);
  EXPECT_NEAR(sign * f.hyperplane.offset, -5.0 / std::sqrt(6.0), 1e-9);
  // All rows on one plane.
  Eigen::MatrixXd flat = x.topRows(30);
  const RobustFit g = det_mcd(make_view(flat));
  ASSERT_TRUE(g.exact_fit);
  EXPECT_EQ(g.hyperplane.rows_on, 30);
}

TEST(DetMcd, BadInput) {
  Eigen::MatrixXd wide = mcd_test::normal_data(3, 5, 1);
  EXPECT_THROW(det_mcd(make_view(wide)), Error);
  Eigen::MatrixXd x = mcd_test::normal_data(30, 2, 1);
  DetMcdOptions o;
  o.alpha = 0.2;
  EXPECT_THROW(det_mcd(make_view(x), o), Error);
  x(0, 0) = -INFINITY;
  EXPECT_THROW(det_mcd(make_view(x)), Error);
  DetMcdOptions c;
  c.progress = [](const char*, double f) { return f < 0.5; };
  Eigen::MatrixXd y = mcd_test::normal_data(30, 2, 2);
  try {
    det_mcd(make_view(y), c);
    FAIL();
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Cancelled);
  }
}

// The six chains of C-steps run in lockstep, sharing each pass over the rows
// (mcd_deterministic.cpp); the fit must be the one of running each start's
// chain alone to convergence (c_steps_to_convergence) and keeping the lowest
// determinant, the algorithm as Hubert, Rousseeuw & Verdonck (2012) state it.
// Built here from the published pieces; both scales (Qn, and tau by lowering
// the switch point); on 1 and 2 threads.
TEST(DetMcd, LockstepChainsEqualChainsRunOneByOne) {
  const Index n = 3000, p = 6;
  Eigen::MatrixXd x = mcd_test::normal_data(n, p, 61);
  for (Index i = 0; i < n / 5; ++i) x.row(i).array() += 4.0;  // a shifted cluster of 20%
  for (const Index qn_max_rows : {Index{10000}, Index{100}}) {
    const auto scale = n <= qn_max_rows ? mcd_detail::ColumnScale::Qn : mcd_detail::ColumnScale::Tau;
    const mcd_detail::Standardised st = mcd_detail::standardise(make_view(x), scale);
    ScaleWorkspace ws;
    mcd_detail::StartBasis ogk;
    const auto starts = mcd_detail::deterministic_starts(st.z, true, ws, &ogk, scale);
    const Index h = mcd_subset_size(n, p, 0.5);
    for (const int max_csteps : {200, 1, 2}) {
      double best = std::numeric_limits<double>::infinity();
      std::vector<Index> best_rows;
      int steps = 0;
      mcd_detail::StartScratch scratch;
      for (std::size_t k = 0; k < starts.size(); ++k) {
        Eigen::VectorXd d2;
        const bool ok = k + 1 == starts.size() ? mcd_detail::start_distances(d2, st.z, ogk, scratch)
                                               : mcd_detail::start_distances(d2, st.z, starts[k], scale, scratch);
        ASSERT_TRUE(ok);
        mcd_detail::SubsetFit f = mcd_detail::fit_subset(st.z, mcd_detail::smallest_h(d2, (n + 1) / 2, st.z));
        steps += mcd_detail::c_steps_to_convergence(st.z, h, f, max_csteps);
        if (f.log_det < best) {
          best = f.log_det;
          best_rows = f.rows;
        }
      }
      for (int threads : {1, 2}) {
        DetMcdOptions o;
        o.qn_max_rows = qn_max_rows;
        o.threads = threads;
        o.max_csteps = max_csteps;
        const RobustFit fit = det_mcd(make_view(x), o);
        EXPECT_EQ(fit.h_subset, best_rows)
            << "qn_max_rows " << qn_max_rows << ", " << threads << " threads, " << max_csteps << " C-steps at most";
        // raw_log_det is in the caller's units: the standardised one plus 2 sum log scale.
        // Both sides end in fit_subset() of the same rows: the same bits.
        EXPECT_EQ(fit.raw_log_det, best + 2.0 * st.scale.array().log().sum());
        EXPECT_EQ(fit.iterations, steps);
        EXPECT_EQ(fit.starts, 6);
      }
      if (max_csteps == 200) EXPECT_GT(steps, 12);  // the chains took several steps each
    }
  }
}
