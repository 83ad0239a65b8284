// The pieces the MCD algorithms share: the median/MAD standardisation, the
// order-statistic selection, the choice of the h smallest distances, the
// one-pass and updated subset fits, the C-step distances and the reweighting
// distances, each against a straightforward computation done here.
#include <gtest/gtest.h>

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <string>
#include <limits>
#include <random>
#include <vector>

#include "core/cholesky.hpp"
#include "core/distributions.hpp"
#include "core/error.hpp"
#include "core/mcd_common.hpp"
#include "core/mcd_fast.hpp"
#include "core/order_statistics.hpp"
#include "core/robust_scale.hpp"
#include "test_mcd_common.hpp"

using namespace ellipsa::core;

namespace {

// Phi^-1(0.75) from the normal quantile (common practice, no published source).
constexpr double kPhiInv075 = 0.6744897501960817;
// 1 / Phi^-1(0.75), the normal-consistency factor of the MAD (common practice,
// no published source).
constexpr double kMadFactor = 1.482602218505602;

// Median by a full sort: the middle value, or the mean of the two middle ones.
double sorted_median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const std::size_t n = v.size();
  return n % 2 == 1 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

std::vector<double> column(const Eigen::MatrixXd& x, Index j) {
  return std::vector<double>(x.col(j).data(), x.col(j).data() + x.rows());
}

// Data with ties: normal values rounded to a grid of `step`.
Eigen::MatrixXd tied_data(Index n, Index p, double step, std::uint64_t seed) {
  Eigen::MatrixXd x = mcd_test::normal_data(n, p, seed);
  return (x.array() / step).round() * step;
}

double nth_value(std::vector<double> v, Index k) {
  std::nth_element(v.begin(), v.begin() + k, v.end());
  return v[static_cast<std::size_t>(k)];
}

void expect_order_statistics(const std::vector<double>& v, Index k, const char* what) {
  std::vector<double> buf;
  const OrderPair got = order_statistics(v.data(), static_cast<Index>(v.size()), k, buf);
  const double at = nth_value(v, k);
  const double below = k == 0 ? at : nth_value(v, k - 1);
  EXPECT_EQ(got.at, at) << what << ": n = " << v.size() << ", k = " << k;
  EXPECT_EQ(got.below, below) << what << ": n = " << v.size() << ", k = " << k;
}

}  // namespace

TEST(McdPieces, MadFactorMatchesNormalQuantile) { EXPECT_NEAR(1.0 / kPhiInv075, kMadFactor, 1e-15); }

// The standardisation against a sort-based median and MAD at sizes on both
// sides of the selection's sampling threshold (8192), odd and even n, with
// ties, a column where more than half the values coincide (MAD 0: root mean
// square about the mean instead) and a constant column (scale 1).
TEST(McdPieces, StandardiseMadMatchesDefinitions) {
  for (Index n : {2, 3, 7, 100, 1001, 8192, 8193, 20000, 20001, 60000}) {
    const Index p = 4;
    Eigen::MatrixXd x = tied_data(n, p, 0.05, 100 + static_cast<std::uint64_t>(n));
    x.col(1) = 1e6 + 3.0 * x.col(1).array();  // offset and spread
    for (Index i = 0; i < n; ++i)             // MAD 0: >= half the values equal 2.5
      if (i % 4 != 0) x(i, 2) = 2.5;
    x.col(3).setConstant(-7.25);  // constant
    const mcd_detail::Standardised s = mcd_detail::standardise(make_view(x), mcd_detail::ColumnScale::Mad);
    EXPECT_EQ(s.constant_column, 3);
    for (Index j = 0; j < p; ++j) {
      const std::vector<double> c = column(x, j);
      const double m = sorted_median(c);
      std::vector<double> dev(c.size());
      for (std::size_t i = 0; i < c.size(); ++i) dev[i] = std::abs(c[i] - m);
      double sc = sorted_median(dev) * kMadFactor;
      if (!(sc > 0.0)) {
        const double mean = x.col(j).mean();
        sc = std::sqrt((x.col(j).array() - mean).square().mean());
      }
      if (!(sc > 0.0)) sc = 1.0;
      // The midpoint a + (b - a)/2 and (a + b)/2 may differ in the last bit,
      // and that difference passes into every deviation from the median.
      const double centre_tol = 4e-16 * (std::abs(m) + 1.0);
      EXPECT_NEAR(s.centre(j), m, centre_tol) << "n = " << n << ", column " << j;
      EXPECT_NEAR(s.scale(j), sc, 1e-14 * sc + centre_tol) << "n = " << n << ", column " << j;
      // Bit-identical to the library's median() and mad_about().
      EXPECT_EQ(s.centre(j), median(x.col(j))) << "n = " << n << ", column " << j;
      if (j < 2) EXPECT_EQ(s.scale(j), mcd_test::mad_of(x.col(j))) << "n = " << n << ", column " << j;
      for (Index i = 0; i < n; ++i) ASSERT_EQ(s.z(i, j), (x(i, j) - s.centre(j)) / s.scale(j));
      EXPECT_TRUE(s.z.col(j).allFinite());
    }
  }
}

TEST(McdPieces, StandardiseQnUsesMedianAndQn) {
  const Eigen::MatrixXd x = tied_data(12345, 3, 0.01, 7);
  const mcd_detail::Standardised s = mcd_detail::standardise(make_view(x), mcd_detail::ColumnScale::Qn);
  for (Index j = 0; j < 3; ++j) {
    EXPECT_EQ(s.centre(j), median(x.col(j)));
    EXPECT_EQ(s.scale(j), qn_scale(x.col(j)));
  }
}

TEST(McdPieces, OrderStatisticsEqualNthElement) {
  std::mt19937_64 g(3);
  for (Index n : {1, 2, 3, 10, 1000, 8192, 8193, 30001, 100000}) {
    for (double step : {0.0, 0.001, 0.5}) {  // continuous, light ties, heavy ties
      Eigen::MatrixXd x = mcd_test::normal_data(n, 1, static_cast<std::uint64_t>(n) * 7 + 1);
      if (step > 0.0) x = (x.array() / step).round() * step;
      const std::vector<double> v = column(x, 0);
      std::vector<Index> ks = {0, n - 1, n / 2, (n - 1) / 2, n / 4, (3 * n) / 4};
      for (int r = 0; r < 6; ++r) ks.push_back(static_cast<Index>(g() % static_cast<std::uint64_t>(n)));
      for (Index k : ks) expect_order_statistics(v, k, "normal");
    }
  }
}

// Inputs for which the strided sample misleads the bracket: the sampled
// positions hold the smallest values (the fallback to a full selection), and
// sorted runs; infinities are legitimate values.
TEST(McdPieces, OrderStatisticsAdversarialInputs) {
  const Index n = 50000, stride_sample = 2048;
  std::vector<double> v(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) v[static_cast<std::size_t>(i)] = 1.0 + static_cast<double>(i % 97);
  for (Index i = 0; i < stride_sample; ++i)
    v[static_cast<std::size_t>((i * n) / stride_sample)] = -1.0 - static_cast<double>(i);
  for (Index k : {Index{0}, Index{1}, Index{2047}, Index{2048}, Index{2049}, n / 2, n - 1})
    expect_order_statistics(v, k, "misleading sample");
  std::vector<double> asc(static_cast<std::size_t>(n)), desc(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) {
    asc[static_cast<std::size_t>(i)] = static_cast<double>(i / 3);
    desc[static_cast<std::size_t>(i)] = -static_cast<double>(i / 3);
  }
  for (Index k : {Index{0}, Index{1}, n / 3, n / 2, n - 2, n - 1}) {
    expect_order_statistics(asc, k, "ascending");
    expect_order_statistics(desc, k, "descending");
  }
  std::vector<double> inf = asc;
  const double big = std::numeric_limits<double>::infinity();
  for (Index i = 0; i < n; i += 5) inf[static_cast<std::size_t>(i)] = (i % 2 == 0) ? big : -big;
  for (Index k : {Index{0}, Index{1}, n / 10, n / 2, n - 1}) expect_order_statistics(inf, k, "infinities");
}

TEST(McdPieces, OrderStatisticsEdges) {
  std::vector<double> buf;
  const double one = 4.5;
  OrderPair a = order_statistics(&one, 1, 0, buf);
  EXPECT_EQ(a.at, 4.5);
  EXPECT_EQ(a.below, 4.5);
  EXPECT_EQ(median_of(&one, 1, buf), 4.5);
  const double two[] = {3.0, -1.0};
  a = order_statistics(two, 2, 1, buf);
  EXPECT_EQ(a.below, -1.0);
  EXPECT_EQ(a.at, 3.0);
  EXPECT_EQ(median_of(two, 2, buf), 1.0);
  // Huge values of equal sign: the midpoint must not overflow.
  const double huge[] = {1.5e308, 1.7e308};
  EXPECT_EQ(median_of(huge, 2, buf), 1.6e308);
  for (Index n : {Index{1}, Index{2}, Index{9000}, Index{20000}}) {
    const std::vector<double> same(static_cast<std::size_t>(n), -0.375);
    for (Index k : {Index{0}, n / 2, n - 1}) {
      const OrderPair o = order_statistics(same.data(), n, k, buf);
      EXPECT_EQ(o.at, -0.375);
      EXPECT_EQ(o.below, -0.375);
    }
    EXPECT_EQ(median_of(same.data(), n, buf), -0.375);
  }
  EXPECT_THROW(order_statistics(two, 2, 2, buf), Error);
  EXPECT_THROW(order_statistics(two, 2, -1, buf), Error);
  EXPECT_THROW(median_of(two, 0, buf), Error);
}

// smallest_h against a full sort by (d2, row values, row index).
TEST(McdPieces, SmallestHMatchesSort) {
  for (Index n : {5, 200, 9000, 25000}) {
    const Eigen::MatrixXd z = tied_data(n, 2, 0.5, 40 + static_cast<std::uint64_t>(n));
    Eigen::VectorXd d2 = z.rowwise().squaredNorm();  // many ties
    for (Index h : {Index{1}, (n + 3) / 2, n - 1, n}) {
      std::vector<Index> order(static_cast<std::size_t>(n));
      for (Index i = 0; i < n; ++i) order[static_cast<std::size_t>(i)] = i;
      std::sort(order.begin(), order.end(), [&](Index a, Index b) {
        if (d2(a) != d2(b)) return d2(a) < d2(b);
        for (Index j = 0; j < z.cols(); ++j)
          if (z(a, j) != z(b, j)) return z(a, j) < z(b, j);
        return a < b;
      });
      std::vector<Index> want(order.begin(), order.begin() + h);
      std::sort(want.begin(), want.end());
      EXPECT_EQ(mcd_detail::smallest_h(d2, h, z), want) << "n = " << n << ", h = " << h;
    }
  }
}

// The one-pass fit and the updated fit against the two-pass fit of the same
// rows. Tolerances: 1e-13 (relative to the largest covariance entry) for one
// pass; for updates the rounding of each update adds up, 1e-12 after a chain
// of 30 updates of the kind the late C-steps make.
TEST(McdPieces, UpdatedFitEqualsRecomputedFit) {
  const Index n = 4000, p = 6, k = 2100;
  Eigen::MatrixXd z = mcd_test::normal_data(n, p, 5);
  z.col(0) = 3.0 + 0.5 * z.col(0).array() + 0.8 * z.col(1).array();  // correlated, off-centre
  std::mt19937_64 g(17);
  std::vector<Index> perm(static_cast<std::size_t>(n));
  for (Index i = 0; i < n; ++i) perm[static_cast<std::size_t>(i)] = i;
  std::shuffle(perm.begin(), perm.end(), g);
  std::vector<Index> rows(perm.begin(), perm.begin() + k);
  std::sort(rows.begin(), rows.end());
  mcd_detail::CStepWorkspace w;

  mcd_detail::SubsetFit one_pass;
  one_pass.rows = rows;
  mcd_detail::fit_rows(z, one_pass, w);
  mcd_detail::SubsetFit fit = mcd_detail::fit_subset(z, rows);
  ASSERT_FALSE(fit.singular);
  const double scale = fit.cov.cwiseAbs().maxCoeff();
  EXPECT_LE((one_pass.mean - fit.mean).cwiseAbs().maxCoeff(), 1e-13);
  EXPECT_LE((one_pass.cov - fit.cov).cwiseAbs().maxCoeff(), 1e-13 * scale);
  EXPECT_NEAR(one_pass.log_det, fit.log_det, 1e-12);

  std::vector<Index> outside(perm.begin() + k, perm.end());
  for (int step = 0; step < 30; ++step) {
    // Swap 20 rows in for 20 rows out (fewer than k/8 changed).
    std::vector<Index> next = fit.rows;
    std::shuffle(next.begin(), next.end(), g);
    std::shuffle(outside.begin(), outside.end(), g);
    for (int r = 0; r < 20; ++r) std::swap(next[static_cast<std::size_t>(r)], outside[static_cast<std::size_t>(r)]);
    std::sort(next.begin(), next.end());
    mcd_detail::SubsetFit updated;
    updated.rows = next;
    ASSERT_TRUE(mcd_detail::update_fit(z, fit, updated, w));
    const mcd_detail::SubsetFit fresh = mcd_detail::fit_subset(z, next);
    EXPECT_EQ(updated.rows, fresh.rows);
    EXPECT_LE((updated.mean - fresh.mean).cwiseAbs().maxCoeff(), 1e-12) << "update " << step;
    EXPECT_LE((updated.cov - fresh.cov).cwiseAbs().maxCoeff(), 1e-12 * scale) << "update " << step;
    EXPECT_NEAR(updated.log_det, fresh.log_det, 1e-10) << "update " << step;
    EXPECT_EQ(updated.singular, fresh.singular);
    fit = std::move(updated);  // chain the updates
  }
  // Declined: no change, too many changes, a different size.
  mcd_detail::SubsetFit same;
  same.rows = fit.rows;
  EXPECT_FALSE(mcd_detail::update_fit(z, fit, same, w));
  mcd_detail::SubsetFit many;
  many.rows.assign(perm.begin() + 1000, perm.begin() + 1000 + k);
  std::sort(many.rows.begin(), many.rows.end());
  EXPECT_FALSE(mcd_detail::update_fit(z, fit, many, w));
  mcd_detail::SubsetFit smaller;
  smaller.rows.assign(fit.rows.begin(), fit.rows.end() - 1);
  EXPECT_FALSE(mcd_detail::update_fit(z, fit, smaller, w));
  EXPECT_TRUE(smaller.mean.size() == 0 && smaller.cov.size() == 0);
}

// C-step distances against CholeskyFactor's triangular solves (relative
// 1e-12 on standardised-scale data).
TEST(McdPieces, SubsetDistancesMatchTriangularSolves) {
  const Eigen::MatrixXd z = mcd_test::normal_data(5000, 10, 23);
  std::vector<Index> rows;
  for (Index i = 0; i < 5000; i += 2) rows.push_back(i);
  const mcd_detail::SubsetFit f = mcd_detail::fit_subset(z, rows);
  mcd_detail::CStepWorkspace w;
  mcd_detail::subset_distances(z, f, w);
  const Eigen::VectorXd ref = f.chol.squared_distances(make_view(z), f.mean);
  EXPECT_LE(((w.d2 - ref).array().abs() / (1.0 + ref.array())).maxCoeff(), 1e-12);
}

// Several fits in one pass (DetMCD's lockstep chains): each fit's distances
// agree with its own one-fit pass to rounding (the same triangular-solve
// reference as above), and are the same bits on 1, 2 and 3 threads (20000
// rows: enough chunks for the threads to run).
TEST(McdPieces, ManyFitDistancesMatchOneByOneAndAnyThreadCount) {
  const Eigen::MatrixXd z = mcd_test::normal_data(20000, 7, 29);
  std::vector<mcd_detail::SubsetFit> fits;
  for (Index start = 0; start < 3; ++start) {
    std::vector<Index> rows;
    for (Index i = start; i < 20000; i += 3 + start) rows.push_back(i);
    fits.push_back(mcd_detail::fit_subset(z, rows));
  }
  const std::vector<const mcd_detail::SubsetFit*> ptrs = {&fits[0], &fits[1], &fits[2]};
  std::vector<Eigen::VectorXd> first(3);
  for (int threads : {1, 2, 3}) {
    mcd_detail::CStepWorkspace w;
    w.threads = threads;
    std::vector<Eigen::VectorXd> d2(3);
    const std::vector<Eigen::VectorXd*> out = {&d2[0], &d2[1], &d2[2]};
    mcd_detail::subset_distances(z, ptrs, out, w);
    for (std::size_t f = 0; f < 3; ++f) {
      if (threads == 1) {
        first[f] = d2[f];
        mcd_detail::CStepWorkspace one;
        mcd_detail::subset_distances(z, fits[f], one);
        const Eigen::VectorXd ref = fits[f].chol.squared_distances(make_view(z), fits[f].mean);
        EXPECT_LE(((d2[f] - ref).array().abs() / (1.0 + ref.array())).maxCoeff(), 1e-12);
        EXPECT_LE(((d2[f] - one.d2).array().abs() / (1.0 + one.d2.array())).maxCoeff(), 1e-14);
      } else {
        EXPECT_EQ(std::memcmp(d2[f].data(), first[f].data(), sizeof(double) * 20000), 0) << threads << " threads";
      }
    }
  }
  // One workspace reused as DetMCD uses it (reserved, then 1, 3 and 2 live
  // fits, threads 2): the same bits as fresh workspaces.
  mcd_detail::CStepWorkspace w;
  w.threads = 2;
  w.reserve(20000, 7);
  for (const std::vector<std::size_t>& live : std::vector<std::vector<std::size_t>>{{1}, {0, 1, 2}, {0, 2}}) {
    std::vector<const mcd_detail::SubsetFit*> some;
    std::vector<Eigen::VectorXd> d2(live.size());
    std::vector<Eigen::VectorXd*> out;
    for (std::size_t k = 0; k < live.size(); ++k) {
      some.push_back(&fits[live[k]]);
      out.push_back(&d2[k]);
    }
    mcd_detail::subset_distances(z, some, out, w);
    for (std::size_t k = 0; k < live.size(); ++k)
      EXPECT_LE(((d2[k] - first[live[k]]).array().abs() / (1.0 + first[live[k]].array())).maxCoeff(), 1e-14);
    if (live.size() == 3)
      for (std::size_t k = 0; k < 3; ++k)
        EXPECT_EQ(std::memcmp(d2[k].data(), first[k].data(), sizeof(double) * 20000), 0);
  }
  std::vector<Eigen::VectorXd> d2(2);
  const std::vector<Eigen::VectorXd*> two = {&d2[0], &d2[1]};
  EXPECT_THROW(mcd_detail::subset_distances(z, ptrs, two, w), Error);
}

// A C-step's result does not depend on what the workspace held before, and
// the converged fit is the two-pass fit of its rows (bit for bit).
TEST(McdPieces, CStepIndependentOfWorkspaceHistory) {
  const Eigen::MatrixXd z = mcd_test::normal_data(3000, 5, 31);
  const Index h = 1600;
  std::vector<Index> start;
  for (Index i = 0; i < 6; ++i) start.push_back(i * 7);
  const mcd_detail::SubsetFit f0 = mcd_detail::fit_subset(z, start);
  ASSERT_FALSE(f0.singular);
  mcd_detail::CStepWorkspace fresh, used;
  {
    const Eigen::MatrixXd other = mcd_test::normal_data(10000, 5, 32);
    mcd_detail::SubsetFit o = mcd_detail::fit_subset(other, start);
    for (int s = 0; s < 3; ++s) mcd_detail::c_step(other, 5000, o, used);
  }
  mcd_detail::SubsetFit a = f0, b = f0;
  for (int s = 0; s < 4; ++s) {
    const bool ca = mcd_detail::c_step(z, h, a, fresh);
    const bool cb = mcd_detail::c_step(z, h, b, used);
    EXPECT_EQ(ca, cb);
    EXPECT_EQ(a.rows, b.rows);
    EXPECT_EQ(a.log_det, b.log_det);
  }
  mcd_detail::SubsetFit c = f0;
  const int steps = mcd_detail::c_steps_to_convergence(z, h, c, 100);
  EXPECT_GE(steps, 1);
  const mcd_detail::SubsetFit again = mcd_detail::fit_subset(z, c.rows);
  EXPECT_EQ(c.mean, again.mean);
  EXPECT_EQ(c.cov, again.cov);
  EXPECT_EQ(c.log_det, again.log_det);
}

// Squared distances of the rows of x under (centre, scatter) in long double
// (Cholesky and forward substitution in extended precision): the reference
// both double-precision routes are measured against.
Eigen::VectorXd extended_distances(const Eigen::MatrixXd& x, const Eigen::VectorXd& centre,
                                   const Eigen::MatrixXd& scatter) {
  using LMatrix = Eigen::Matrix<long double, Eigen::Dynamic, Eigen::Dynamic>;
  const Index p = x.cols();
  LMatrix l = LMatrix::Zero(p, p);
  for (Index j = 0; j < p; ++j) {
    long double d = scatter(j, j);
    for (Index k = 0; k < j; ++k) d -= l(j, k) * l(j, k);
    l(j, j) = std::sqrt(d);
    for (Index i = j + 1; i < p; ++i) {
      long double v = scatter(i, j);
      for (Index k = 0; k < j; ++k) v -= l(i, k) * l(j, k);
      l(i, j) = v / l(j, j);
    }
  }
  Eigen::VectorXd d2(x.rows());
  std::vector<long double> y(static_cast<std::size_t>(p));
  for (Index r = 0; r < x.rows(); ++r) {
    long double sum = 0.0L;
    for (Index i = 0; i < p; ++i) {
      long double v = static_cast<long double>(x(r, i)) - static_cast<long double>(centre(i));
      for (Index k = 0; k < i; ++k) v -= l(i, k) * y[static_cast<std::size_t>(k)];
      y[static_cast<std::size_t>(i)] = v / l(i, i);
      sum += y[static_cast<std::size_t>(i)] * y[static_cast<std::size_t>(i)];
    }
    d2(r) = static_cast<double>(sum);
  }
  return d2;
}

double max_relative_error(const Eigen::VectorXd& got, const Eigen::VectorXd& ref) {
  return ((got - ref).array().abs() / (1.0 + ref.array())).maxCoeff();
}

// The reweighting distances (GEMM with L^-1 on standardised data) against an
// extended-precision computation, on well-conditioned and on strongly
// correlated data (scatter condition number about 1e8), next to double
// triangular solves in original units (CholeskyFactor) as the yardstick. The
// bound allows 8 times the yardstick's error plus 2e-14. Measured (max relative
// error, raw / reweighted): well conditioned 3.9e-15 / 7.4e-15 against the
// yardstick's 8.3e-16 / 6.7e-16; condition 1e8: 9.4e-10 / 3.9e-8 against
// 1.6e-8 / 9.6e-9.
TEST(McdPieces, ReweightingDistancesAccuracy) {
  for (double gap : {1.0, 1e-4}) {
    Eigen::MatrixXd x = mcd_test::normal_data(20000, 5, 77);
    x.col(1) = x.col(0) + gap * x.col(1);  // columns 0 and 1 differ by gap times noise
    x.col(2) = 1e4 + 100.0 * x.col(2).array();
    for (Index i = 0; i < 2000; ++i) x.row(i).array() += 8.0;
    const RobustFit r = fast_mcd(make_view(x));
    ASSERT_FALSE(r.exact_fit);
    ASSERT_TRUE(r.reweighted);
    const CholeskyFactor raw(r.raw_scatter), rw(r.scatter);
    ASSERT_TRUE(raw.ok() && rw.ok());
    const Eigen::VectorXd raw_ref = extended_distances(x, r.raw_location, r.raw_scatter);
    const Eigen::VectorXd rw_ref = extended_distances(x, r.location, r.scatter);
    const double raw_err = max_relative_error(r.raw_d2, raw_ref);
    const double rw_err = max_relative_error(r.robust_d2, rw_ref);
    const double raw_yard = max_relative_error(raw.squared_distances(make_view(x), r.raw_location), raw_ref);
    const double rw_yard = max_relative_error(rw.squared_distances(make_view(x), r.location), rw_ref);
    RecordProperty(gap == 1.0 ? "well_conditioned" : "ill_conditioned",
                   std::to_string(raw_err) + " " + std::to_string(rw_err) + " vs " + std::to_string(raw_yard) + " " +
                       std::to_string(rw_yard));
    EXPECT_LE(raw_err, 8.0 * raw_yard + 2e-14) << "gap " << gap;
    EXPECT_LE(rw_err, 8.0 * rw_yard + 2e-14) << "gap " << gap;
    // The flags are the raw distances against the chi-square cutoff.
    const double cutoff = chi2_quantile(0.975, 5.0);
    for (Index i = 0; i < x.rows(); ++i) ASSERT_EQ(r.outlier[static_cast<std::size_t>(i)], r.raw_d2(i) > cutoff);
  }
}
