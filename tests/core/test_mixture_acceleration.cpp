// SQUAREM between EM iterations (core/mixture_acceleration.hpp) and the short
// runs that choose among the starts (fit_mixture): the extrapolation's algebra,
// its independence of the columns' units, and that the accelerated fit reaches
// plain EM's optimum on published data sets, Old Faithful (Azzalini & Bowman
// 1990) and Fisher's iris (Fisher 1936), complete and with missing cells.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <string>

#include "core/error.hpp"
#include "core/mixture_acceleration.hpp"
#include "core/mixture_em.hpp"
#include "core/portable_random.hpp"
#include "reference_csv.hpp"

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd reference_table(const std::string& name, int columns) {
  const auto rows =
      ellipsa_test::read_numeric_rows_prefix(std::string(ELLIPSA_REFERENCE_DIR) + "/mixtures/" + name, columns);
  Eigen::MatrixXd x(static_cast<Index>(rows.size()), columns);
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (int j = 0; j < columns; ++j) x(static_cast<Index>(i), j) = rows[i].at(static_cast<std::size_t>(j));
  return x;
}

MixtureModel random_model(Index k, Index p, PortableRandom& rng) {
  MixtureModel m;
  m.structure = CovarianceStructure::Full;
  m.weights.resize(k);
  for (Index c = 0; c < k; ++c) m.weights(c) = 0.5 + rng.uniform();
  m.weights /= m.weights.sum();
  m.means.resize(k, p);
  for (Index i = 0; i < m.means.size(); ++i) m.means.data()[i] = 4.0 * rng.uniform() - 2.0;
  for (Index c = 0; c < k; ++c) {
    Eigen::MatrixXd a(p, p);
    for (Index i = 0; i < a.size(); ++i) a.data()[i] = rng.uniform() - 0.5;
    m.covariances.push_back(a * a.transpose() + Eigen::MatrixXd::Identity(p, p));
  }
  return m;
}

// theta* - lambda^t c entry by entry: the iterates of a map that converges
// linearly with one rate lambda.
MixtureModel geometric_iterate(const MixtureModel& limit, const MixtureModel& c, double lambda, int t) {
  const double f = std::pow(lambda, t);
  return combine_models(1.0, limit, -f, c, 0.0, c);
}

double relative_difference(const MixtureModel& a, const MixtureModel& b) {
  double num = (a.weights - b.weights).squaredNorm() + (a.means - b.means).squaredNorm();
  double den = b.weights.squaredNorm() + b.means.squaredNorm();
  for (std::size_t k = 0; k < a.covariances.size(); ++k) {
    num += (a.covariances[k] - b.covariances[k]).squaredNorm();
    den += b.covariances[k].squaredNorm();
  }
  return std::sqrt(num / den);
}

// Fits from the same start with and without the acceleration, one start.
struct Pair {
  MixtureResult plain, fast;
};
Pair fit_both(const Eigen::MatrixXd& x, MixtureOptions o) {
  o.restarts = 1;
  o.tolerance = 1e-13;
  o.max_iterations = 5000;
  o.accelerate = false;
  Pair r;
  r.plain = fit_mixture(make_view(x), o);
  o.accelerate = true;
  r.fast = fit_mixture(make_view(x), o);
  return r;
}

}  // namespace

TEST(MixtureAcceleration, LinearConvergenceIsExtrapolatedToItsLimit) {
  // Algebra from the step of Varadhan & Roland (2008): for theta_t = theta* -
  // lambda^t c, r = (1 - lambda) c and v = -(1 - lambda)^2 c, so alpha =
  // -|r| / |v| = -1 / (1 - lambda) and theta0 - 2 alpha r + alpha^2 v =
  // theta* - c + 2c - c = theta*, whatever the norm's weights.
  PortableRandom rng(11);
  const MixtureModel limit = random_model(3, 4, rng);
  MixtureModel c = random_model(3, 4, rng);
  c.weights = Eigen::Vector3d(0.01, -0.03, 0.02);  // the weights' offsets sum to 0
  const Eigen::VectorXd inv_spread = Eigen::Vector4d(1.0, 0.5, 3.0, 0.01);
  for (double lambda : {0.5, 0.9, 0.99}) {
    const MixtureModel t0 = geometric_iterate(limit, c, lambda, 0), t1 = geometric_iterate(limit, c, lambda, 1),
                       t2 = geometric_iterate(limit, c, lambda, 2);
    const double alpha = squarem_step_length(t0, t1, t2, inv_spread);
    EXPECT_NEAR(alpha, -1.0 / (1.0 - lambda), 1e-9 / (1.0 - lambda)) << lambda;
    EXPECT_LT(relative_difference(squarem_jump(t0, t1, t2, alpha), limit), 1e-11) << lambda;
  }
}

TEST(MixtureAcceleration, StepLengthDoesNotDependOnTheColumnsUnits) {
  PortableRandom rng(5);
  const MixtureModel m0 = random_model(2, 3, rng), m1 = random_model(2, 3, rng), m2 = random_model(2, 3, rng);
  const Eigen::Vector3d spread(0.7, 2.0, 1.3);
  const Eigen::Vector3d units(1e-3, 1.0, 4e5);  // a column in km, one in m, one in mm say
  auto rescale = [&](MixtureModel m) {
    m.means = m.means * units.asDiagonal();
    for (auto& s : m.covariances) s = units.asDiagonal() * s * units.asDiagonal();
    return m;
  };
  const double a = squarem_step_length(m0, m1, m2, spread.cwiseInverse());
  const double b =
      squarem_step_length(rescale(m0), rescale(m1), rescale(m2), spread.cwiseProduct(units).cwiseInverse());
  EXPECT_NEAR(a, b, 1e-12 * std::abs(a));
}

TEST(MixtureAcceleration, AtMinusOneTheJumpIsTheSecondIterateExactly) {
  PortableRandom rng(8);
  const MixtureModel m0 = random_model(2, 3, rng), m1 = random_model(2, 3, rng), m2 = random_model(2, 3, rng);
  const MixtureModel j = squarem_jump(m0, m1, m2, -1.0);  // coefficients 0, 0, 1
  EXPECT_EQ(0, std::memcmp(j.means.data(), m2.means.data(), sizeof(double) * 6));
  EXPECT_EQ(0, std::memcmp(j.weights.data(), m2.weights.data(), sizeof(double) * 2));
  for (std::size_t k = 0; k < 2; ++k)
    EXPECT_EQ(0, std::memcmp(j.covariances[k].data(), m2.covariances[k].data(), sizeof(double) * 9));
  // Iterates of another shape are refused, not read out of bounds.
  const MixtureModel wide = random_model(2, 4, rng);
  EXPECT_THROW(squarem_step_length(m0, m1, wide, Eigen::Vector3d::Ones()), Error);
  EXPECT_THROW(squarem_jump(m0, wide, m2, -2.0), Error);
  // No second difference (EM at its fixed point): no extrapolation.
  EXPECT_EQ(squarem_step_length(m0, m0, m0, Eigen::Vector3d::Ones()), -1.0);
}

TEST(MixtureAcceleration, ReachesPlainEmOptimumOnPublishedData) {
  // Old Faithful (272 x 2, K = 2 and 3) and iris (150 x 4, K = 3), every
  // structure, from one k-means++ start: the accelerated fit must end at plain
  // EM's optimum (the same start, both run to a 1e-13 relative change) with no
  // lower log-likelihood and no more EM iterations. Bounds: logL to 1e-9
  // relative; parameters to 1e-4 relative (the tolerance leaves each fit that
  // far from the exact optimum along the flattest direction).
  const Eigen::MatrixXd faithful = reference_table("faithful.csv", 2);
  const Eigen::MatrixXd iris = reference_table("iris.csv", 4);
  ASSERT_EQ(faithful.rows(), 272);  // Azzalini & Bowman (1990)
  ASSERT_EQ(iris.rows(), 150);      // Fisher (1936)
  struct Case {
    const Eigen::MatrixXd* x;
    Index k;
    const char* name;
  };
  const Case cases[] = {{&faithful, 2, "faithful K=2"}, {&faithful, 3, "faithful K=3"}, {&iris, 3, "iris K=3"}};
  int fewer = 0, total = 0;
  for (const Case& c : cases) {
    for (CovarianceStructure s : {CovarianceStructure::Full, CovarianceStructure::Diagonal, CovarianceStructure::Tied,
                                  CovarianceStructure::Spherical}) {
      MixtureOptions o;
      o.components = c.k;
      o.structure = s;
      o.seed = 1990;
      const Pair r = fit_both(*c.x, o);
      const std::string what = std::string(c.name) + " structure " + std::to_string(static_cast<int>(s));
      ASSERT_TRUE(r.plain.converged && r.fast.converged) << what;
      EXPECT_GE(r.fast.log_likelihood, r.plain.log_likelihood - 1e-9 * std::abs(r.plain.log_likelihood)) << what;
      EXPECT_NEAR(r.fast.log_likelihood, r.plain.log_likelihood, 1e-9 * std::abs(r.plain.log_likelihood)) << what;
      if (r.fast.model.components() == r.plain.model.components())
        EXPECT_LT(relative_difference(r.fast.model, r.plain.model), 1e-4) << what;
      EXPECT_LE(r.fast.iterations, r.plain.iterations) << what;
      fewer += r.fast.iterations < r.plain.iterations;
      ++total;
    }
  }
  std::printf("accelerated fits with fewer EM iterations than plain EM: %d of %d\n", fewer, total);
  EXPECT_GE(fewer, total / 2);
}

TEST(MixtureAcceleration, ReachesPlainEmOptimumWithMissingCells) {
  // Iris with about 8% of its cells removed (a fixed invented pattern): EM over
  // the missing coordinates, accelerated and plain, from the same start.
  Eigen::MatrixXd iris = reference_table("iris.csv", 4);
  PortableRandom rng(1936);
  for (Index i = 0; i < iris.rows(); ++i)
    if (rng.uniform() < 0.3) iris(i, static_cast<Index>(rng.below(4))) = std::nan("");
  MixtureOptions o;
  o.components = 3;
  o.missing = MissingHandling::EmOverMissing;
  o.seed = 7;
  const Pair r = fit_both(iris, o);
  ASSERT_TRUE(r.plain.converged && r.fast.converged);
  EXPECT_NEAR(r.fast.log_likelihood, r.plain.log_likelihood, 1e-9 * std::abs(r.plain.log_likelihood));
  EXPECT_LT(relative_difference(r.fast.model, r.plain.model), 1e-4);
  EXPECT_LT(r.fast.iterations, r.plain.iterations);
  std::printf("iris with missing cells: %d EM iterations accelerated, %d plain\n", r.fast.iterations,
              r.plain.iterations);
}
