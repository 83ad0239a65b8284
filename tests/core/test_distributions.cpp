// Distribution functions (core/distributions): chi-square critical values from
// the NIST/SEMATECH e-Handbook tables, and chi2/F/Beta cdf, sf and quantiles
// against R's standalone math library (an independent implementation).
#include <gtest/gtest.h>

#include "reference_csv.hpp"

#include <cmath>
#include <fstream>
#include <iomanip>
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

// The F and Beta functions accept shapes and degrees of freedom in
// [1e-100, 1e12] (the header's contract; the measured reasons are at
// kMinShape / kMaxShape in core/distributions.cpp).
TEST(DistributionDomain, ShapesOutsideTheRangeAreRefused) {
  const double inf = std::numeric_limits<double>::infinity();
  const double above = std::nextafter(1e12, inf), below = std::nextafter(1e-100, 0.0);
  for (double bad : {above, below, 1e300, 1e-300}) {
    EXPECT_THROW(beta_quantile(0.5, bad, 2.0), Error) << bad;
    EXPECT_THROW(beta_quantile(0.5, 2.0, bad), Error) << bad;
    EXPECT_THROW(beta_sf(0.5, bad, 2.0), Error) << bad;
    EXPECT_THROW(beta_sf(0.5, 2.0, bad), Error) << bad;
    EXPECT_THROW(f_quantile(0.5, bad, 2.0), Error) << bad;
    EXPECT_THROW(f_quantile(0.5, 2.0, bad), Error) << bad;
    EXPECT_THROW(f_sf(1.0, bad, 2.0), Error) << bad;
    EXPECT_THROW(f_cdf(1.0, 2.0, bad), Error) << bad;
  }
  // The fuzzer's input that ran for half an hour inside Boost's inverse
  // incomplete beta (scripts/run-fuzz.sh, sheet_evaluate corpus).
  EXPECT_THROW(beta_quantile(0.0041, 4.9778176961711737e250, 1e150), Error);
  for (double edge : {1e12, 1e-100}) {
    EXPECT_NO_THROW(beta_quantile(0.5, edge, 2.0)) << edge;
    EXPECT_NO_THROW(beta_sf(0.5, 2.0, edge)) << edge;
    EXPECT_NO_THROW(f_quantile(0.5, edge, edge)) << edge;
    EXPECT_NO_THROW(f_sf(1.0, edge, 2.0)) << edge;
  }
}

// Inside the range every call ends with a value in range: probabilities in
// [0, 1], Beta quantiles in [0, 1] and non-decreasing in the probability, F
// quantiles >= 0 (definitions). Shapes every ten decades from 1e-100, then
// every decade from 1e-10 to 1e12, crossed; before the range was checked,
// Boost looped without end or returned NaN and P = -124.4 beyond 1e20.
TEST(DistributionDomain, EveryCallInsideTheRangeEndsInRange) {
  std::vector<double> shapes;
  for (double s = 1e-100; s < 1e-10; s *= 1e10) shapes.push_back(s);
  for (double s = 1e-10; s <= 1.0000001e12; s *= 10.0) shapes.push_back(s);
  shapes.push_back(0.5);
  shapes.push_back(7.5);
  const double probs[] = {0.0, 1e-300, 1e-12, 0.025, 0.5, 0.975, 1.0 - 1e-12};
  const double xs[] = {0.0, 1e-300, 1e-12, 0.3, 0.5, 0.999999, 1.0, 2.0, 1e300};
  const auto in_unit = [](double v) { return v >= 0.0 && v <= 1.0; };
  for (double a : shapes) {
    for (double b : shapes) {
      const std::string at = " a " + std::to_string(a) + " b " + std::to_string(b);
      double last = 0.0;
      for (double q : probs) {
        const double x = beta_quantile(q, a, b);
        EXPECT_TRUE(in_unit(x)) << "Beta quantile " << x << " q " << q << at;
        // Non-decreasing up to the root search's relative tolerance (2^-50):
        // next to 1 (tiny b) two quantiles may differ by 2 ulp either way.
        EXPECT_GE(x, last * (1.0 - 0x1p-50))
            << std::setprecision(17) << "Beta quantile not monotone: " << x << " after " << last << " at q " << q << at;
        last = x;
        const double f = f_quantile(q, a, b);
        EXPECT_TRUE(f >= 0.0) << "F quantile " << f << " q " << q << at;
      }
      for (double x : xs) {
        EXPECT_TRUE(in_unit(beta_sf(x, a, b))) << "Beta tail at " << x << at;
        EXPECT_TRUE(in_unit(f_sf(x, a, b))) << "F tail at " << x << at;
        EXPECT_TRUE(in_unit(f_cdf(x, a, b))) << "F cdf at " << x << at;
      }
    }
  }
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

// Accuracy at large shapes against R's pbeta (TOMS 708, Didonato & Morris
// 1992), which at Beta(5, 1e9), Beta(1e6, 3e6), Beta(1e8, 3e8) and
// Beta(1e10, 3e10) agrees to 1e-16 with a 40-digit quadrature of the density
// (mpmath, checked by hand while writing this test). The header's envelope:
// about 1e-13 while the smaller shape is at most 1e3 (every control limit and
// p-value the library asks has one shape p / 2), then growing with the
// smaller shape; asserted as max(1e-12, 5e-16 * smaller shape), measured at
// 2.3e-10 for 1e6 and 6.6e-6 for 1e11. Whole a in 2..30 with b in 1e4..1e9
// is the closed form's region: Boost alone reached 5e-8 there.
TEST(DistributionsVsRmath, LargeShapesAccuracy) {
  double worst_small = 0.0;
  for (double a : {0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 5.0, 7.0, 12.5, 25.0, 50.0, 100.0, 1e3, 1e4, 1e5, 1e6})
    for (double b = 1e2; b <= 1e12; b *= 10.0)
      for (double q : {1e-100, 1e-12, 1e-3, 0.3, 0.5, 0.9, 0.999})
        for (const bool swap : {false, true}) {
          const double sa = swap ? b : a, sb = swap ? a : b;
          const double x = qbeta(q, sa, sb, 0, 0);  // upper-tail q point
          if (!(x > 0.0 && x < 1.0)) continue;
          const double r = rel(beta_sf(x, sa, sb), pbeta(x, sa, sb, 0, 0));
          if (std::min(a, b) <= 1e3) worst_small = std::max(worst_small, r);
          EXPECT_LE(r, std::max(1e-12, 5e-16 * std::min(a, b)))
              << "Beta(" << sa << ", " << sb << ") tail at " << x << " (q " << q << ")";
        }
  std::printf("  smaller shape <= 1e3, the other up to 1e12: worst relative tail error %.1e\n", worst_small);
  // Both large: Beta(s, 3 s) tails at x = 1/4 and 1/4 +- 2 standard deviations.
  for (double s : {1e8, 1e10, 1e11}) {
    double worst = 0.0;
    const double sd = std::sqrt(3.0 / (16.0 * (4.0 * s + 1.0)));
    for (double k : {-2.0, 0.0, 2.0}) {
      const double x = 0.25 + k * sd;
      worst = std::max(worst, rel(beta_sf(x, s, 3.0 * s), pbeta(x, s, 3.0 * s, 0, 0)));
    }
    std::printf("  Beta(%g, 3 x %g): worst relative tail error %.1e\n", s, s, worst);
    EXPECT_LE(worst, 5e-16 * s) << s;
  }
}

// Quantiles deep in the lower tail where Boost's inverse throws: R's pbeta and
// pf at our quantile give back q.
TEST(DistributionsVsRmath, DeepTailQuantilesWhereBoostGivesUp) {
  const double xb = beta_quantile(1e-300, 7.5, 0.7);
  EXPECT_NEAR(pbeta(xb, 7.5, 0.7, 1, 0) / 1e-300, 1.0, 1e-9) << xb;
  const double xf = f_quantile(1e-300, 7.5, 3.0);
  EXPECT_NEAR(pf(xf, 7.5, 3.0, 1, 0) / 1e-300, 1.0, 1e-9) << xf;
}
#else
TEST(DistributionsVsRmath, Chi2FBetaGrid) { GTEST_SKIP() << "R's standalone math library not found"; }
TEST(DistributionsVsRmath, LargeShapesAccuracy) { GTEST_SKIP() << "R's standalone math library not found"; }
TEST(DistributionsVsRmath, DeepTailQuantilesWhereBoostGivesUp) {
  GTEST_SKIP() << "R's standalone math library not found";
}
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
  // Beta(3, 3): I_x(3, 3) = sum_{j=3..5} C(5, j) x^j (1 - x)^(5 - j)
  // = 10 x^3 - 15 x^4 + 6 x^5 (the binomial form of the incomplete beta for
  // whole shapes, common practice). Boost's inverse gives up at q = 1e-300
  // ("no root to be found"), and a search from [0, 1] stopped at 5.6e-34;
  // the quantile is about 4.6e-101. The polynomial at the returned quantile
  // gives back q within the library's acceptance (1e-10 relative).
  for (double q : {1e-300, 1e-200, 1e-100, 1e-30}) {
    const double x = beta_quantile(q, 3.0, 3.0);
    EXPECT_NEAR(x * x * x * (10.0 - 15.0 * x + 6.0 * x * x) / q, 1.0, 1e-10) << q;
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
