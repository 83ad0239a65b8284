// Properties of the EM mixture fit that hold whatever the data: monotone
// log-likelihood, K = 1 is the classical fit, reproducibility, permutation and
// location/scale behaviour, recovery of known parameters, parameter counts.
#include <gtest/gtest.h>

#include <Eigen/LU>

#include <cmath>
#include <cstring>
#include <numbers>
#include <vector>

#include "core/kmeans_seed.hpp"
#include "core/mixture_em.hpp"
#include "core/error.hpp"
#include "core/moments.hpp"

using namespace ellipsa::core;

namespace {

// Standard normal by Box-Muller on the portable uniform (reproducible everywhere).
double normal(PortableRandom& rng) {
  const double u = 1.0 - rng.uniform();  // (0, 1]
  const double v = rng.uniform();
  return std::sqrt(-2.0 * std::log(u)) * std::cos(2.0 * std::numbers::pi * v);
}

struct Truth {
  Eigen::VectorXd weights;
  Eigen::MatrixXd means;               // K x p
  std::vector<Eigen::MatrixXd> chols;  // lower factors of the covariances
};

Truth three_clusters() {
  Truth t;
  t.weights = Eigen::Vector3d(0.5, 0.3, 0.2);
  t.means.resize(3, 3);
  t.means << 0, 0, 0, 6, 1, -2, -3, 7, 3;
  Eigen::Matrix3d a, b, c;
  a << 1.0, 0, 0, 0.5, 1.2, 0, -0.3, 0.2, 0.8;
  b << 0.7, 0, 0, 0.0, 0.6, 0, 0.4, 0.0, 1.1;
  c << 1.5, 0, 0, -0.6, 0.9, 0, 0.1, 0.3, 0.5;
  t.chols = {a, b, c};
  return t;
}

Eigen::MatrixXd draw(const Truth& t, Index n, std::uint64_t seed, Eigen::VectorXi* labels = nullptr) {
  PortableRandom rng(seed);
  const Index p = t.means.cols();
  Eigen::MatrixXd x(n, p);
  if (labels) labels->resize(n);
  for (Index i = 0; i < n; ++i) {
    double u = rng.uniform();
    Index k = 0;
    while (k + 1 < t.weights.size() && u >= t.weights(k)) u -= t.weights(k++);
    Eigen::VectorXd z(p);
    for (Index j = 0; j < p; ++j) z(j) = normal(rng);
    x.row(i) = (t.means.row(k).transpose() + t.chols[static_cast<std::size_t>(k)] * z).transpose();
    if (labels) (*labels)(i) = static_cast<int>(k);
  }
  return x;
}

// Fitted component nearest to each true mean.
std::vector<Index> match(const MixtureModel& m, const Truth& t) {
  std::vector<Index> out;
  for (Index k = 0; k < t.means.rows(); ++k) {
    Index best = 0;
    for (Index j = 1; j < m.components(); ++j)
      if ((m.means.row(j) - t.means.row(k)).norm() < (m.means.row(best) - t.means.row(k)).norm()) best = j;
    out.push_back(best);
  }
  return out;
}

const CovarianceStructure kAll[] = {CovarianceStructure::Full, CovarianceStructure::Diagonal, CovarianceStructure::Tied,
                                    CovarianceStructure::Spherical};

}  // namespace

TEST(MixtureProperties, ParameterCounts) {
  // Free parameters as defined in the brief's formulas, evaluated by hand for K = 3, p = 4.
  EXPECT_EQ(mixture_parameter_count(3, 4, CovarianceStructure::Full), 2 + 12 + 30);
  EXPECT_EQ(mixture_parameter_count(3, 4, CovarianceStructure::Diagonal), 2 + 24);
  EXPECT_EQ(mixture_parameter_count(3, 4, CovarianceStructure::Tied), 2 + 12 + 10);
  EXPECT_EQ(mixture_parameter_count(3, 4, CovarianceStructure::Spherical), 2 + 12 + 3);
  // K = 1: the single Gaussian, whatever the structure's sharing.
  EXPECT_EQ(mixture_parameter_count(1, 5, CovarianceStructure::Full), 5 + 15);
  EXPECT_EQ(mixture_parameter_count(1, 5, CovarianceStructure::Tied), 5 + 15);
  EXPECT_EQ(mixture_parameter_count(1, 5, CovarianceStructure::Spherical), 5 + 1);
  EXPECT_THROW(mixture_parameter_count(0, 5, CovarianceStructure::Full), Error);
}

TEST(MixtureProperties, LogLikelihoodNeverDecreases) {
  const Truth truth = three_clusters();
  const Eigen::MatrixXd x = draw(truth, 1500, 77);
  for (CovarianceStructure s : kAll) {
    for (std::uint64_t seed : {1u, 2u, 3u}) {
      MixtureOptions o;
      o.components = 4;  // one more than the truth: slower, longer traces
      o.structure = s;
      o.restarts = 1;
      o.seed = seed;
      o.tolerance = 1e-12;
      const MixtureResult r = fit_mixture(make_view(x), o);
      ASSERT_GE(r.loglik_trace.size(), 3u);
      for (std::size_t t = 1; t < r.loglik_trace.size(); ++t) {
        bool collapse_here = false;
        for (const auto& e : r.collapses)
          collapse_here |= e.start == r.best_start && e.iteration == static_cast<int>(t);
        if (collapse_here) continue;  // a re-seed may lower it; documented
        EXPECT_GE(r.loglik_trace[t], r.loglik_trace[t - 1] - 1e-10 * std::abs(r.loglik_trace[t]))
            << "structure " << static_cast<int>(s) << " seed " << seed << " iteration " << t;
      }
      EXPECT_DOUBLE_EQ(r.log_likelihood, r.loglik_trace.back());
      EXPECT_EQ(r.iterations + 1, static_cast<int>(r.loglik_trace.size()));
    }
  }
}

TEST(MixtureProperties, OneComponentIsTheClassicalFit) {
  const Truth truth = three_clusters();
  const Eigen::MatrixXd x = draw(truth, 400, 5);
  const MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCount);
  MixtureOptions o;
  o.components = 1;
  o.regularisation = 0.0;
  const MixtureResult r = fit_mixture(make_view(x), o);
  EXPECT_TRUE(r.converged);
  EXPECT_LE((r.model.means.row(0).transpose() - mc.mean).norm(), 1e-12 * mc.mean.norm() + 1e-14);
  EXPECT_LE((r.model.covariances[0] - mc.covariance).norm(), 1e-12 * mc.covariance.norm());
  // Gaussian maximum log-likelihood: -n/2 (p log 2 pi + log det S + p).
  const double n = 400, p = 3;
  const double expect = -0.5 * n * (p * std::log(2 * std::numbers::pi) + std::log(mc.covariance.determinant()) + p);
  EXPECT_NEAR(r.log_likelihood, expect, 1e-10 * std::abs(expect));
  EXPECT_DOUBLE_EQ(r.icl, r.bic);  // one component: no entropy
  // With a regularisation, diagonal entry j grows by exactly reg * the variance
  // of column j (mixture_ridge()); a spherical covariance by reg * the mean
  // column variance.
  o.regularisation = 1e-3;
  const MixtureResult rr = fit_mixture(make_view(x), o);
  const Eigen::VectorXd added = 1e-3 * mc.covariance.diagonal();
  ASSERT_EQ(rr.regularisation_added.size(), 3);
  EXPECT_LE((rr.regularisation_added - added).norm(), 1e-12 * added.norm());
  EXPECT_LE((rr.model.covariances[0] - mc.covariance - Eigen::MatrixXd(added.asDiagonal())).norm(),
            1e-12 * mc.covariance.norm());
  o.structure = CovarianceStructure::Spherical;
  const MixtureResult rs = fit_mixture(make_view(x), o);
  const double mean_added = 1e-3 * mc.covariance.diagonal().mean();
  EXPECT_LE((rs.regularisation_added - Eigen::VectorXd::Constant(3, mean_added)).norm(), 1e-12 * mean_added);
  EXPECT_NEAR(rs.model.covariances[0](0, 0), mc.covariance.trace() / 3.0 + mean_added, 1e-12 * mc.covariance.trace());
  // A constant column (admitted under the diagonal structure) has no variance
  // of its own: its ridge is reg * the mean column variance (0 counted).
  Eigen::MatrixXd xc = x;
  xc.col(1).setConstant(2.5);
  o.structure = CovarianceStructure::Diagonal;
  const MixtureResult rc = fit_mixture(make_view(xc), o);
  const double mean_variance = (mc.covariance(0, 0) + mc.covariance(2, 2)) / 3.0;
  EXPECT_NEAR(rc.model.covariances[0](1, 1), 1e-3 * mean_variance, 1e-12 * mean_variance);
  EXPECT_NEAR(rc.model.covariances[0](0, 0), (1.0 + 1e-3) * mc.covariance(0, 0), 1e-12 * mc.covariance(0, 0));
}

TEST(MixtureProperties, SameSeedIsBitIdentical) {
  const Eigen::MatrixXd x = draw(three_clusters(), 700, 9);
  for (CovarianceStructure s : kAll) {
    MixtureOptions o;
    o.components = 3;
    o.structure = s;
    o.seed = 0xDEADBEEFCAFEULL;
    const MixtureResult a = fit_mixture(make_view(x), o);
    const MixtureResult b = fit_mixture(make_view(x), o);
    ASSERT_EQ(a.loglik_trace.size(), b.loglik_trace.size());
    EXPECT_EQ(0, std::memcmp(a.loglik_trace.data(), b.loglik_trace.data(), a.loglik_trace.size() * sizeof(double)));
    EXPECT_EQ(0, std::memcmp(a.model.means.data(), b.model.means.data(), a.model.means.size() * sizeof(double)));
    EXPECT_EQ(0, std::memcmp(a.responsibilities.data(), b.responsibilities.data(),
                             a.responsibilities.size() * sizeof(double)));
    for (Index k = 0; k < 3; ++k)
      EXPECT_EQ(0, std::memcmp(a.model.covariances[k].data(), b.model.covariances[k].data(), 9 * sizeof(double)));
  }
}

TEST(MixtureProperties, PortableRandomIsUnbiasedAndFixed) {
  // std::mt19937_64's 10000th output with the default seed is fixed by the C++ standard.
  std::mt19937_64 g;
  g.discard(9999);
  EXPECT_EQ(g(), 9981545732273789042ULL);  // C++ standard [rand.predef]
  PortableRandom r(3);
  std::vector<int> counts(3, 0);
  for (int i = 0; i < 30000; ++i) ++counts[static_cast<std::size_t>(r.below(3))];
  for (int c : counts) EXPECT_NEAR(c, 10000, 400);  // ~4.9 binomial sd
  for (int i = 0; i < 1000; ++i) {
    const double u = r.uniform();
    EXPECT_GE(u, 0.0);
    EXPECT_LT(u, 1.0);
  }
  EXPECT_EQ(r.below(1), 0u);
}

// Guarantee: with a start given (initial labels), one start, the fit of permuted
// rows is the permuted fit, to rounding (the moment sums run in another order).
// With random k-means++ starts only the distribution of starts is permutation
// invariant, not the start drawn from a given seed.
TEST(MixtureProperties, RowPermutationWithGivenStartIsEquivariant) {
  Eigen::VectorXi truth_labels;
  const Eigen::MatrixXd x = draw(three_clusters(), 600, 21, &truth_labels);
  PortableRandom rng(8);
  std::vector<Index> perm(600);
  for (Index i = 0; i < 600; ++i) perm[static_cast<std::size_t>(i)] = i;
  for (Index i = 599; i > 0; --i)
    std::swap(perm[static_cast<std::size_t>(i)], perm[rng.below(static_cast<std::uint64_t>(i + 1))]);
  Eigen::MatrixXd xp(600, 3);
  Eigen::VectorXi lp(600);
  for (Index i = 0; i < 600; ++i) {
    xp.row(i) = x.row(perm[static_cast<std::size_t>(i)]);
    lp(i) = truth_labels(perm[static_cast<std::size_t>(i)]);
  }
  for (CovarianceStructure s : kAll) {
    MixtureOptions o;
    o.components = 3;
    o.structure = s;
    o.restarts = 1;
    o.initial_labels = truth_labels;
    const MixtureResult a = fit_mixture(make_view(x), o);
    o.initial_labels = lp;
    const MixtureResult b = fit_mixture(make_view(xp), o);
    EXPECT_NEAR(a.log_likelihood, b.log_likelihood, 1e-10 * std::abs(a.log_likelihood));
    EXPECT_LE((a.model.means - b.model.means).norm(), 1e-9 * a.model.means.norm());
    EXPECT_LE((a.model.weights - b.model.weights).norm(), 1e-10);
    for (Index k = 0; k < 3; ++k)
      EXPECT_LE((a.model.covariances[k] - b.model.covariances[k]).norm(), 1e-9 * a.model.covariances[k].norm());
    for (Index i = 0; i < 600; ++i) {
      EXPECT_NEAR(b.log_density(i), a.log_density(perm[static_cast<std::size_t>(i)]), 1e-9);
      EXPECT_EQ(b.labels(i), a.labels(perm[static_cast<std::size_t>(i)]));
    }
  }
}

// Location and scale: shifting by a huge offset or scaling by 1e+-100 moves the
// fit accordingly (same seed; the k-means++ start works on standardised columns).
TEST(MixtureProperties, HugeOffsetsAndExtremeScales) {
  const Eigen::MatrixXd x = draw(three_clusters(), 500, 31);
  MixtureOptions o;
  o.components = 3;
  o.seed = 4;
  const MixtureResult base = fit_mixture(make_view(x), o);
  const Eigen::RowVector3d shift(1e8, -3e7, 5e6);
  const Eigen::MatrixXd xs = x.rowwise() + shift;
  const MixtureResult sh = fit_mixture(make_view(xs), o);
  // Compared component by component after matching the means (two starts that
  // reach one optimum in another order may swap places under rounding).
  EXPECT_NEAR(sh.log_likelihood, base.log_likelihood, 1e-9 * std::abs(base.log_likelihood));
  for (Index k = 0; k < 3; ++k) {
    Index j = 0;
    for (Index c = 1; c < 3; ++c)
      if ((sh.model.means.row(c) - shift - base.model.means.row(k)).norm() <
          (sh.model.means.row(j) - shift - base.model.means.row(k)).norm())
        j = c;
    // The offset costs about 8 digits (1e8 against unit spread): 1e-6 absolute.
    EXPECT_LE((sh.model.means.row(j) - shift - base.model.means.row(k)).norm(), 1e-6);
    EXPECT_LE((sh.model.covariances[j] - base.model.covariances[k]).norm(), 1e-6 * base.model.covariances[k].norm());
  }
  for (double c : {1e-100, 1e100}) {
    const Eigen::MatrixXd xc = x * c;
    const MixtureResult sc = fit_mixture(make_view(xc), o);
    EXPECT_LE((sc.model.means / c - base.model.means).norm(), 1e-9 * base.model.means.norm());
    EXPECT_NEAR(sc.log_likelihood + 500 * 3 * std::log(c), base.log_likelihood, 1e-9 * std::abs(base.log_likelihood));
  }
}

// Recovery of known parameters: errors shrink like 1/sqrt(n).
TEST(MixtureProperties, RecoversKnownParametersAtRateRootN) {
  const Truth truth = three_clusters();
  for (Index n : {2000, 32000}) {
    const Eigen::MatrixXd x = draw(truth, n, 1000 + static_cast<std::uint64_t>(n));
    MixtureOptions o;
    o.components = 3;
    o.seed = 17;
    const MixtureResult r = fit_mixture(make_view(x), o);
    ASSERT_TRUE(r.converged);
    const auto m = match(r.model, truth);
    for (Index k = 0; k < 3; ++k) {
      const Index j = m[static_cast<std::size_t>(k)];
      const double nk = truth.weights(k) * static_cast<double>(n);
      const Eigen::MatrixXd cov = truth.chols[k] * truth.chols[k].transpose();
      const double sd = std::sqrt(cov.diagonal().maxCoeff());
      // 5 standard errors per coordinate (common practice, no published source).
      EXPECT_LT((r.model.means.row(j) - truth.means.row(k)).cwiseAbs().maxCoeff(), 5 * sd / std::sqrt(nk)) << n;
      EXPECT_LT(std::abs(r.model.weights(j) - truth.weights(k)),
                5 * std::sqrt(truth.weights(k) * (1 - truth.weights(k)) / static_cast<double>(n)))
          << n;
      // Covariance entries: sd of s_ab is at most sqrt(2) sigma_max^2 / sqrt(n_k).
      EXPECT_LT((r.model.covariances[j] - cov).cwiseAbs().maxCoeff(), 5 * std::sqrt(2.0) * sd * sd / std::sqrt(nk))
          << n;
    }
  }
}
