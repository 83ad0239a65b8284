// Hotelling T^2: the one-sample statistic of the sweat data (covariance,
// whitening and F tail of the core) and the (core/hotelling)
// Tracy-Young-Mason control limits against R's qbeta/qf.
#include <gtest/gtest.h>

#include "reference_csv.hpp"

#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "core/cholesky.hpp"
#include "core/classical.hpp"
#include "core/error.hpp"
#include "core/distributions.hpp"
#include "core/hotelling.hpp"

#ifdef ELLIPSA_HAVE_RMATH
#include <Rmath.h>
#endif

using namespace ellipsa::core;

namespace {

Eigen::MatrixXd read_csv(const std::string& path) { return ellipsa_test::read_numeric_csv(path); }

}  // namespace

// The one-sample T^2 of Johnson & Wichern's Example 5.2 is n times the squared
// Mahalanobis distance of the hypothesised mean from the sample mean under the
// sample covariance (divisor n-1): the library's covariance, Cholesky whitening
// and F tail checked together against a published result.
TEST(HotellingOneSample, SweatExample) {
  const Eigen::MatrixXd x = read_csv(std::string(ELLIPSA_REFERENCE_DIR) + "/hotelling/sweat_johnson_wichern.csv");
  ASSERT_EQ(x.rows(), 20);
  const Eigen::Vector3d mu0(4.0, 50.0, 10.0);  // Johnson & Wichern Example 5.2, H0
  const ClassicalEstimate fit = classical_estimate(make_view(x), Normalisation::ByCountMinusOne);
  const CholeskyFactor chol(fit.covariance);
  ASSERT_TRUE(chol.ok());
  const double n = 20.0, p = 3.0;
  const double t2 = n * chol.whiten(fit.mean - mu0).squaredNorm();
  const double f = (n - p) / ((n - 1.0) * p) * t2;
  const double p_value = f_sf(f, p, n - p);
  // Johnson & Wichern Example 5.2 (as printed with four decimals in the header
  // of Trujillo-Ortiz & Hernandez-Walls 2002): T^2 9.7388, F 2.9045, P 0.0649.
  EXPECT_NEAR(t2, 9.7388, 0.5e-4);
  EXPECT_NEAR(f, 2.9045, 0.5e-4);
  EXPECT_NEAR(p_value, 0.0649, 0.5e-4);
  // Exact rational T^2 = 1579381395766377/162174579817297 and F, p-value by
  // 40-digit mpmath (one_sample_T2_sweat.json, computed_exact).
  EXPECT_NEAR(t2, 9.7387728554356670, 1e-12 * 9.74);
  EXPECT_NEAR(f, 2.9045462902176551, 1e-12 * 2.9);
  EXPECT_NEAR(p_value, 0.064928335380529339, 1e-11);
  // Published mean (4.640, 45.400, 9.965) and S to the printed three decimals.
  EXPECT_NEAR(fit.mean(0), 4.640, 0.5e-3);
  EXPECT_NEAR(fit.mean(1), 45.400, 0.5e-3);
  EXPECT_NEAR(fit.mean(2), 9.965, 0.5e-3);
  EXPECT_NEAR(fit.covariance(0, 0), 2.879, 0.5e-3);
  EXPECT_NEAR(fit.covariance(1, 1), 199.788, 0.5e-3);
  // The book prints -1.810 for S_13; the exact value -8593/4750 = -1.80905...
  // (json, computed_exact) is one unit lower in the third decimal, so S is
  // checked against the exact rationals instead.
  EXPECT_NEAR(fit.covariance(0, 2), -1.8090526315789474, 1e-13);  // -8593/4750
  EXPECT_NEAR(fit.covariance(0, 0), 2.8793684210526316, 1e-13);   // 13677/4750
  EXPECT_NEAR(fit.covariance(2, 2), 3.6276578947368421, 1e-13);   // 137851/38000
  EXPECT_NEAR(fit.covariance(1, 1), 199.78842105263158, 1e-12);   // 189799/950
  // Book's critical value at alpha 0.10: (n-1)p/(n-p) F(0.90; 3, 17) = 8.1726
  // unrounded (json, mpmath); the 8.18 printed uses a rounded F quantile.
  EXPECT_NEAR(19.0 * 3.0 / 17.0 * f_quantile(0.90, 3.0, 17.0), 8.1725725371206472, 1e-10);
  EXPECT_GT(t2, 8.1725725371206472);  // H0 rejected at alpha 0.10, as in the book
}

#ifdef ELLIPSA_HAVE_RMATH
TEST(HotellingLimits, TracyYoungMasonAgainstRmath) {
  // Independent evaluation of the published formulas with R's qbeta / qf.
  for (Index p : {1, 2, 3, 5, 10}) {
    for (Index m : {p + 2, p + 5, Index{30}, Index{100}, Index{1000}}) {
      for (double alpha : {0.0027, 0.01, 0.05, 0.1}) {
        const double md = static_cast<double>(m), pd = static_cast<double>(p);
        const double ucl1 = (md - 1) * (md - 1) / md * qbeta(1 - alpha, pd / 2, (md - pd - 1) / 2, 1, 0);
        const double ucl2 = pd * (md + 1) * (md - 1) / (md * (md - pd)) * qf(1 - alpha, pd, md - pd, 1, 0);
        EXPECT_NEAR(t2_phase1_limit(m, p, alpha), ucl1, 1e-10 * ucl1) << "m=" << m << " p=" << p;
        EXPECT_NEAR(t2_phase2_limit(m, p, alpha), ucl2, 1e-10 * ucl2) << "m=" << m << " p=" << p;
        // A new row is judged more leniently than one that helped fit the model.
        EXPECT_GT(t2_phase2_limit(m, p, alpha), t2_phase1_limit(m, p, alpha));
      }
    }
  }
}
#else
TEST(HotellingLimits, TracyYoungMasonAgainstRmath) { GTEST_SKIP() << "R's standalone math library not found"; }
#endif

TEST(HotellingLimits, LargeMApproachesChiSquareAndArgumentsAreChecked) {
  // As m grows both limits tend to chi2q(p, 1-alpha) (common practice, no
  // published source): 0.95 quantile of chi2(3) = 7.815 (NIST e-Handbook table).
  EXPECT_NEAR(t2_phase1_limit(1000000, 3, 0.05), 7.815, 2e-3);
  EXPECT_NEAR(t2_phase2_limit(1000000, 3, 0.05), 7.815, 2e-3);
  EXPECT_THROW(t2_phase1_limit(4, 3, 0.05), Error);  // m must exceed p + 1
  EXPECT_NO_THROW(t2_phase1_limit(5, 3, 0.05));
  EXPECT_THROW(t2_phase2_limit(3, 3, 0.05), Error);  // m must exceed p
  EXPECT_THROW(t2_phase2_limit(10, 3, 0.0), Error);
  EXPECT_THROW(t2_phase2_limit(10, 3, 1.0), Error);
  EXPECT_THROW(t2_phase1_limit(10, 0, 0.05), Error);
}

TEST(HotellingLimits, BeyondATrillionRowsTheChiSquareLimitIsUsed) {
  // The F and Beta functions stop at 1e12 degrees of freedom; above 1e12
  // reference rows both phases give chi2(p) (the large-sample limit, common
  // practice), and just below it the exact laws agree with that limit to
  // O(p / m). 0.95 quantile of chi2(3) = 7.815 (NIST e-Handbook table).
  const Index big = 2'000'000'000'000, edge = 1'000'000'000'000;
  const double chi = chi2_quantile(0.95, 3.0);
  EXPECT_NEAR(chi, 7.815, 1e-3);
  EXPECT_EQ(t2_phase1_limit(big, 3, 0.05), chi);
  EXPECT_EQ(t2_phase2_limit(big, 3, 0.05), chi);
  EXPECT_NEAR(t2_phase1_limit(edge, 3, 0.05) / chi, 1.0, 1e-9);
  EXPECT_NEAR(t2_phase2_limit(edge, 3, 0.05) / chi, 1.0, 1e-9);
  for (double t2 : {0.5, 7.815, 40.0}) {
    EXPECT_EQ(t2_phase2_sf(t2, 2e12, 3), chi2_sf(t2, 3.0)) << t2;
    EXPECT_EQ(t2_phase1_sf(t2, 2e12, 4), chi2_sf(t2, 4.0)) << t2;
    EXPECT_NEAR(t2_phase2_sf(t2, 1e12, 3) / chi2_sf(t2, 3.0), 1.0, 1e-9) << t2;
    EXPECT_NEAR(t2_phase1_sf(t2, 1e12, 4) / chi2_sf(t2, 4.0), 1.0, 1e-9) << t2;
  }
}
