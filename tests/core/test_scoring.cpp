// Row scoring (core/scoring): distances, p-values, flags, contributions,
// conditional drops and missing-coordinate rows on the marginal Gaussian.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <limits>
#include <random>
#include <vector>

#include <Eigen/Cholesky>

#include "core/cholesky.hpp"
#include "core/classical.hpp"
#include "core/distributions.hpp"
#include "core/error.hpp"
#include "core/scoring.hpp"

using namespace ellipsa::core;

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

Eigen::MatrixXd gaussian(std::mt19937_64& rng, Index r, Index c) {
  std::normal_distribution<double> g;
  Eigen::MatrixXd m(r, c);
  for (Index j = 0; j < c; ++j)
    for (Index i = 0; i < r; ++i) m(i, j) = g(rng);
  return m;
}

Eigen::MatrixXd correlated(std::mt19937_64& rng, Index n, Index p) {
  return gaussian(rng, n, p) * (gaussian(rng, p, p) + 2.5 * Eigen::MatrixXd::Identity(p, p));
}

// d2 of one (sub)vector by an explicit dense solve, independent of the scorer.
double direct_d2(const Eigen::VectorXd& d, const Eigen::MatrixXd& s) { return d.dot(s.ldlt().solve(d)); }

Eigen::MatrixXd complete_rows_of(const Eigen::MatrixXd& x) {
  std::vector<Index> keep;
  for (Index i = 0; i < x.rows(); ++i)
    if (!x.row(i).hasNaN()) keep.push_back(i);
  Eigen::MatrixXd out(static_cast<Index>(keep.size()), x.cols());
  for (std::size_t k = 0; k < keep.size(); ++k) out.row(static_cast<Index>(k)) = x.row(keep[k]);
  return out;
}

}  // namespace

TEST(Scoring, FittingRowsSumToPTimesNMinusOne) {
  // For the unbiased classical fit, sum_i d2_i = tr(S^-1 sum_i d_i d_i') = (n-1) p.
  std::mt19937_64 rng(401);
  for (int trial = 0; trial < 8; ++trial) {
    const Index p = 1 + static_cast<Index>(rng() % 12), n = p + 2 + static_cast<Index>(rng() % 3000);
    const Eigen::MatrixXd x = correlated(rng, n, p);
    const auto fit = classical_estimate(make_view(x), Normalisation::ByCountMinusOne);
    const MahalanobisScorer scorer(fit.mean, fit.covariance);
    const RowScores s = scorer.score(make_view(x));
    EXPECT_NEAR(s.d2.sum(), static_cast<double>(p * (n - 1)), 1e-9 * p * n);
    EXPECT_TRUE((s.df.array() == p).all());
    EXPECT_EQ(s.missing_patterns, 0);
  }
}

TEST(Scoring, DistancesPValuesAndFlagsMatchDirectComputation) {
  std::mt19937_64 rng(402);
  const Index p = 6, n = 2500;  // more than two blocks
  const Eigen::MatrixXd x = correlated(rng, n, p) * 3.0;
  const Eigen::MatrixXd ref = correlated(rng, 200, p);
  const auto fit = classical_estimate(make_view(ref), Normalisation::ByCountMinusOne);
  const MahalanobisScorer scorer(fit.mean, fit.covariance);
  ScoringOptions opt;
  opt.level = 0.99;
  const RowScores s = scorer.score(make_view(x), opt);
  const double cut = chi2_quantile(0.99, p);
  for (Index i = 0; i < n; i += 97) {
    const double d2 = direct_d2(x.row(i).transpose() - fit.mean, fit.covariance);
    EXPECT_NEAR(s.d2(i), d2, 1e-11 * d2);
    EXPECT_NEAR(s.p_value(i), chi2_sf(d2, p), 1e-12);
    EXPECT_EQ(s.flagged(i), s.d2(i) > cut);
  }
  EXPECT_GT(s.flagged.count(), 0);
  // The same scores through a CholeskyFactor and a row-major strided view.
  const CholeskyFactor chol(fit.covariance);
  const MahalanobisScorer from_factor(fit.mean, chol);
  const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> rm = x;
  const RowScores t = from_factor.score(make_view(rm.data(), n, p, p, 1), opt);
  EXPECT_LE((s.d2 - t.d2).cwiseAbs().maxCoeff(), 1e-12 * s.d2.maxCoeff());
  EXPECT_TRUE((s.flagged == t.flagged).all());
}

TEST(Scoring, ContributionsSumToD2AndConditionalDropsMatchLeaveOneOut) {
  std::mt19937_64 rng(403);
  const Index p = 5, n = 300;
  const Eigen::MatrixXd x = correlated(rng, n, p);
  const auto fit = classical_estimate(make_view(x), Normalisation::ByCount);
  const MahalanobisScorer scorer(fit.mean, fit.covariance);
  ScoringOptions opt;
  opt.contributions = opt.conditional_drops = true;
  const RowScores s = scorer.score(make_view(x), opt);
  for (Index i = 0; i < n; i += 7) {
    EXPECT_NEAR(s.contributions.row(i).sum(), s.d2(i), 1e-12 * std::max(1.0, s.d2(i)));
    // Leave variable j out: d2 of the other p-1 coordinates on their marginal.
    // The closed form z_j^2 / (S^-1)_jj is the Schur-complement identity
    // d' S^-1 d = d_o' S_oo^-1 d_o + z_j^2 / (S^-1)_jj (derived, no published source).
    const Eigen::VectorXd d = x.row(i).transpose() - fit.mean;
    for (Index j = 0; j < p; ++j) {
      Eigen::VectorXd dj(p - 1);
      Eigen::MatrixXd sj(p - 1, p - 1);
      for (Index a = 0, aa = 0; a < p; ++a) {
        if (a == j) continue;
        dj(aa) = d(a);
        for (Index b = 0, bb = 0; b < p; ++b) {
          if (b == j) continue;
          sj(aa, bb++) = fit.covariance(a, b);
        }
        ++aa;
      }
      const double drop = direct_d2(d, fit.covariance) - direct_d2(dj, sj);
      EXPECT_NEAR(s.conditional_drops(i, j), drop, 1e-10 * std::max(1.0, s.d2(i)));
      EXPECT_GE(s.conditional_drops(i, j), 0.0);
    }
  }
}

TEST(Scoring, MissingCoordinatesUseTheMarginalWithOneFactorPerPattern) {
  std::mt19937_64 rng(404);
  const Index p = 4, n = 3000;
  const Eigen::MatrixXd ref = correlated(rng, 500, p);
  const auto fit = classical_estimate(make_view(ref), Normalisation::ByCountMinusOne);
  Eigen::MatrixXd x = correlated(rng, n, p);
  // Three patterns: column 1 missing (rows = 1 mod 5), columns 0 and 3 missing
  // (rows = 2 mod 5), all missing (rows = 3 mod 5); the rest complete.
  for (Index i = 0; i < n; ++i) {
    if (i % 5 == 1) x(i, 1) = kNaN;
    if (i % 5 == 2) x(i, 0) = x(i, 3) = kNaN;
    if (i % 5 == 3) x.row(i).setConstant(kNaN);
  }
  for (bool via_factor : {false, true}) {
    const CholeskyFactor chol(fit.covariance);
    const MahalanobisScorer scorer =
        via_factor ? MahalanobisScorer(fit.mean, chol) : MahalanobisScorer(fit.mean, fit.covariance);
    ScoringOptions opt;
    opt.contributions = opt.conditional_drops = true;
    const RowScores s = scorer.score(make_view(x), opt);
    EXPECT_EQ(s.missing_patterns, 2);  // the all-missing pattern needs no factor
    for (Index i = 0; i < 40; ++i) {
      std::vector<Index> obs;
      for (Index j = 0; j < p; ++j)
        if (!std::isnan(x(i, j))) obs.push_back(j);
      EXPECT_EQ(s.df(i), static_cast<Index>(obs.size()));
      if (obs.empty()) {
        EXPECT_TRUE(std::isnan(s.d2(i)));
        EXPECT_TRUE(std::isnan(s.p_value(i)));
        EXPECT_FALSE(s.flagged(i));
        EXPECT_TRUE(s.contributions.row(i).array().isNaN().all());
        continue;
      }
      const Index q = static_cast<Index>(obs.size());
      Eigen::VectorXd d(q);
      Eigen::MatrixXd so(q, q);
      for (Index a = 0; a < q; ++a) {
        d(a) = x(i, obs[a]) - fit.mean(obs[a]);
        for (Index b = 0; b < q; ++b) so(a, b) = fit.covariance(obs[a], obs[b]);
      }
      const double d2 = direct_d2(d, so);
      EXPECT_NEAR(s.d2(i), d2, 1e-11 * std::max(1.0, d2));
      EXPECT_NEAR(s.p_value(i), chi2_sf(d2, static_cast<double>(q)), 1e-12);
      EXPECT_EQ(s.flagged(i), d2 > chi2_quantile(0.975, static_cast<double>(q)));
      double total = 0.0;
      for (Index j = 0; j < p; ++j) {
        const bool missing = std::isnan(x(i, j));
        EXPECT_EQ(std::isnan(s.contributions(i, j)), missing);
        EXPECT_EQ(std::isnan(s.conditional_drops(i, j)), missing);
        if (!missing) total += s.contributions(i, j);
      }
      EXPECT_NEAR(total, d2, 1e-11 * std::max(1.0, d2));
    }
  }
}

TEST(Scoring, ErrorsAndEdges) {
  std::mt19937_64 rng(405);
  const Eigen::MatrixXd ref = correlated(rng, 50, 3);
  const auto fit = classical_estimate(make_view(ref), Normalisation::ByCountMinusOne);
  const MahalanobisScorer scorer(fit.mean, fit.covariance);
  Eigen::MatrixXd x = correlated(rng, 10, 3);
  x(4, 2) = -std::numeric_limits<double>::infinity();
  try {
    scorer.score(make_view(x));
    ADD_FAILURE() << "Inf accepted";
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Data);
    EXPECT_NE(std::string(e.what()).find("row 4, column 2"), std::string::npos);
  }
  EXPECT_THROW(scorer.score(make_view(Eigen::MatrixXd::Zero(3, 2))), Error);
  ScoringOptions bad;
  bad.level = 1.0;
  EXPECT_THROW(scorer.score(make_view(correlated(rng, 3, 3)), bad), Error);
  // A singular scatter is refused with Singular.
  Eigen::MatrixXd singular = fit.covariance;
  singular.row(1) = singular.row(0);
  singular.col(1) = singular.col(0);
  try {
    MahalanobisScorer s2(fit.mean, singular);
    ADD_FAILURE() << "singular scatter accepted";
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Singular);
  }
  EXPECT_THROW(MahalanobisScorer(Eigen::VectorXd::Zero(2), fit.covariance), Error);
  // No rows: empty results. The centre itself: d2 = 0 exactly, p-value 1.
  const RowScores none = scorer.score(make_view(Eigen::MatrixXd(0, 3)));
  EXPECT_EQ(none.d2.size(), 0);
  const Eigen::MatrixXd centre = fit.mean.transpose();
  const RowScores at = scorer.score(make_view(centre));
  EXPECT_EQ(at.d2(0), 0.0);
  EXPECT_EQ(at.p_value(0), 1.0);
  // Huge offset: scoring data near 1e9 against a model fitted there.
  const Eigen::MatrixXd far = (ref * 1e-3).array() + 1e9;
  const auto ffar = classical_estimate(make_view(far), Normalisation::ByCountMinusOne);
  const RowScores sfar = MahalanobisScorer(ffar.mean, ffar.covariance).score(make_view(far));
  EXPECT_NEAR(sfar.d2.sum(), 3.0 * 49.0, 1e-5);
}

// score_finite() is score() without the n-sized temporaries: the same kernel,
// so the same bits, in either layout, at random sizes and thread counts; the
// reference numbers are the dense solve of the test above. A table it refuses
// (a NaN, an Inf, contributions asked) leaves every array as it was.
TEST(Scoring, FinitePathGivesTheBitsOfScoreAndRefusesWithoutWriting) {
  std::mt19937_64 rng(405);
  for (int trial = 0; trial < 12; ++trial) {
    const Index p = 1 + static_cast<Index>(rng() % 40), n = 1 + static_cast<Index>(rng() % 5000);
    const Eigen::MatrixXd x = correlated(rng, n, p) + Eigen::MatrixXd::Constant(n, p, trial % 3 == 0 ? 1e6 : 0.0);
    const Eigen::MatrixXd ref = correlated(rng, p + 30, p);
    const auto fit = classical_estimate(make_view(ref), Normalisation::ByCountMinusOne);
    const MahalanobisScorer scorer(fit.mean, fit.covariance);
    ScoringOptions opt;
    opt.threads = 1 + trial % 3;
    opt.log_densities = true;
    const RowScores s = scorer.score(make_view(x), opt);
    const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> rm = x;
    for (const bool row_major : {false, true}) {
      const DataView view = row_major ? make_view(rm.data(), n, p, p, 1) : make_view(x);
      Eigen::VectorXd d2(n), pv(n), ld(n);
      Eigen::VectorXi flag(n);
      FiniteRowOutputs out{d2.data(), pv.data(), flag.data(), ld.data()};
      ASSERT_TRUE(scorer.score_finite(view, opt, out));
      EXPECT_EQ(std::memcmp(d2.data(), s.d2.data(), sizeof(double) * n), 0) << "n " << n << " p " << p;
      EXPECT_EQ(std::memcmp(pv.data(), s.p_value.data(), sizeof(double) * n), 0);
      EXPECT_EQ(std::memcmp(ld.data(), s.log_density.data(), sizeof(double) * n), 0);
      EXPECT_TRUE((flag.array() == s.flagged.cast<int>()).all());
      const Index i = n / 2;
      const double direct = direct_d2(x.row(i).transpose() - fit.mean, fit.covariance);
      EXPECT_NEAR(d2(i), direct, 1e-9 * (1.0 + direct));
    }
  }
  // Refusals: nothing written.
  const Index n = 50, p = 3;
  Eigen::MatrixXd x = correlated(rng, n, p);
  const auto fit = classical_estimate(make_view(x), Normalisation::ByCountMinusOne);
  const MahalanobisScorer scorer(fit.mean, fit.covariance);
  Eigen::VectorXd d2 = Eigen::VectorXd::Constant(n, -7.0);
  FiniteRowOutputs out{d2.data(), nullptr, nullptr, nullptr};
  ScoringOptions asks_contributions;
  asks_contributions.contributions = true;
  EXPECT_FALSE(scorer.score_finite(make_view(x), asks_contributions, out));
  for (const double bad : {kNaN, std::numeric_limits<double>::infinity()}) {
    Eigen::MatrixXd y = x;
    y(n - 1, p - 1) = bad;
    EXPECT_FALSE(scorer.score_finite(make_view(y), {}, out));
  }
  EXPECT_TRUE((d2.array() == -7.0).all());
  ScoringOptions bad_level;
  bad_level.level = 1.0;
  EXPECT_THROW(scorer.score_finite(make_view(x), bad_level, out), Error);
  EXPECT_TRUE((d2.array() == -7.0).all());
}

// The header's promise for a value far beyond the model's scale
// (ellipsa_scores.squared_distance): +inf when the distance overflows double
// precision, p-value 0, flagged, log-density -inf; never NaN. A fuzzed model
// file with a location entry of 1e308 gave NaN distances (inf - inf in the
// centring and the solve) and, with p-values asked, an argument error.
TEST(Scoring, RowsBeyondDoublePrecisionAreInfinitelyFarNeverNaN) {
  const double inf = std::numeric_limits<double>::infinity();
  Eigen::Vector2d location(0.0, 1e308);
  Eigen::Matrix2d scatter;
  scatter << 0.1, 0.05, 0.05, 0.2;
  const MahalanobisScorer scorer(location, scatter);
  Eigen::MatrixXd x(5, 2);
  x << 1.0, 2.0,      // centred: -1e308 in column 1
      -1e308, 1e308,  // centred: -1e308 in column 0
      kNaN, -1e308,   // one observed coordinate: -1e308 - 1e308 overflows
      0.0, 1e308,     // on the location: d2 = 0
      1.7e308, -1.7e308;
  for (int threads : {1, 2}) {
    ScoringOptions opt;
    opt.threads = threads;
    opt.log_densities = opt.contributions = opt.conditional_drops = true;
    const RowScores s = scorer.score(make_view(x), opt);
    for (Index i : {0, 1, 2, 4}) {
      EXPECT_EQ(s.d2(i), inf) << i;
      EXPECT_EQ(s.p_value(i), 0.0) << i;
      EXPECT_TRUE(s.flagged(i)) << i;
      EXPECT_EQ(s.log_density(i), -inf) << i;
      for (Index j = 0; j < 2; ++j)
        if (!(i == 2 && j == 0)) {  // column 0 of row 2 is missing: NaN by contract
          EXPECT_FALSE(std::isnan(s.contributions(i, j))) << i << " " << j;
          EXPECT_FALSE(std::isnan(s.conditional_drops(i, j))) << i << " " << j;
        }
    }
    EXPECT_EQ(s.d2(3), 0.0);
    EXPECT_FALSE(s.flagged(3));
    // The direct path gives the same bits on the complete rows.
    Eigen::MatrixXd complete(4, 2);
    complete << x.row(0), x.row(1), x.row(3), x.row(4);
    Eigen::VectorXd d2(4), pv(4), ld(4);
    Eigen::VectorXi flag(4);
    FiniteRowOutputs out{d2.data(), pv.data(), flag.data(), ld.data()};
    ScoringOptions plain;
    plain.threads = threads;
    plain.log_densities = true;
    ASSERT_TRUE(scorer.score_finite(make_view(complete), plain, out));
    const Eigen::Vector4d want(inf, inf, 0.0, inf);
    EXPECT_EQ(d2, want);
    EXPECT_EQ(flag, Eigen::Vector4i(1, 1, 0, 1));
    EXPECT_EQ(pv(0), 0.0);
    EXPECT_EQ(ld(1), -inf);
  }
  // The factor's own distances (used by the mixtures) follow the same rule.
  const CholeskyFactor f(scatter);
  const Eigen::VectorXd d2 = f.squared_distances(make_view(complete_rows_of(x)), location);
  EXPECT_EQ(d2(0), inf);
  EXPECT_EQ(d2(2), 0.0);
}
