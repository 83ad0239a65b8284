// Distribution functions (core/distributions): chi-square critical values from
// the NIST/SEMATECH e-Handbook tables, and chi2/F/Beta cdf, sf and quantiles
// against R's standalone math library (an independent implementation).
#include <gtest/gtest.h>

#include "reference_csv.hpp"

#include <cmath>
#include <fstream>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

#include <boost/math/distributions/fisher_f.hpp>
#include <boost/math/special_functions/gamma.hpp>
#include <cstdio>

#include "core/distributions.hpp"
#include "core/error.hpp"

#ifdef ELLIPSA_HAVE_RMATH
#include <Rmath.h>
#endif

using namespace ellipsa::core;

namespace {

const std::string kRef = ELLIPSA_REFERENCE_DIR;

std::vector<std::vector<double>> read_table(const std::string& path) { return ellipsa_test::read_numeric_rows(path); }

double rel(double a, double b) {
  if (a == b) return 0.0;
  return std::abs(a - b) / std::max(std::abs(a), std::abs(b));
}

}  // namespace

TEST(Chi2Table, NistHandbookUpperAndLowerCriticalValues) {
  const double tails[] = {0.10, 0.05, 0.025, 0.01, 0.001};
  // NIST/SEMATECH e-Handbook 1.3.6.7.4, upper-tail critical values, df 1..100.
  // Tolerance 0.0015: four 0.001 entries (df 8, 12, 37, 88) are one unit high.
  const auto upper = read_table(kRef + "/distributions/chi2_upper_nist_handbook_table.csv");
  ASSERT_EQ(upper.size(), 100u);
  for (const auto& row : upper)
    for (int k = 0; k < 5; ++k)
      EXPECT_NEAR(chi2_quantile(1.0 - tails[k], row[0]), row[static_cast<std::size_t>(k) + 1], 0.0015)
          << "df " << row[0] << " upper " << tails[k];
  // Same source, lower-tail critical values.
  const auto lower = read_table(kRef + "/distributions/chi2_lower_nist_handbook_table.csv");
  ASSERT_EQ(lower.size(), 100u);
  for (const auto& row : lower)
    for (int k = 0; k < 5; ++k)
      EXPECT_NEAR(chi2_quantile(tails[k], row[0]), row[static_cast<std::size_t>(k) + 1], 0.0015)
          << "df " << row[0] << " lower " << tails[k];
}

TEST(DistributionArguments, RejectedWithArgumentError) {
  EXPECT_THROW(chi2_cdf(1.0, 0.0), Error);
  EXPECT_THROW(chi2_cdf(std::nan(""), 2.0), Error);
  EXPECT_THROW(chi2_quantile(1.0, 2.0), Error);
  EXPECT_THROW(chi2_quantile(-0.1, 2.0), Error);
  EXPECT_THROW(f_quantile(0.5, -1.0, 2.0), Error);
  EXPECT_THROW(beta_quantile(1.5, 1.0, 2.0), Error);
  EXPECT_THROW(beta_sf(0.5, 0.0, 3.0), Error);
  // Edges that have answers.
  EXPECT_EQ(chi2_cdf(-0.0, 3.0), 0.0);
  EXPECT_EQ(chi2_sf(std::numeric_limits<double>::infinity(), 3.0), 0.0);
  EXPECT_EQ(chi2_quantile(0.0, 3.0), 0.0);
  EXPECT_EQ(beta_sf(1.0, 2.0, 3.0), 0.0);
}

#ifdef ELLIPSA_HAVE_RMATH
// R's Rmath: pchisq, qchisq, pf, qf, pbeta, qbeta (lower_tail, log_p = 0).
TEST(DistributionsVsRmath, Chi2FBetaGrid) {
  const double dfs[] = {0.5, 1, 2, 3, 7.5, 10, 37, 100, 1000};
  const double probs[] = {1e-12, 1e-6, 0.001, 0.025, 0.1, 0.5, 0.9, 0.975, 0.999, 1 - 1e-9};
  const double tol = 1e-10;
  double worst = 0.0;
  int rmath_qf_misses = 0;
  auto check = [&](double ours, double theirs, const std::string& what) {
    const double r = rel(ours, theirs);
    worst = std::max(worst, r);
    EXPECT_LE(r, tol) << what << ": ours " << ours << " Rmath " << theirs;
  };
  for (double df : dfs) {
    for (double q : probs) {
      const std::string at = " df " + std::to_string(df) + " q " + std::to_string(q);
      const double x = qchisq(q, df, 1, 0);
      check(chi2_quantile(q, df), x, "chi2 quantile" + at);
      check(chi2_cdf(x, df), pchisq(x, df, 1, 0), "chi2 cdf" + at);
      check(chi2_sf(x, df), pchisq(x, df, 0, 0), "chi2 sf" + at);
      for (double df2 : {1.0, 4.0, 17.0, 250.0}) {
        const std::string at2 = at + " df2 " + std::to_string(df2);
        const double f = qf(q, df, df2, 1, 0);
        // Rmath's qf loses accuracy deep in the lower tail for df1 < 1 (it
        // returns 0 at q = 1e-12 for df1 = 0.5); there our quantile is checked
        // through Rmath's own pf instead: pf(ours) must give back q.
        const double ours_f = f_quantile(q, df, df2);
        if (rel(ours_f, f) > tol) {
          ++rmath_qf_misses;
          check(pf(ours_f, df, df2, 1, 0), q, "pf(F quantile)" + at2);
        }
        check(f_cdf(f, df, df2), pf(f, df, df2, 1, 0), "F cdf" + at2);
        check(f_sf(f, df, df2), pf(f, df, df2, 0, 0), "F sf" + at2);
        const double a = df / 2, b = df2 / 2;
        const double bq = qbeta(q, a, b, 1, 0);
        check(beta_quantile(q, a, b), bq, "Beta quantile" + at2);
        if (bq > 0.0 && bq < 1.0) {
          check(beta_sf(bq, a, b), pbeta(bq, a, b, 0, 0), "Beta sf" + at2);
        }
      }
    }
  }
  RecordProperty("worst_relative_difference", std::to_string(worst));
  std::printf("  worst relative difference to Rmath: %.2e (%d F quantiles checked through pf)\n", worst,
              rmath_qf_misses);
}
#else
TEST(DistributionsVsRmath, Chi2FBetaGrid) { GTEST_SKIP() << "R's standalone math library not found"; }
#endif

TEST(DistributionTails, DeepLowerTailQuantilesMatchClosedForms) {
  // Beta(1/2, 2): F(x) = 1.5 sqrt(x) - 0.5 x^1.5, so for tiny q, x = (q/1.5)^2
  // to relative 1e-12 (derived here, common practice, no published source).
  for (double q : {1e-14, 1e-12, 1e-10, 1e-8}) {
    const double x = beta_quantile(q, 0.5, 2.0);
    EXPECT_NEAR(x / ((q / 1.5) * (q / 1.5)), 1.0, 1e-7) << q;
    // The closed form at the returned quantile gives back q.
    EXPECT_NEAR((1.5 * std::sqrt(x) - 0.5 * x * std::sqrt(x)) / q, 1.0, 1e-12) << q;
  }
  // F(1, 1): F(x) = (2/pi) atan(sqrt(x)), so the cdf near 1 keeps its digits.
  const double x = 4.0e17;
  EXPECT_NEAR(f_cdf(x, 1, 1), 1.0 - 2.0 / (M_PI * std::sqrt(x)), 1e-16);
  EXPECT_NEAR(f_cdf(f_quantile(1e-12, 1.0, 4.0), 1.0, 4.0) / 1e-12, 1.0, 1e-10);
}

// The closed form of chi2_sf for whole df (df <= 100, x < 1400) against
// Boost's regularised upper incomplete gamma Q(df/2, x/2) (general-purpose
// library), on a grid from 1e-300 to the edge of the closed form's range,
// and on both sides of that edge. All terms of the sum are positive, so the
// agreement is relative: 4.5e-14 at worst when written (about 200 ulps, at
// the largest df); the bound is 1e-13.
TEST(DistributionTails, WholeDfChi2TailMatchesBoostIncompleteGamma) {
  double worst = 0.0;
  for (int df = 1; df <= 100; ++df) {
    for (double x = 1e-300; x < 1400.0; x *= 1.37) {
      const double ours = chi2_sf(x, df);
      const double boost_q = boost::math::gamma_q(0.5 * df, 0.5 * x);
      if (boost_q < std::numeric_limits<double>::min()) continue;  // subnormal: no relative digits to compare
      const double r = std::abs(ours - boost_q) / boost_q;
      worst = std::max(worst, r);
      EXPECT_LE(r, 1e-13) << "df " << df << " x " << x << ": " << ours << " vs " << boost_q;
    }
    for (const double x : {1399.0, 1400.0, 1401.0})
      EXPECT_LE(std::abs(chi2_sf(x, df) - boost::math::gamma_q(0.5 * df, 0.5 * x)),
                1e-12 * boost::math::gamma_q(0.5 * df, 0.5 * x));
  }
  std::printf("  worst relative difference to Boost's gamma_q: %.2e\n", worst);
  // df outside the closed form's range still goes to Boost.
  EXPECT_NEAR(chi2_sf(3.0, 2.5), boost::math::gamma_q(1.25, 1.5), 1e-15);
  EXPECT_NEAR(chi2_sf(150.0, 101.0), boost::math::gamma_q(50.5, 75.0), 1e-15);
}

// The closed form of f_sf for even df1 <= 100 against Boost's F distribution
// (general-purpose library), over df2 from 0.7 to 1e6 (the phase II
// reference uses df2 = m - p, m possibly fractional) and x from 1e-12 to the
// edge of the closed form's range. Relative agreement: 1.8e-13 at worst when
// written (exp(-a log1p(.)) carries the rounding of an exponent up to 700);
// the bound is 1e-12.
TEST(DistributionTails, EvenDf1FTailMatchesBoost) {
  double worst = 0.0;
  for (int df1 = 2; df1 <= 100; df1 += 2)
    for (const double df2 : {0.7, 1.0, 2.5, 7.0, 38.5, 250.0, 1e4, 1e6})
      for (double x = 1e-12; x < 1e12; x *= 1.9) {
        if (0.5 * df2 * std::log1p(df1 * x / df2) >= 700.0) break;
        const double theirs = cdf(complement(boost::math::fisher_f_distribution<double>(df1, df2), x));
        if (theirs < std::numeric_limits<double>::min()) continue;
        const double r = std::abs(f_sf(x, df1, df2) - theirs) / theirs;
        worst = std::max(worst, r);
        EXPECT_LE(r, 1e-12) << "df1 " << df1 << " df2 " << df2 << " x " << x;
      }
  std::printf("  worst relative difference to Boost's F tail: %.2e\n", worst);
}
