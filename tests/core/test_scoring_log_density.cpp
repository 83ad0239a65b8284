// Log-densities from the scorer (core/scoring.hpp, ScoringOptions::log_densities):
// the marginal Gaussian of each row's observed coordinates, checked against
// the textbook formula evaluated independently with Eigen's LLT.
#include <gtest/gtest.h>

#include <Eigen/Cholesky>
#include <cmath>
#include <numbers>
#include <vector>

#include "core/scoring.hpp"

namespace core = ellipsa::core;

TEST(ScoringLogDensity, MarginalGaussianOfTheObservedCoordinates) {
  Eigen::MatrixXd s(3, 3);
  s << 4.0, 1.2, -0.6, 1.2, 2.0, 0.3, -0.6, 0.3, 1.5;
  const Eigen::VectorXd t = Eigen::Vector3d(1.0, -2.0, 0.5);
  const double nan = std::nan("");
  Eigen::MatrixXd x(4, 3);
  x << 1.5, -1.0, 0.0,  // complete
      nan, -2.5, 1.0,   // first coordinate missing
      2.0, nan, nan,    // one observed
      nan, nan, nan;    // nothing observed
  const core::MahalanobisScorer scorer(t, s);
  core::ScoringOptions o;
  o.log_densities = true;
  const core::RowScores r = scorer.score(core::make_view(x), o);
  ASSERT_EQ(r.log_density.size(), 4);
  // log N(x_o; T_o, S_oo) = -0.5 (q log 2 pi + log det S_oo + d2) (the multivariate normal density).
  const auto expected = [&](const std::vector<Eigen::Index>& obs, int row) {
    const Eigen::Index q = static_cast<Eigen::Index>(obs.size());
    Eigen::MatrixXd so(q, q);
    Eigen::VectorXd d(q);
    for (Eigen::Index a = 0; a < q; ++a) {
      d(a) = x(row, obs[a]) - t(obs[a]);
      for (Eigen::Index b = 0; b < q; ++b) so(a, b) = s(obs[a], obs[b]);
    }
    const Eigen::LLT<Eigen::MatrixXd> llt(so);
    const double log_det = 2.0 * llt.matrixL().toDenseMatrix().diagonal().array().log().sum();
    const double d2 = d.dot(llt.solve(d));
    return -0.5 * (static_cast<double>(q) * std::log(2.0 * std::numbers::pi) + log_det + d2);
  };
  EXPECT_NEAR(r.log_density(0), expected({0, 1, 2}, 0), 1e-12);  // rounding only (common practice)
  EXPECT_NEAR(r.log_density(1), expected({1, 2}, 1), 1e-12);
  EXPECT_NEAR(r.log_density(2), expected({0}, 2), 1e-12);
  EXPECT_TRUE(std::isnan(r.log_density(3)));
  // Not asked: not filled.
  EXPECT_EQ(scorer.score(core::make_view(x)).log_density.size(), 0);
}
