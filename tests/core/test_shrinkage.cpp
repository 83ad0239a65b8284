// Ledoit-Wolf and OAS shrinkage (core/shrinkage) against the papers' formulas
// evaluated here independently in long double, forming every x_k x_k' - S.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <vector>
#include <Eigen/Eigenvalues>

#include "core/error.hpp"
#include "core/moments.hpp"
#include "core/norm_power_sums.hpp"
#include "core/shrinkage.hpp"

using namespace ellipsa::core;

namespace {

using MatrixL = Eigen::Matrix<long double, Eigen::Dynamic, Eigen::Dynamic>;
using VectorL = Eigen::Matrix<long double, Eigen::Dynamic, 1>;

struct Reference {
  long double lw, oas, mu;
  MatrixL s;
};

// Straight from the papers, no algebraic shortcut: Ledoit & Wolf (2004) with
// |A|^2 = tr(AA')/p, b2bar = (1/n^2) sum_k |x_k x_k' - S|^2 (the n matrices are
// formed), d2 = |S - mu I|^2; Chen, Wiesel, Eldar & Hero (2010) rho_OAS.
Reference reference(const Eigen::MatrixXd& x) {
  const Index n = x.rows(), p = x.cols();
  const MatrixL xl = x.cast<long double>();
  const VectorL mean = xl.colwise().mean().transpose();
  const MatrixL c = xl.rowwise() - mean.transpose();
  Reference r;
  r.s = c.transpose() * c / static_cast<long double>(n);
  r.mu = r.s.trace() / p;
  const MatrixL id = MatrixL::Identity(p, p);
  const auto norm2 = [p](const MatrixL& a) { return (a * a.transpose()).trace() / p; };
  const long double d2 = norm2(r.s - r.mu * id);
  long double b2bar = 0.0L;
  for (Index k = 0; k < n; ++k) {
    const VectorL xk = c.row(k).transpose();
    b2bar += norm2(xk * xk.transpose() - r.s);
  }
  b2bar /= static_cast<long double>(n) * n;
  const long double b2 = std::min(b2bar, d2);
  r.lw = b2 / d2;
  const long double tr = r.s.trace(), tr2 = (r.s * r.s).trace(), pl = p, nl = n;
  r.oas = std::min<long double>(1.0L, ((1 - 2 / pl) * tr2 + tr * tr) / ((nl + 1 - 2 / pl) * (tr2 - tr * tr / pl)));
  return r;
}

Eigen::MatrixXd sample(std::mt19937_64& rng, Index n, Index p) {
  std::normal_distribution<double> g;
  Eigen::MatrixXd z(n, p), mix(p, p);
  for (Index j = 0; j < p; ++j) {
    for (Index i = 0; i < n; ++i) z(i, j) = g(rng);
    for (Index i = 0; i < p; ++i) mix(i, j) = 0.3 * g(rng) + (i == j ? 1.0 + j : 0.0);
  }
  return (z * mix).array() + 5.0;
}

}  // namespace

TEST(Shrinkage, MatchesLongDoubleFormulasAcrossShapes) {
  std::mt19937_64 rng(301);
  struct Shape {
    Index n, p;
  };
  for (const Shape sh : {Shape{2, 3}, Shape{5, 40}, Shape{20, 20}, Shape{30, 100}, Shape{200, 10}, Shape{1000, 3},
                         Shape{50, 2}, Shape{7, 6}}) {
    const Eigen::MatrixXd x = sample(rng, sh.n, sh.p);
    const Reference ref = reference(x);
    for (auto method : {ShrinkageMethod::LedoitWolf, ShrinkageMethod::OracleApproximating}) {
      const ShrinkageEstimate est = shrinkage_estimate(make_view(x), method);
      const double want = static_cast<double>(method == ShrinkageMethod::LedoitWolf ? ref.lw : ref.oas);
      EXPECT_NEAR(est.intensity, want, 1e-10 * std::max(1.0, want)) << "n=" << sh.n << " p=" << sh.p;
      EXPECT_NEAR(est.target_scale, static_cast<double>(ref.mu), 1e-12 * static_cast<double>(ref.mu));
      const Eigen::MatrixXd s = ref.s.cast<double>();
      EXPECT_LE((est.sample_covariance - s).norm() / s.norm(), 1e-13);
      Eigen::MatrixXd expected = (1.0 - want) * s;
      expected.diagonal().array() += want * static_cast<double>(ref.mu);
      EXPECT_LE((est.covariance - expected).norm() / expected.norm(), 1e-10);
      EXPECT_GE(est.intensity, 0.0);
      EXPECT_LE(est.intensity, 1.0);
      // Positive definite even for p > n, the point of shrinking, whenever the
      // intensity is positive. With n = 2 the centred rows are v and -v, so
      // x_k x_k' = S for both and the Ledoit-Wolf b2bar is exactly 0: no shrinkage.
      if (sh.n == 2 && method == ShrinkageMethod::LedoitWolf) {
        EXPECT_LE(est.intensity, 1e-14);
      }
      if (est.intensity > 0.0) {
        Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(est.covariance);
        EXPECT_GT(eig.eigenvalues().minCoeff(), 0.0) << "n=" << sh.n << " p=" << sh.p;
      }
    }
  }
}

TEST(Shrinkage, SingleColumnTargetIsTheSampleVariance) {
  std::mt19937_64 rng(302);
  const Eigen::MatrixXd x = sample(rng, 25, 1);
  for (auto method : {ShrinkageMethod::LedoitWolf, ShrinkageMethod::OracleApproximating}) {
    const ShrinkageEstimate est = shrinkage_estimate(make_view(x), method);
    // p = 1: S = mu I, both formulas are 0/0; the documented limit is 1.
    EXPECT_EQ(est.intensity, 1.0);
    EXPECT_NEAR(est.covariance(0, 0), est.sample_covariance(0, 0), 1e-15 * est.sample_covariance(0, 0));
    const double mean = x.mean();
    EXPECT_NEAR(est.sample_covariance(0, 0), (x.array() - mean).square().sum() / 25.0, 1e-13);
  }
}

TEST(Shrinkage, ScaleEquivariantAndShiftInvariant) {
  std::mt19937_64 rng(303);
  const Eigen::MatrixXd x = sample(rng, 15, 30);
  const Eigen::MatrixXd y = (x * 1e-3).array() + 1e6;
  for (auto method : {ShrinkageMethod::LedoitWolf, ShrinkageMethod::OracleApproximating}) {
    const auto ex = shrinkage_estimate(make_view(x), method);
    const auto ey = shrinkage_estimate(make_view(y), method);
    EXPECT_NEAR(ex.intensity, ey.intensity, 1e-8);
    EXPECT_LE((ey.covariance * 1e6 - ex.covariance).norm() / ex.covariance.norm(), 1e-8);
  }
}

TEST(Shrinkage, Errors) {
  std::mt19937_64 rng(304);
  Eigen::MatrixXd x = sample(rng, 6, 3);
  EXPECT_THROW(shrinkage_estimate(make_view(x.topRows(1).eval()), ShrinkageMethod::LedoitWolf), Error);
  x(2, 2) = std::numeric_limits<double>::quiet_NaN();
  EXPECT_THROW(shrinkage_estimate(make_view(x), ShrinkageMethod::OracleApproximating), Error);
  x(2, 2) = std::numeric_limits<double>::infinity();
  EXPECT_THROW(shrinkage_estimate(make_view(x), ShrinkageMethod::OracleApproximating), Error);
  const Eigen::MatrixXd flat = Eigen::MatrixXd::Constant(5, 4, 2.5);
  EXPECT_THROW(shrinkage_estimate(make_view(flat), ShrinkageMethod::LedoitWolf), Error);
}

namespace {

// The streaming path of capi/accumulator.cpp in miniature: chunks of uneven
// length, each summed about the running mean, the old sums moved there.
ShrinkageEstimate streamed(const Eigen::MatrixXd& x, const std::vector<Index>& lengths, ShrinkageMethod method) {
  MomentAccumulator acc(x.cols());
  NormPowerSums norms;
  Index start = 0;
  for (const Index len : lengths) {
    const Eigen::MatrixXd chunk = x.middleRows(start, len);
    start += len;
    if (acc.rows() == 0) {
      acc.add(make_view(chunk));
      norms = norm_power_sums(make_view(chunk), acc.mean());
      continue;
    }
    const Eigen::MatrixXd cross = acc.cross_products();
    acc.add(make_view(chunk));
    norms = combine(recentre(norms, cross, acc.mean()), norm_power_sums(make_view(chunk), acc.mean()));
  }
  return shrinkage_from_moments(acc.rows(), acc.mean(), acc.cross_products(), norms.fourth, method);
}

}  // namespace

TEST(Shrinkage, StreamedChunksMatchLongDoubleFormulas) {
  // Same reference as above (the papers' formulas in long double); the data
  // sit on offsets up to 1e9 with unit spread, where a naive expansion of
  // sum |x - m|^4 in raw power sums would lose every digit.
  std::mt19937_64 rng(302);
  for (const double offset : {0.0, 1e3, 1e9}) {
    for (const Index p : {Index{2}, Index{3}, Index{12}}) {  // p = 1 is the 0/0 case tested above
      const Index n = 600;
      Eigen::MatrixXd x = sample(rng, n, p);
      x.array() += offset;
      const Reference ref = reference(x);
      const std::vector<Index> lengths = {1, 2, 97, 300, 1, 199};
      for (auto method : {ShrinkageMethod::LedoitWolf, ShrinkageMethod::OracleApproximating}) {
        const ShrinkageEstimate est = streamed(x, lengths, method);
        const double want = static_cast<double>(method == ShrinkageMethod::LedoitWolf ? ref.lw : ref.oas);
        EXPECT_NEAR(est.intensity, want, 1e-9 * std::max(1.0, want)) << "offset " << offset << " p " << p;
        const ShrinkageEstimate whole = shrinkage_estimate(make_view(x), method);
        EXPECT_NEAR(est.intensity, whole.intensity, 1e-9 * std::max(1.0, whole.intensity));
        EXPECT_LE((est.covariance - whole.covariance).norm() / whole.covariance.norm(), 1e-9);
      }
    }
  }
}

TEST(Shrinkage, RecentredNormSumsEqualDirectSums) {
  // recentre() is an identity: sums moved from one centre to another equal the
  // sums computed about the second centre directly (long double reference).
  std::mt19937_64 rng(303);
  const Eigen::MatrixXd x = sample(rng, 50, 4);
  const Eigen::VectorXd c1 = x.row(3).transpose(), c2 = x.colwise().mean().transpose().array() + 0.7;
  MomentAccumulator acc(4);
  acc.add(make_view(x));
  const NormPowerSums moved = recentre(norm_power_sums(make_view(x), c1), acc.cross_products(), c2);
  long double fourth = 0.0L, second = 0.0L;
  for (Index i = 0; i < x.rows(); ++i) {
    const VectorL y = (x.row(i).transpose() - c2).cast<long double>();
    second += y.squaredNorm();
    fourth += y.squaredNorm() * y.squaredNorm();
  }
  EXPECT_NEAR(moved.second, static_cast<double>(second), 1e-12 * static_cast<double>(second));
  EXPECT_NEAR(moved.fourth, static_cast<double>(fourth), 1e-12 * static_cast<double>(fourth));
  EXPECT_EQ(moved.rows, 50.0);
  EXPECT_THROW(combine(moved, norm_power_sums(make_view(x), c1)), Error);
}
