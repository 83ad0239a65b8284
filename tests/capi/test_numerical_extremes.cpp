// Numerical extremes through the C interface: data scaled by 1e-150 and
// 1e+150, columns whose scales differ by 1e12, near-duplicate rows, exact ties
// in the order statistics. A fit either succeeds with finite results that are
// equivariant within the tolerances below, or returns one of the documented
// statuses (ellipsa.h, ellipsa_model_fit) with a message.
//
// Equivariance (the estimators' definitions; Rousseeuw & Leroy 1987 for the
// MCD, which is affine equivariant; Ledoit & Wolf 2004 for shrinkage, which
// is equivariant under c*I but not under unequal column scales):
//   X -> c X:   location -> c location, scatter -> c^2 scatter, squared
//               distances unchanged (every method);
//   X -> X D:   location -> D location, scatter -> D S D, distances unchanged
//               (classical, MCD, and DetMCD, which standardises each column
//               first), and mixtures with full, diagonal or tied covariances,
//               whose ridge is relative to each column's variance
//               (ellipsa_fit_options_set_regularisation()): every component's
//               mean -> D mean, covariance -> D C D, memberships unchanged,
//               log-likelihood -> log-likelihood - n log det D (the
//               log-Jacobian of the change of units: each row's density is
//               divided by det D).
// Tolerance: scaling by 1e+-150 or by 10^k is not exact in binary: every
// datum moves by up to one rounding (u = 1.1e-16) relative. Through the mean,
// the covariance and a Cholesky solve a relative perturbation u of the data
// changes distances by about kappa * u per operation chain, where kappa, the
// condition number of the (standardised) scatter, is below 100 for the data
// here (correlation 0.6 between neighbours); with sums over n = 200 rows
// (n u) and a margin of 100 for the chains, 1e-9 relative covers it with
// room to spare, while a scale-dependent threshold (an absolute epsilon, an
// overflowing fourth power) shows up as an error of order 1.
// Mixtures: EM is a fixed-point iteration whose map is itself equivariant, so
// the two fits make the same iterations and a rounding-level difference is
// carried along, not amplified: near the optimum the EM map contracts (its
// rate, the largest fraction of missing information, is below 1; the two
// clusters here are 5 standard deviations apart, so it is small). The stopping
// test could still end one fit an iteration before the other; the tolerance
// is set to 1e-12 relative, so the last step is far below 1e-9 either way.
// The log-likelihood is compared after the shift, relative to its magnitude
// (about 5e3 here), which keeps the same 1e-9. Measured (2026-12-03): the
// largest difference was 1.4e-15 relative (a covariance entry), so 1e-9
// leaves a wide margin and a swamped column (the old mean-variance ridge)
// still fails by orders of magnitude.
// The robust fits choose a subset: a perturbation at rounding level cannot
// change it here, since the determinants of competing subsets of continuous
// data differ by far more than 1e-9 relative (the same seed is used).
// Data are invented: correlated normal rows from a fixed seed.
#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "capi_test_util.hpp"
#include "ellipsa.h"

namespace {

constexpr double kRelativeTolerance = 1e-9;

struct Fit {
  ellipsa_status status = ELLIPSA_OK;
  std::string message;
  std::vector<double> location, scatter, d2;
};

std::vector<double> correlated(int64_t n, int64_t p, uint64_t seed) {
  std::mt19937_64 g(seed);
  std::normal_distribution<double> z;
  std::vector<double> x(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i) {
    double prev = z(g);
    for (int64_t j = 0; j < p; ++j) {
      prev = 0.6 * prev + 0.8 * z(g);
      x[static_cast<size_t>(i * p + j)] = prev + (i < n / 10 ? 5.0 : 0.0);  // a tenth shifted
    }
  }
  return x;
}

// Fits x (row-major n x p) with the given options: the status, and on failure
// the message (*m stays NULL). Shared by the fit helpers below.
ellipsa_status fit_row_major(ellipsa_model** m, std::string& message, const std::vector<double>& x, int64_t n,
                             int64_t p, const ellipsa_fit_options* options) {
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  const ellipsa_status st = ellipsa_model_fit(m, &v, options);
  if (st != ELLIPSA_OK) message = ellipsa_last_error();
  return st;
}

Fit fit(ellipsa_method method, const std::vector<double>& x, int64_t n, int64_t p, int32_t structure = 0) {
  ellipsa_fit_options* raw = nullptr;
  EXPECT_EQ(ellipsa_fit_options_create(&raw, method), ELLIPSA_OK);
  capi_test::Options o(raw);
  if (method == ELLIPSA_METHOD_MIXTURE) {
    ellipsa_fit_options_set_components(raw, 2, 2);
    ellipsa_fit_options_set_restarts(raw, 2);
    if (structure) ellipsa_fit_options_set_structure(raw, structure);
  }
  ellipsa_model* m = nullptr;
  Fit f;
  f.status = fit_row_major(&m, f.message, x, n, p, raw);
  if (f.status != ELLIPSA_OK) return f;
  capi_test::Model model(m);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  f.location.resize(static_cast<size_t>(p));
  f.scatter.resize(static_cast<size_t>(p * p));
  EXPECT_EQ(ellipsa_model_component(f.location.data(), p, f.scatter.data(), p * p, nullptr, m, 0), ELLIPSA_OK);
  f.d2.resize(static_cast<size_t>(n));
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = f.d2.data();
  EXPECT_EQ(ellipsa_model_score(&s, m, &v, 0.975), ELLIPSA_OK) << ellipsa_last_error();
  return f;
}

// A mixture of K = 2 with every component, the memberships and the
// log-likelihood (restarts 2, EM tolerance 1e-12 relative: see the top).
struct MixtureFit {
  ellipsa_status status = ELLIPSA_OK;
  std::string message;
  std::vector<double> weight, location, scatter, membership;  // K; K*p; K*p*p; n*K
  double log_likelihood = 0.0;
};

MixtureFit fit_mixture(const std::vector<double>& x, int64_t n, int64_t p, int32_t structure) {
  ellipsa_fit_options* raw = nullptr;
  EXPECT_EQ(ellipsa_fit_options_create(&raw, ELLIPSA_METHOD_MIXTURE), ELLIPSA_OK);
  capi_test::Options o(raw);
  EXPECT_EQ(ellipsa_fit_options_set_components(raw, 2, 2), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_restarts(raw, 2), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_structure(raw, structure), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_iterations(raw, 1000, 1e-12), ELLIPSA_OK);
  ellipsa_model* m = nullptr;
  MixtureFit f;
  f.status = fit_row_major(&m, f.message, x, n, p, raw);
  if (f.status != ELLIPSA_OK) return f;
  capi_test::Model model(m);
  const int32_t k_count = 2;
  f.weight.resize(k_count);
  f.location.resize(static_cast<size_t>(k_count * p));
  f.scatter.resize(static_cast<size_t>(k_count * p * p));
  for (int32_t k = 0; k < k_count; ++k)
    EXPECT_EQ(ellipsa_model_component(f.location.data() + k * p, p, f.scatter.data() + k * p * p, p * p,
                                      &f.weight[static_cast<size_t>(k)], m, k),
              ELLIPSA_OK);
  EXPECT_EQ(ellipsa_model_diagnostic(&f.log_likelihood, m, "log_likelihood"), ELLIPSA_OK);
  f.membership.resize(static_cast<size_t>(n * k_count));
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.membership = f.membership.data();
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  EXPECT_EQ(ellipsa_model_score(&s, m, &v, 0.975), ELLIPSA_OK) << ellipsa_last_error();
  return f;
}

bool all_finite(const std::vector<double>& v) {
  for (double a : v)
    if (!std::isfinite(a)) return false;
  return true;
}

// |a - b| <= tol * max(|b|, floor): relative, with floor for entries near 0
// (an off-diagonal that is 0 only by rounding); floor scales with the data.
void expect_close(const std::vector<double>& a, const std::vector<double>& b, double floor, const char* what) {
  ASSERT_EQ(a.size(), b.size());
  for (size_t i = 0; i < a.size(); ++i)
    EXPECT_LE(std::abs(a[i] - b[i]), kRelativeTolerance * std::max(std::abs(b[i]), floor))
        << what << "[" << i << "]: " << a[i] << " vs " << b[i];
}

const ellipsa_method kAllGaussian[] = {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS,
                                       ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD};

TEST(NumericalExtremes, ScaledBy1eMinus150And1ePlus150) {
  const int64_t n = 200, p = 4;
  const auto x = correlated(n, p, 7);
  for (ellipsa_method method : kAllGaussian) {
    const Fit base = fit(method, x, n, p);
    ASSERT_EQ(base.status, ELLIPSA_OK) << base.message;
    for (double c : {1e-150, 1e+150}) {
      SCOPED_TRACE(std::string(ellipsa_method_name(method)) + " c = " + std::to_string(std::log10(c)));
      std::vector<double> y(x);
      for (double& v : y) v *= c;
      const Fit f = fit(method, y, n, p);
      ASSERT_EQ(f.status, ELLIPSA_OK) << f.message;
      ASSERT_TRUE(all_finite(f.location) && all_finite(f.scatter) && all_finite(f.d2));
      std::vector<double> loc(base.location), sc(base.scatter);
      for (double& v : loc) v *= c;
      for (double& v : sc) v = v * c * c;
      expect_close(f.location, loc, c, "location");
      expect_close(f.scatter, sc, c * c, "scatter");
      expect_close(f.d2, base.d2, 1.0, "squared distance");
    }
  }
}

TEST(NumericalExtremes, ColumnScalesDifferingBy1e12) {
  const int64_t n = 200, p = 4;
  const auto x = correlated(n, p, 8);
  const double scale[p] = {1.0, 1e4, 1e-4, 1e8};  // largest / smallest = 1e12
  std::vector<double> y(x);
  for (int64_t i = 0; i < n; ++i)
    for (int64_t j = 0; j < p; ++j) y[static_cast<size_t>(i * p + j)] *= scale[j];
  struct Case {
    ellipsa_method method;
    int32_t structure;
  };
  for (const Case c :
       {Case{ELLIPSA_METHOD_CLASSICAL, 0}, Case{ELLIPSA_METHOD_MCD, 0}, Case{ELLIPSA_METHOD_DETMCD, 0}}) {
    SCOPED_TRACE(std::string(ellipsa_method_name(c.method)) + " structure " + std::to_string(c.structure));
    const Fit base = fit(c.method, x, n, p, c.structure);
    const Fit f = fit(c.method, y, n, p, c.structure);
    ASSERT_EQ(base.status, ELLIPSA_OK) << base.message;
    ASSERT_EQ(f.status, ELLIPSA_OK) << f.message;
    ASSERT_TRUE(all_finite(f.location) && all_finite(f.scatter) && all_finite(f.d2));
    expect_close(f.d2, base.d2, 1.0, "squared distance");
    for (int64_t j = 0; j < p; ++j) {
      EXPECT_NEAR(f.location[j] / scale[j], base.location[j],
                  kRelativeTolerance * std::max(1.0, std::abs(base.location[j])));
      for (int64_t k = 0; k < p; ++k) {
        const double want = base.scatter[j * p + k];
        EXPECT_NEAR(f.scatter[j * p + k] / (scale[j] * scale[k]), want,
                    kRelativeTolerance * std::max(1.0, std::abs(want)));
      }
    }
  }
  // Shrinkage is not equivariant under unequal column scales (it shrinks
  // towards a multiple of I), nor is the spherical mixture (one variance for
  // all columns); they must still succeed with finite results.
  for (ellipsa_method method : {ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS}) {
    const Fit f = fit(method, y, n, p);
    ASSERT_EQ(f.status, ELLIPSA_OK) << f.message;
    EXPECT_TRUE(all_finite(f.location) && all_finite(f.scatter) && all_finite(f.d2));
  }
  const MixtureFit spherical = fit_mixture(y, n, p, ELLIPSA_STRUCTURE_SPHERICAL);
  ASSERT_EQ(spherical.status, ELLIPSA_OK) << spherical.message;
  EXPECT_TRUE(all_finite(spherical.location) && all_finite(spherical.scatter) && all_finite(spherical.membership) &&
              std::isfinite(spherical.log_likelihood));
}

TEST(NumericalExtremes, MixturesEquivariantUnderColumnScales) {
  const int64_t n = 200, p = 4;
  const auto x = correlated(n, p, 8);
  const double scale[p] = {1.0, 1e4, 1e-4, 1e8};  // largest / smallest = 1e12
  std::vector<double> y(x);
  for (int64_t i = 0; i < n; ++i)
    for (int64_t j = 0; j < p; ++j) y[static_cast<size_t>(i * p + j)] *= scale[j];
  double log_det_d = 0.0;
  for (double s : scale) log_det_d += std::log(s);
  for (int32_t structure : {ELLIPSA_STRUCTURE_FULL, ELLIPSA_STRUCTURE_DIAGONAL, ELLIPSA_STRUCTURE_TIED}) {
    SCOPED_TRACE("structure " + std::to_string(structure));
    const MixtureFit base = fit_mixture(x, n, p, structure);
    const MixtureFit f = fit_mixture(y, n, p, structure);
    ASSERT_EQ(base.status, ELLIPSA_OK) << base.message;
    ASSERT_EQ(f.status, ELLIPSA_OK) << f.message;
    ASSERT_EQ(f.weight.size(), base.weight.size());
    expect_close(f.weight, base.weight, 1.0, "weight");
    expect_close(f.membership, base.membership, 1.0, "membership");
    const double shifted = base.log_likelihood - static_cast<double>(n) * log_det_d;
    EXPECT_NEAR(f.log_likelihood, shifted, kRelativeTolerance * std::abs(shifted));
    for (size_t k = 0; k < f.weight.size(); ++k)
      for (int64_t j = 0; j < p; ++j) {
        const double want_mean = base.location[k * p + j];
        EXPECT_NEAR(f.location[k * p + j] / scale[j], want_mean,
                    kRelativeTolerance * std::max(1.0, std::abs(want_mean)))
            << "component " << k << " mean " << j;
        for (int64_t l = 0; l < p; ++l) {
          const double want = base.scatter[(k * p + j) * p + l];
          EXPECT_NEAR(f.scatter[(k * p + j) * p + l] / (scale[j] * scale[l]), want,
                      kRelativeTolerance * std::max(1.0, std::abs(want)))
              << "component " << k << " covariance (" << j << ", " << l << ")";
        }
      }
  }
}

// The statuses a fit of awkward but valid data may return besides OK.
bool documented_numerical(ellipsa_status s) {
  return s == ELLIPSA_OK || s == ELLIPSA_ERR_DATA || s == ELLIPSA_NUM_SINGULAR || s == ELLIPSA_NUM_EXACT_FIT;
}

TEST(NumericalExtremes, NearDuplicateRows) {
  // Every row repeated 5 times, the copies moved by one or two units in the
  // last place: the data are not degenerate, the fits must succeed.
  const int64_t base_n = 60, p = 3, n = base_n * 5;
  const auto x = correlated(base_n, p, 9);
  std::vector<double> y;
  for (int64_t i = 0; i < base_n; ++i)
    for (int r = 0; r < 5; ++r)
      for (int64_t j = 0; j < p; ++j) {
        double v = x[static_cast<size_t>(i * p + j)];
        for (int k = 0; k < r % 3; ++k) v = std::nextafter(v, INFINITY);
        y.push_back(v);
      }
  for (ellipsa_method method : kAllGaussian) {
    SCOPED_TRACE(ellipsa_method_name(method));
    const Fit f = fit(method, y, n, p);
    ASSERT_EQ(f.status, ELLIPSA_OK) << f.message;
    EXPECT_TRUE(all_finite(f.location) && all_finite(f.scatter) && all_finite(f.d2));
  }
  const Fit m = fit(ELLIPSA_METHOD_MIXTURE, y, n, p);
  EXPECT_TRUE(documented_numerical(m.status)) << m.message;
  if (m.status == ELLIPSA_OK) EXPECT_TRUE(all_finite(m.location) && all_finite(m.scatter) && all_finite(m.d2));
}

TEST(NumericalExtremes, ExactTiesInTheOrderStatistics) {
  // Integer readings from a gauge with few levels: medians, MADs and the h-th
  // smallest distances tie exactly. Either a finite fit or a documented status
  // with a message (an exact fit when h rows share a hyperplane).
  const int64_t n = 120, p = 3;
  std::mt19937_64 g(10);
  for (int levels : {2, 3, 5, 50}) {
    SCOPED_TRACE("levels " + std::to_string(levels));
    std::vector<double> y(static_cast<size_t>(n * p));
    for (double& v : y) v = static_cast<double>(g() % static_cast<uint64_t>(levels));
    for (ellipsa_method method : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_MCD,
                                  ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MIXTURE}) {
      SCOPED_TRACE(ellipsa_method_name(method));
      const Fit f = fit(method, y, n, p);
      EXPECT_TRUE(documented_numerical(f.status)) << ellipsa_status_string(f.status) << ": " << f.message;
      if (f.status == ELLIPSA_OK) {
        EXPECT_TRUE(all_finite(f.location) && all_finite(f.scatter) && all_finite(f.d2));
      } else {
        EXPECT_EQ(f.message.rfind("ellipsa_model_fit: ", 0), 0u) << f.message;
      }
      // Ties must not make the fit depend on anything but the data and seed.
      const Fit again = fit(method, y, n, p);
      EXPECT_EQ(again.status, f.status);
      EXPECT_EQ(again.d2, f.d2);
    }
  }
}

// Finite values whose differences leave the range of double (about 1.8e308):
// six shots at 1e308 and four at -1e308 in the first column. The robust
// methods standardise by the median and MAD, where 1e308 - (-1e308) overflows;
// found by fuzz_fit_score (OpenBLAS reported an illegal DSYRK argument from an
// exact fit on zero rows). Now a data error naming the column.
TEST(NumericalExtremes, SpreadBeyondDoublePrecisionIsADataErrorNamingTheColumn) {
  const int64_t n = 10, p = 2;
  std::vector<double> y(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i) {
    y[static_cast<size_t>(i * p)] = i < 6 ? 1e308 : -1e308;
    y[static_cast<size_t>(i * p + 1)] = static_cast<double>((i * 7) % 10);
  }
  for (ellipsa_method method : {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD}) {
    SCOPED_TRACE(ellipsa_method_name(method));
    const Fit f = fit(method, y, n, p);
    EXPECT_EQ(f.status, ELLIPSA_ERR_DATA);
    EXPECT_NE(f.message.find("column \"x1\""), std::string::npos) << f.message;  // default names x1, x2
    EXPECT_NE(f.message.find("overflows double precision"), std::string::npos) << f.message;
  }
  // Five of each: the median is 0 (not an overflowing midpoint) and the
  // standardised column is +-0.674, but the variance in the data's units
  // (about 1e616) cannot be represented: the scatter is refused, naming the
  // column, rather than returned with infinities.
  for (int64_t i = 0; i < n; ++i) y[static_cast<size_t>(i * p)] = i % 2 ? 1e308 : -1e308;
  const Fit wide = fit(ELLIPSA_METHOD_MCD, y, n, p);
  EXPECT_EQ(wide.status, ELLIPSA_ERR_DATA);
  EXPECT_NE(wide.message.find("scatter: column \"x1\" has a variance that overflows"), std::string::npos)
      << wide.message;
}

// A new row far beyond the bulk: its squared distance overflows double
// precision. The header (ellipsa_scores.squared_distance) promises +inf, a
// p-value of 0 and a flag, never NaN.
TEST(NumericalExtremes, DistanceBeyondDoublePrecisionIsInfiniteAndFlagged) {
  const int64_t n = 40, p = 2;
  const std::vector<double> x = correlated(n, p, 21);
  ellipsa_fit_options* raw = nullptr;
  ASSERT_EQ(ellipsa_fit_options_create(&raw, ELLIPSA_METHOD_CLASSICAL), ELLIPSA_OK);
  capi_test::Options o(raw);
  ellipsa_model* m = nullptr;
  std::string message;
  ASSERT_EQ(fit_row_major(&m, message, x, n, p, raw), ELLIPSA_OK) << message;
  capi_test::Model model(m);
  const double far[2] = {1e200, 0.5};  // (1e200)^2 / variance of order 1 overflows
  const ellipsa_matrix row = ellipsa_matrix_row_major(far, 1, p);
  double d2 = 0.0, pv = -1.0;
  int32_t flag = -2;
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = &d2;
  s.p_value = &pv;
  s.flag = &flag;
  ASSERT_EQ(ellipsa_model_score(&s, m, &row, 0.975), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_TRUE(std::isinf(d2) && d2 > 0.0) << d2;
  EXPECT_EQ(pv, 0.0);
  EXPECT_EQ(flag, 1);
}

}  // namespace
