// Missing values in mixture fitting (complete rows by default, EM over missing
// coordinates as an option) and the scoring of rows under a fitted mixture.
#include <gtest/gtest.h>

#include <Eigen/LU>

#include <cmath>
#include <limits>
#include <numbers>

#include "core/kmeans_seed.hpp"
#include "core/mixture_em.hpp"
#include "core/error.hpp"
#include "core/mixture_score.hpp"

using namespace ellipsa::core;

namespace {

const double kNaN = std::numeric_limits<double>::quiet_NaN();

double normal(PortableRandom& rng) {
  const double u = 1.0 - rng.uniform();
  const double v = rng.uniform();
  return std::sqrt(-2.0 * std::log(u)) * std::cos(2.0 * std::numbers::pi * v);
}

// Two correlated clusters in 4 dimensions.
Eigen::MatrixXd two_clusters(Index n, std::uint64_t seed, Eigen::VectorXi& labels) {
  PortableRandom rng(seed);
  Eigen::Matrix4d a, b;
  a << 1, 0, 0, 0, 0.8, 0.6, 0, 0, 0.5, 0.3, 0.7, 0, -0.2, 0.4, 0.1, 0.9;
  b << 0.6, 0, 0, 0, -0.3, 0.9, 0, 0, 0.2, 0.2, 0.5, 0, 0.4, 0, 0.3, 1.1;
  const Eigen::RowVector4d ma(0, 0, 0, 0), mb(4, -3, 2, 5);
  Eigen::MatrixXd x(n, 4);
  labels.resize(n);
  for (Index i = 0; i < n; ++i) {
    const bool second = rng.uniform() < 0.4;
    Eigen::Vector4d z;
    for (int j = 0; j < 4; ++j) z(j) = normal(rng);
    x.row(i) = second ? (mb.transpose() + b * z).transpose() : (ma.transpose() + a * z).transpose();
    labels(i) = second ? 1 : 0;
  }
  return x;
}

// Removes each value with probability `rate`, completely at random, keeping at
// least one value per row.
Eigen::MatrixXd remove_mcar(const Eigen::MatrixXd& x, double rate, std::uint64_t seed) {
  PortableRandom rng(seed);
  Eigen::MatrixXd y = x;
  for (Index i = 0; i < y.rows(); ++i) {
    for (Index j = 0; j < y.cols(); ++j)
      if (rng.uniform() < rate) y(i, j) = kNaN;
    if (y.row(i).array().isNaN().all()) y(i, 0) = x(i, 0);
  }
  return y;
}

}  // namespace

TEST(MixtureMissing, CompleteRowsByDefaultReportsDropped) {
  Eigen::VectorXi labels;
  const Eigen::MatrixXd x = two_clusters(500, 3, labels);
  const Eigen::MatrixXd y = remove_mcar(x, 0.05, 4);
  Index incomplete = 0;
  for (Index i = 0; i < y.rows(); ++i) incomplete += y.row(i).array().isNaN().any();
  ASSERT_GT(incomplete, 0);
  MixtureOptions o;
  o.components = 2;
  const MixtureResult r = fit_mixture(make_view(y), o);
  EXPECT_EQ(r.rows_dropped, incomplete);
  EXPECT_EQ(r.rows_used, 500 - incomplete);
  for (Index i = 0; i < y.rows(); ++i) {
    const bool dropped = y.row(i).array().isNaN().any();
    EXPECT_EQ(std::isnan(r.log_density(i)), dropped);
    EXPECT_EQ(r.labels(i) == -1, dropped);
  }
  // BIC uses the rows actually fitted.
  EXPECT_NEAR(r.bic, -2 * r.log_likelihood + r.n_parameters * std::log(static_cast<double>(r.rows_used)),
              1e-9 * std::abs(r.bic));
}

TEST(MixtureMissing, EmOverMissingIsCloseToCompleteDataFit) {
  Eigen::VectorXi labels;
  const Eigen::MatrixXd x = two_clusters(3000, 11, labels);
  const Eigen::MatrixXd y = remove_mcar(x, 0.15, 12);
  for (CovarianceStructure s : {CovarianceStructure::Full, CovarianceStructure::Diagonal, CovarianceStructure::Tied,
                                CovarianceStructure::Spherical}) {
    MixtureOptions o;
    o.components = 2;
    o.structure = s;
    o.initial_labels = labels;
    o.restarts = 1;
    o.tolerance = 1e-10;
    const MixtureResult full = fit_mixture(make_view(x), o);
    o.missing = MissingHandling::EmOverMissing;
    const MixtureResult miss = fit_mixture(make_view(y), o);
    EXPECT_EQ(miss.rows_used, 3000);
    EXPECT_EQ(miss.rows_dropped, 0);
    EXPECT_TRUE(miss.converged);
    // Observed-data log-likelihood is monotone under EM (Dempster, Laird & Rubin 1977).
    for (std::size_t t = 1; t < miss.loglik_trace.size(); ++t)
      EXPECT_GE(miss.loglik_trace[t], miss.loglik_trace[t - 1] - 1e-10 * std::abs(miss.loglik_trace[t]));
    // 15% of values missing at random: estimates move by sampling noise only
    // (common practice, no published source: a few standard errors).
    for (Index k = 0; k < 2; ++k) {
      EXPECT_LT((miss.model.means.row(k) - full.model.means.row(k)).cwiseAbs().maxCoeff(), 0.12) << static_cast<int>(s);
      EXPECT_LT((miss.model.covariances[k] - full.model.covariances[k]).cwiseAbs().maxCoeff(), 0.2)
          << static_cast<int>(s);
    }
    EXPECT_LT((miss.model.weights - full.model.weights).cwiseAbs().maxCoeff(), 0.02);
  }
}

TEST(MixtureScore, ReproducesTheFitAndCalibratesTheCutoff) {
  Eigen::VectorXi labels;
  const Eigen::MatrixXd x = two_clusters(1000, 21, labels);
  MixtureOptions o;
  o.components = 2;
  const MixtureResult r = fit_mixture(make_view(x), o);
  const MixtureScores s = score_mixture(r.model, make_view(x));
  EXPECT_LE((s.log_density - r.log_density).cwiseAbs().maxCoeff(), 1e-10);
  EXPECT_LE((s.responsibilities - r.responsibilities).cwiseAbs().maxCoeff(), 1e-10);
  EXPECT_EQ(s.labels, r.labels);
  EXPECT_LE((s.responsibilities.rowwise().sum().array() - 1.0).abs().maxCoeff(), 1e-14);

  // The cutoff is the level-quantile (Hyndman & Fan 1996, type 7) of the fitting
  // rows' log-densities: exactly floor((n-1) level) + 1 rows lie at or below the
  // interpolated value, and the strictly-below count is that or one less.
  const OutlierCutoff c = calibrate_outlier_cutoff(r.log_density, 0.05);
  const Index flagged = flag_outliers(r.log_density, c).sum();
  EXPECT_GE(flagged, 49);
  EXPECT_LE(flagged, 50);
  // A row far from both clusters is flagged; the two centres are not.
  Eigen::MatrixXd probe(3, 4);
  probe.row(0) = r.model.means.row(0);
  probe.row(1) = r.model.means.row(1);
  probe.row(2) << 30, 30, -30, 30;
  const Eigen::VectorXi f = flag_outliers(score_mixture(r.model, make_view(probe)).log_density, c);
  EXPECT_EQ(f(0), 0);
  EXPECT_EQ(f(1), 0);
  EXPECT_EQ(f(2), 1);
  EXPECT_THROW(calibrate_outlier_cutoff(r.log_density, 0.0), Error);
  EXPECT_THROW(calibrate_outlier_cutoff(r.log_density, 1.0), Error);
}

TEST(MixtureScore, MissingCoordinatesUseTheMarginal) {
  MixtureModel m;
  m.structure = CovarianceStructure::Full;
  m.weights = Eigen::Vector2d(0.3, 0.7);
  m.means.resize(2, 3);
  m.means << 0, 1, 2, 3, -1, 0;
  Eigen::Matrix3d s0, s1;
  s0 << 2, 0.5, 0.1, 0.5, 1, 0.2, 0.1, 0.2, 3;
  s1 << 1, -0.3, 0, -0.3, 2, 0.4, 0, 0.4, 1.5;
  m.covariances = {s0, s1};
  Eigen::MatrixXd x(3, 3);
  x << 1.0, kNaN, 2.5, kNaN, kNaN, kNaN, 0.5, -0.5, 1.0;
  const MixtureScores s = score_mixture(m, make_view(x));
  // Row 0: observed coordinates {0, 2}; density of the marginal Gaussians by hand.
  double f = 0.0;
  for (int k = 0; k < 2; ++k) {
    const Eigen::Matrix3d& c = m.covariances[static_cast<std::size_t>(k)];
    Eigen::Matrix2d sub;
    sub << c(0, 0), c(0, 2), c(2, 0), c(2, 2);
    const Eigen::Vector2d d(1.0 - m.means(k, 0), 2.5 - m.means(k, 2));
    f += m.weights(k) * std::exp(-0.5 * d.dot(sub.inverse() * d)) /
         (2 * std::numbers::pi * std::sqrt(sub.determinant()));
  }
  EXPECT_NEAR(s.log_density(0), std::log(f), 1e-12);
  EXPECT_TRUE(std::isnan(s.log_density(1)));  // nothing observed
  EXPECT_EQ(s.labels(1), -1);
  EXPECT_TRUE(std::isfinite(s.log_density(2)));
  x(2, 1) = std::numeric_limits<double>::infinity();
  EXPECT_THROW(score_mixture(m, make_view(x)), Error);
  Eigen::MatrixXd wrong(2, 2);
  wrong.setZero();
  EXPECT_THROW(score_mixture(m, make_view(wrong)), Error);
}

// A row whose density underflows under every component (a fuzzed model file
// with a mean of 1e308 gave NaN log-densities and memberships): log-density
// -inf, memberships summing to 1 from the posterior's limit, which gives the
// row to the component whose mean is nearest in the Mahalanobis sense
// (derived here: log t_k differs by s^2 (u_m - u_k) / 2 with s = 2^1024).
TEST(MixtureScore, RowsBeyondDoublePrecisionGoToTheNearestComponent) {
  MixtureModel m;
  m.structure = CovarianceStructure::Full;
  m.weights = Eigen::Vector2d(0.9, 0.1);
  m.means.resize(2, 2);
  m.means << 0.0, 0.0, 1e308, 0.0;
  Eigen::Matrix2d c;
  c << 1.0, 0.3, 0.3, 2.0;
  m.covariances = {c, c};
  Eigen::MatrixXd x(5, 2);
  x << 1.0, 1.0,     // an ordinary row near component 0
      -1e308, 0.0,   // beyond double precision, nearer component 0
      1.7e308, 0.0,  // beyond double precision, nearer component 1 (weight 0.1)
      kNaN, -1e308,  // one coordinate observed, equally far in mean: the weights decide
      1e308, 0.0;    // on component 1's mean: an ordinary row
  const MixtureScores s = score_mixture(m, make_view(x));
  const double inf = std::numeric_limits<double>::infinity();
  EXPECT_TRUE(std::isfinite(s.log_density(0)));
  EXPECT_EQ(s.log_density(1), -inf);
  EXPECT_EQ(s.log_density(2), -inf);
  EXPECT_EQ(s.log_density(3), -inf);
  EXPECT_TRUE(std::isfinite(s.log_density(4)));
  for (Index i = 0; i < x.rows(); ++i) {
    EXPECT_FALSE(s.responsibilities.row(i).hasNaN()) << i;
    EXPECT_NEAR(s.responsibilities.row(i).sum(), 1.0, 1e-15) << i;
  }
  EXPECT_EQ(s.responsibilities(1, 0), 1.0);
  EXPECT_EQ(s.labels(1), 0);
  EXPECT_EQ(s.responsibilities(2, 1), 1.0);
  EXPECT_EQ(s.labels(2), 1);
  // Row 3 observes column 1 only, where both means are 0: equal distances, so
  // the memberships are the weights.
  EXPECT_NEAR(s.responsibilities(3, 0), 0.9, 1e-15);
  EXPECT_NEAR(s.responsibilities(3, 1), 0.1, 1e-15);
  EXPECT_EQ(s.labels(3), 0);
  EXPECT_EQ(s.labels(4), 1);
}
