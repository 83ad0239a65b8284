// FAST-MCD properties: equivariance, reproducibility, breakdown, consistency,
// exact fit, the exact univariate algorithm, the nested scheme, bad input.
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <array>
#include <cmath>
#include <cstring>

#include "core/error.hpp"
#include "core/mcd_deterministic.hpp"
#include "core/mcd_fast.hpp"
#include "core/moments.hpp"
#include "test_mcd_common.hpp"

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd with_outliers(Index n, Index p, Index bad, double shift, std::uint64_t seed) {
  Eigen::MatrixXd x = mcd_test::normal_data(n, p, seed);
  for (Index i = 0; i < bad; ++i) x.row(i).array() += shift;
  return x;
}

// Eigenvalues of a^{-1/2} b a^{-1/2}: all 1 when b == a.
Eigen::VectorXd relative_eigenvalues(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  Eigen::GeneralizedSelfAdjointEigenSolver<Eigen::MatrixXd> es(b, a);
  return es.eigenvalues();
}

}  // namespace

TEST(FastMcd, SubsetSizeFormula) {
  EXPECT_EQ(mcd_subset_size(21, 3, 0.5), 12);
  EXPECT_EQ(mcd_subset_size(21, 3, 1.0), 21);
  EXPECT_EQ(mcd_subset_size(100, 5, 0.75), 76);  // floor(2*53 - 100 + 2*47*0.75) = floor(76.5)
  EXPECT_THROW(mcd_subset_size(10, 2, 0.49), Error);
  EXPECT_THROW(mcd_subset_size(10, 2, std::nan("")), Error);
}

TEST(FastMcd, AffineEquivarianceSameSeed) {
  for (const Index n : {Index{60}, Index{250}, Index{1300}}) {  // 1300: nested scheme
    const Index p = 4;
    const Eigen::MatrixXd x = with_outliers(n, p, n / 5, 6.0, 100 + static_cast<std::uint64_t>(n));
    Eigen::MatrixXd a(p, p);
    a << 2, 0.5, 0, 1, -1, 3, 0.2, 0, 0, 0.1, 1e3, 0, 0.3, 0, 0, 0.01;
    Eigen::VectorXd b(p);
    b << 1e4, -3, 7, 1e6;
    const Eigen::MatrixXd y = (x * a.transpose()).rowwise() + b.transpose();
    FastMcdOptions o;
    o.seed = 42;
    const RobustFit fx = fast_mcd(make_view(x), o);
    const RobustFit fy = fast_mcd(make_view(y), o);
    EXPECT_EQ(fx.h_subset, fy.h_subset) << n;
    const Eigen::VectorXd t = a * fx.location + b;
    const Eigen::MatrixXd s = a * fx.scatter * a.transpose();
    for (Index j = 0; j < p; ++j) {
      EXPECT_NEAR(fy.location(j), t(j), 1e-9 * (std::abs(b(j)) + std::sqrt(s(j, j))));
      for (Index k = 0; k < p; ++k) EXPECT_NEAR(fy.scatter(j, k), s(j, k), 1e-8 * std::sqrt(s(j, j) * s(k, k)));
    }
    EXPECT_NEAR(fy.raw_log_det, fx.raw_log_det + 2.0 * std::log(std::abs(a.determinant())), 1e-8);
    EXPECT_EQ(fx.outlier, fy.outlier);
  }
}

TEST(FastMcd, SameSeedBitIdenticalDifferentSeedStillOptimal) {
  const Eigen::MatrixXd x = with_outliers(900, 5, 200, 5.0, 3);
  FastMcdOptions o;
  o.seed = 0xDEADBEEFCAFEull;
  const RobustFit a = fast_mcd(make_view(x), o);
  const RobustFit b = fast_mcd(make_view(x), o);
  EXPECT_EQ(a.h_subset, b.h_subset);
  EXPECT_TRUE((a.location.array() == b.location.array()).all());
  EXPECT_TRUE((a.scatter.array() == b.scatter.array()).all());
  EXPECT_EQ(a.raw_log_det, b.raw_log_det);
  EXPECT_EQ(a.iterations, b.iterations);
  // Planted outliers are found whatever the seed.
  o.seed = 1;
  const RobustFit c = fast_mcd(make_view(x), o);
  for (Index i = 0; i < 200; ++i) EXPECT_TRUE(c.outlier[static_cast<std::size_t>(i)]) << i;
}

TEST(FastMcd, UnivariateExactMatchesBruteForce) {
  std::mt19937_64 g(5);
  for (int trial = 0; trial < 60; ++trial) {
    const Index n = 5 + static_cast<Index>(g() % 12);
    Eigen::MatrixXd x = mcd_test::normal_data(n, 1, 1000 + static_cast<std::uint64_t>(trial));
    if (trial % 4 == 0) x(0, 0) = 50.0;     // an outlier
    if (trial % 5 == 0) x(1, 0) = x(2, 0);  // a tie
    if (trial % 7 == 0) x.array() += 1e8;   // a huge offset
    const double alpha = trial % 2 == 0 ? 0.5 : 0.8;
    const Index h = mcd_subset_size(n, 1, alpha);
    FastMcdOptions o;
    o.alpha = alpha;
    const RobustFit f = fast_mcd(make_view(x), o);
    ASSERT_FALSE(f.exact_fit);
    // Offset data: the brute force sees the same cancellation; compare with a
    // tolerance scaled by the offset's rounding (1e8 * 2^-52 over sd ~ 1).
    const double tol = trial % 7 == 0 ? 1e-6 : 1e-10;
    EXPECT_NEAR(f.raw_log_det, mcd_test::exhaustive_min_log_det(x, h), tol) << "n=" << n << " h=" << h;
  }
}

TEST(FastMcd, UnivariateExactFitWhenHValuesCoincide) {
  Eigen::MatrixXd x(9, 1);
  x << 1, 2, 3, 3, 3, 3, 3, 9, 10;
  const RobustFit f = fast_mcd(make_view(x));  // h = floor(11/2) = 5
  ASSERT_TRUE(f.exact_fit);
  EXPECT_EQ(f.hyperplane.rows_on, 5);
  EXPECT_NEAR(std::abs(f.hyperplane.normal(0)), 1.0, 1e-15);
  EXPECT_NEAR(f.hyperplane.offset / f.hyperplane.normal(0), 3.0, 1e-12);
}

// Breakdown: replace n - h rows by values up to 1e6 times the data scale.
TEST(FastMcd, BreakdownBoundedClassicalNot) {
  const Index n = 100, p = 3;
  const Eigen::MatrixXd clean = mcd_test::normal_data(n, p, 77);
  const RobustFit ref = fast_mcd(make_view(clean));
  const Index h = ref.h;
  std::mt19937_64 g(9);
  for (int pattern = 0; pattern < 3; ++pattern) {
    Eigen::MatrixXd x = clean;
    for (Index i = 0; i < n - h; ++i)
      for (Index j = 0; j < p; ++j) {
        const double u = static_cast<double>(g() % 1000) / 1000.0;
        x(i, j) = pattern == 0   ? 1e6 + u                                    // one far cluster
                  : pattern == 1 ? (g() % 2 ? 1e6 : -1e6) * (1 + u)           // scattered
                                 : 1e6 * static_cast<double>(1 + i % 3) + u;  // three far clusters
      }
    const RobustFit f = fast_mcd(make_view(x));
    ASSERT_FALSE(f.exact_fit) << pattern << " rows on " << f.hyperplane.rows_on;
    // Bound: the clean rows are N(0, I); the estimate of the remaining 52 rows
    // differs from the clean fit by sampling only: location within 1, scatter
    // eigenvalues relative to the clean fit within [0.2, 5].
    EXPECT_LT((f.location - ref.location).norm(), 1.0) << pattern;
    const Eigen::VectorXd ev = relative_eigenvalues(ref.scatter, f.scatter);
    EXPECT_GT(ev.minCoeff(), 0.2) << pattern;
    EXPECT_LT(ev.maxCoeff(), 5.0) << pattern;
    const MeanCovariance cl = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
    EXPECT_GT((cl.mean - ref.location).norm() + cl.covariance.norm(), 1e5) << pattern;
    for (Index i = 0; i < n - h; ++i) EXPECT_TRUE(f.outlier[static_cast<std::size_t>(i)]);
  }
}

// Consistency: n = 20000, p = 5, Sigma = A A'. Relative eigenvalues of the
// estimate against Sigma: a classical covariance has extreme relative
// eigenvalues about 1 +- 2 sqrt(p/n) = 1 +- 0.032; the reweighted MCD is a bit
// less efficient (Croux & Haesbroeck 1999 report efficiencies well above 0.5 at
// p = 5), so allow +-0.08; the raw MCD (h ~ n/2) is far less efficient: +-0.2.
TEST(FastMcd, ConsistentAtTheNormal) {
  const Index n = 20000, p = 5;
  Eigen::MatrixXd a(p, p);
  a << 1, 0, 0, 0, 0, 0.5, 2, 0, 0, 0, -0.3, 0.2, 0.5, 0, 0, 0, 0, 1, 3, 0, 0.1, 0.1, 0.1, 0.1, 1;
  const Eigen::MatrixXd sigma = a * a.transpose();
  const Eigen::MatrixXd x = mcd_test::normal_data(n, p, 2024) * a.transpose();
  const RobustFit f = fast_mcd(make_view(x));
  const Eigen::VectorXd ev = relative_eigenvalues(sigma, f.scatter);
  EXPECT_GT(ev.minCoeff(), 0.92);
  EXPECT_LT(ev.maxCoeff(), 1.08);
  const Eigen::VectorXd raw = relative_eigenvalues(sigma, f.raw_scatter);
  EXPECT_GT(raw.minCoeff(), 0.8);
  EXPECT_LT(raw.maxCoeff(), 1.2);
  // Location: sd of each coordinate mean about sqrt(sigma_jj / n) <= 0.025.
  EXPECT_LT(f.location.cwiseAbs().maxCoeff(), 0.1);
  // About 2.5% flagged at the normal.
  const double flagged = static_cast<double>(std::count(f.outlier.begin(), f.outlier.end(), true)) / n;
  EXPECT_NEAR(flagged, 0.025, 0.01);
  EXPECT_GT(f.consistency_factor, 1.0);
  EXPECT_GT(f.reweight_factor, 1.0);
}

// More than h rows exactly on the plane x3 = 2 x1 - x2 + 5.
TEST(FastMcd, ExactFitReportsHyperplane) {
  const Index n = 40;
  Eigen::MatrixXd x = mcd_test::normal_data(n, 3, 31);
  for (Index i = 0; i < 30; ++i) x(i, 2) = 2.0 * x(i, 0) - x(i, 1) + 5.0;
  for (Index i = 30; i < n; ++i) x(i, 2) += 3.0;
  for (const std::uint64_t seed : {1ull, 2ull}) {
    FastMcdOptions o;
    o.seed = seed;
    const RobustFit f = fast_mcd(make_view(x), o);
    ASSERT_TRUE(f.exact_fit);
    EXPECT_EQ(f.hyperplane.rows_on, 30);
    Eigen::Vector3d expected(2.0, -1.0, -1.0);
    expected /= expected.norm();
    const double sign = f.hyperplane.normal.dot(expected) > 0 ? 1.0 : -1.0;
    EXPECT_NEAR((sign * f.hyperplane.normal - expected).norm(), 0.0, 1e-9);
    EXPECT_NEAR(sign * f.hyperplane.offset, -5.0 / std::sqrt(6.0), 1e-9);
    for (Index i = 0; i < n; ++i) EXPECT_EQ(f.outlier[static_cast<std::size_t>(i)], i >= 30) << i;
    EXPECT_TRUE(std::isinf(f.raw_log_det));
    EXPECT_EQ(f.robust_d2.size(), 0);
  }
}

TEST(FastMcd, ConstantColumnIsAnExactFit) {
  Eigen::MatrixXd x = mcd_test::normal_data(30, 3, 4);
  x.col(1).setConstant(-2.5);
  const RobustFit f = fast_mcd(make_view(x));
  ASSERT_TRUE(f.exact_fit);
  EXPECT_EQ(f.hyperplane.rows_on, 30);
  EXPECT_NEAR(std::abs(f.hyperplane.normal(1)), 1.0, 1e-15);
  EXPECT_NEAR(f.hyperplane.offset * f.hyperplane.normal(1), -2.5, 1e-12);
}

// Two constant columns leave a two-dimensional null space: the normal is the
// first constant column's axis exactly (given, not chosen by an eigensolver),
// and the plane is that column's value. Exact by construction (core/mcd_common.cpp).
TEST(FastMcd, TwoConstantColumnsTakeTheFirstAsNormal) {
  Eigen::MatrixXd x = mcd_test::normal_data(30, 4, 5);
  x.col(1).setConstant(-2.5);
  x.col(3).setConstant(4.0);
  for (const bool deterministic : {false, true}) {
    const RobustFit f = deterministic ? det_mcd(make_view(x)) : fast_mcd(make_view(x));
    ASSERT_TRUE(f.exact_fit);
    EXPECT_EQ(f.hyperplane.rows_on, 30);
    EXPECT_EQ(f.hyperplane.normal, Eigen::Vector4d::Unit(1));
    EXPECT_EQ(f.hyperplane.offset, -2.5);
    EXPECT_EQ(f.raw_scatter(1, 1), 0.0);
    EXPECT_EQ(f.raw_scatter(3, 3), 0.0);
  }
}

TEST(FastMcd, NestedSchemeFindsOutliers) {
  const Eigen::MatrixXd x = with_outliers(5000, 6, 1000, 4.0, 8);
  const RobustFit f = fast_mcd(make_view(x));
  for (Index i = 0; i < 1000; ++i) ASSERT_TRUE(f.outlier[static_cast<std::size_t>(i)]) << i;
  EXPECT_LT(f.location.cwiseAbs().maxCoeff(), 0.1);
  EXPECT_GT(f.starts, 400);
}

TEST(FastMcd, BadInputAndCancel) {
  Eigen::MatrixXd wide = mcd_test::normal_data(4, 4, 1);
  try {
    fast_mcd(make_view(wide));
    FAIL();
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Data);
    EXPECT_NE(std::string(e.what()).find("MRCD"), std::string::npos);
  }
  Eigen::MatrixXd x = mcd_test::normal_data(30, 2, 1);
  FastMcdOptions o;
  o.alpha = 0.3;
  EXPECT_THROW(fast_mcd(make_view(x), o), Error);
  o.alpha = 1.01;
  EXPECT_THROW(fast_mcd(make_view(x), o), Error);
  Eigen::MatrixXd bad = x;
  bad(3, 1) = std::nan("");
  try {
    fast_mcd(make_view(bad));
    FAIL();
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Data);
  }
  bad(3, 1) = INFINITY;
  EXPECT_THROW(fast_mcd(make_view(bad)), Error);
  Eigen::MatrixXd same = Eigen::MatrixXd::Constant(10, 2, 3.0);
  EXPECT_THROW(fast_mcd(make_view(same)), Error);
  FastMcdOptions c;
  int calls = 0;
  c.progress = [&calls](const char*, double) { return ++calls < 2; };
  try {
    fast_mcd(make_view(x), c);
    FAIL();
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Cancelled);
  }
  // alpha = 1: the classical estimate (h = n).
  FastMcdOptions full;
  full.alpha = 1.0;
  const RobustFit f = fast_mcd(make_view(x), full);
  const MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCount);
  EXPECT_NEAR((f.raw_location - mc.mean).norm(), 0.0, 1e-12);
  EXPECT_NEAR((f.raw_scatter - mc.covariance).norm(), 0.0, 1e-12);
}

// Cancellation is prompt: on one thread the progress callback is asked before
// every start and every round of C-steps, so the work between two calls is at
// most one start (initial_csteps C-steps) or one round (best_kept C-steps). Counted,
// not timed: over a whole fit, starts <= calls and C-steps <= calls *
// max(initial_csteps, best_kept), on the plain and on the nested scheme.
// After the callback asks to stop it is never called again.
TEST(FastMcd, ProgressIsAskedOftenEnoughToStopPromptly) {
  for (const Index n : {Index{400}, Index{3000}}) {  // plain scheme, nested scheme
    SCOPED_TRACE(n);
    const Eigen::MatrixXd x = with_outliers(n, 4, n / 10, 8.0, 17);
    FastMcdOptions o;
    int calls = 0;
    double last = -1.0;
    o.progress = [&](const char*, double fraction) {
      EXPECT_GE(fraction, last);  // non-decreasing, as the header promises
      last = fraction;
      ++calls;
      return true;
    };
    const RobustFit r = fast_mcd(make_view(x), o);
    const int per_call = std::max(o.initial_csteps, o.best_kept);
    EXPECT_LE(r.starts, calls);
    EXPECT_LE(r.iterations, calls * per_call);
    EXPECT_GE(calls, o.starts);  // one call per start at least
    for (const int stop_at : {1, 2, 50, calls / 2, calls - 1}) {
      SCOPED_TRACE(stop_at);
      int seen = 0;
      FastMcdOptions c = o;
      c.progress = [&](const char*, double) { return ++seen < stop_at; };
      try {
        fast_mcd(make_view(x), c);
        FAIL() << "not cancelled";
      } catch (const Error& e) {
        EXPECT_EQ(e.kind(), ErrorKind::Cancelled);
      }
      EXPECT_EQ(seen, stop_at);  // no call after the one that said stop
    }
    // On two threads the starts go in rounds of kFastMcdStartsPerThread per
    // thread, one call before each round (mcd_fast.hpp).
    FastMcdOptions two = o;
    two.threads = 2;
    calls = 0;
    last = -1.0;
    const RobustFit r2 = fast_mcd(make_view(x), two);
    EXPECT_LE(r2.starts, calls * 2 * kFastMcdStartsPerThread);
    EXPECT_LE(r2.iterations, calls * std::max(2 * kFastMcdStartsPerThread * o.initial_csteps, o.best_kept));
    EXPECT_GE(calls, o.starts / (2 * kFastMcdStartsPerThread));
  }
}

// The starts of a round and the candidates of a C-step round run side by side
// (mcd_fast.cpp); their outcomes are taken in order, so the fit and the work
// counted do not depend on the threads. Three cases that reach the ordered
// bookkeeping: coarse integer data (singular (p+1)-subsets that grow, each
// from its own stream), a plane holding 70% of the rows (an exact fit found
// while later starts of the same round ran), and plain continuous data with
// several candidates on all rows (n = 5000: ten go to the full data).
TEST(FastMcd, ThreadsDoNotChangeTheFitOrTheWorkCounted) {
  Eigen::MatrixXd coarse = mcd_test::normal_data(3000, 4, 41);
  coarse = (coarse * 1.5).array().round();  // about seven distinct values per column
  Eigen::MatrixXd plane = mcd_test::normal_data(3000, 3, 42);
  for (Index i = 0; i < 2100; ++i) plane(i, 2) = 0.5 * plane(i, 0) + plane(i, 1) - 1.0;
  const Eigen::MatrixXd plain = with_outliers(5000, 5, 500, 7.0, 43);
  int case_index = 0;
  const std::array<const Eigen::MatrixXd*, 3> cases{&coarse, &plane, &plain};
  for (const Eigen::MatrixXd* x : cases) {
    SCOPED_TRACE(case_index++);
    FastMcdOptions o;
    o.seed = 9;
    const RobustFit one = fast_mcd(make_view(*x), o);
    for (const int t : {2, 3}) {
      SCOPED_TRACE(t);
      o.threads = t;
      const RobustFit many = fast_mcd(make_view(*x), o);
      EXPECT_EQ(one.exact_fit, many.exact_fit);
      EXPECT_EQ(one.h_subset, many.h_subset);
      EXPECT_EQ(one.iterations, many.iterations);
      EXPECT_EQ(one.starts, many.starts);
      EXPECT_EQ(one.outlier, many.outlier);
      ASSERT_EQ(one.scatter.size(), many.scatter.size());
      EXPECT_EQ(std::memcmp(one.scatter.data(), many.scatter.data(), sizeof(double) * one.scatter.size()), 0);
      EXPECT_EQ(std::memcmp(one.location.data(), many.location.data(), sizeof(double) * one.location.size()), 0);
    }
  }
  // 1e5 rows: more than 16 chunks, so the distances of all rows run on
  // threads too, and with two candidates on the full data four threads give
  // each candidate two (refine's nested loops).
  {
    const Eigen::MatrixXd big = with_outliers(100000, 4, 10000, 7.0, 44);
    FastMcdOptions o;
    o.seed = 3;
    const RobustFit one = fast_mcd(make_view(big), o);
    o.threads = 4;
    const RobustFit four = fast_mcd(make_view(big), o);
    EXPECT_EQ(one.h_subset, four.h_subset);
    EXPECT_EQ(one.iterations, four.iterations);
    EXPECT_EQ(std::memcmp(one.scatter.data(), four.scatter.data(), sizeof(double) * one.scatter.size()), 0);
  }
  // The plane case really is an exact fit found during the starts.
  FastMcdOptions o;
  o.seed = 9;
  EXPECT_TRUE(fast_mcd(make_view(plane), o).exact_fit);
}
