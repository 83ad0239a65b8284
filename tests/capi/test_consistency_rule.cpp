// The consistency rule of the MCD fits (ellipsa_fit_options_set_consistency):
// every status, the defining property of the median rule of Rousseeuw & Van
// Driessen (1999) checked with distances computed here (not by the library),
// the unchanged h-subset, the published outliers of the Hawkins-Bradu-Kass
// data, and the model file; and MRCD's median calibration, whose stored
// outliers must be the rows scoring flags. Through ellipsa.h only.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {

// qchisq(0.5, 3) from base R 4.2 (R's qchisq, run here): the chi-square median
// with 3 degrees of freedom.
constexpr double kChi2Median3 = 2.36597388437534;

// The Hawkins, Bradu & Kass (1984) data, explanatory variables X1-X3 (75 x 3).
std::vector<double> hbk(int64_t* n) {
  return read_columns(std::string(ELLIPSA_REFERENCE_DIR) + "/robust/hbk.csv", {"X1", "X2", "X3"}, n);
}

Model fit_with(ellipsa_method method, const std::vector<double>& x, int64_t n, int64_t p, int32_t rule) {
  auto o = options(method);
  EXPECT_EQ(ellipsa_fit_options_set_consistency(o.get(), rule), ELLIPSA_OK) << ellipsa_last_error();
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* raw = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  return Model(raw);
}

// Squared Mahalanobis distances of every row to (mu, s) by a Cholesky
// factorisation written here, independent of the library's scoring.
std::vector<double> distances(const std::vector<double>& x, int64_t n, int64_t p, const std::vector<double>& mu,
                              const std::vector<double>& s) {
  std::vector<double> l(p * p, 0.0);
  for (int64_t j = 0; j < p; ++j) {
    double d = s[j * p + j];
    for (int64_t k = 0; k < j; ++k) d -= l[j * p + k] * l[j * p + k];
    l[j * p + j] = std::sqrt(d);
    for (int64_t i = j + 1; i < p; ++i) {
      double v = s[i * p + j];
      for (int64_t k = 0; k < j; ++k) v -= l[i * p + k] * l[j * p + k];
      l[i * p + j] = v / l[j * p + j];
    }
  }
  std::vector<double> d2(n), y(p);
  for (int64_t r = 0; r < n; ++r) {
    double sum = 0.0;
    for (int64_t i = 0; i < p; ++i) {
      double v = x[r * p + i] - mu[i];
      for (int64_t k = 0; k < i; ++k) v -= l[i * p + k] * y[k];
      y[i] = v / l[i * p + i];
      sum += y[i] * y[i];
    }
    d2[r] = sum;
  }
  return d2;
}

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const size_t n = v.size();
  return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

}  // namespace

TEST(ConsistencyRule, StatusesAndTheMethodsThatTakeIt) {
  for (ellipsa_method method : {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD}) {
    auto o = options(method);
    EXPECT_EQ(ellipsa_fit_options_set_consistency(o.get(), ELLIPSA_CONSISTENCY_MEDIAN), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_fit_options_set_consistency(o.get(), ELLIPSA_CONSISTENCY_NORMAL), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_fit_options_set_consistency(o.get(), 2), ELLIPSA_ERR_ARGUMENT);
    EXPECT_NE(std::string(ellipsa_last_error()).find("ELLIPSA_CONSISTENCY_MEDIAN"), std::string::npos)
        << ellipsa_last_error();
    EXPECT_EQ(ellipsa_fit_options_set_consistency(o.get(), -1), ELLIPSA_ERR_ARGUMENT);
  }
  for (ellipsa_method method :
       {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_MRCD, ELLIPSA_METHOD_MIXTURE}) {
    auto o = options(method);
    EXPECT_EQ(ellipsa_fit_options_set_consistency(o.get(), ELLIPSA_CONSISTENCY_MEDIAN), ELLIPSA_ERR_ARGUMENT)
        << ellipsa_method_name(method);
  }
  EXPECT_EQ(ellipsa_fit_options_set_consistency(nullptr, ELLIPSA_CONSISTENCY_MEDIAN), ELLIPSA_ERR_NULL);
}

TEST(ConsistencyRule, MedianRulePutsHalfOfTheRowsInsideTheChiSquareMedian) {
  int64_t n = 0;
  const int64_t p = 3;
  const auto x = hbk(&n);
  ASSERT_EQ(n, 75);
  for (ellipsa_method method : {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD}) {
    const Model normal = fit_with(method, x, n, p, ELLIPSA_CONSISTENCY_NORMAL);
    const Model med = fit_with(method, x, n, p, ELLIPSA_CONSISTENCY_MEDIAN);
    EXPECT_EQ(diagnostic(normal.get(), "consistency_rule"), ELLIPSA_CONSISTENCY_NORMAL);
    EXPECT_EQ(diagnostic(med.get(), "consistency_rule"), ELLIPSA_CONSISTENCY_MEDIAN);
    EXPECT_EQ(diagnostic(med.get(), "small_sample_raw"), 1.0);  // the header: not applied under the median rule
    std::vector<double> mu(p), s(p * p), mu_n(p), s_n(p * p);
    ASSERT_EQ(ellipsa_model_raw_estimate(mu.data(), p, s.data(), p * p, med.get()), ELLIPSA_OK);
    ASSERT_EQ(ellipsa_model_raw_estimate(mu_n.data(), p, s_n.data(), p * p, normal.get()), ELLIPSA_OK);
    // Rousseeuw & Van Driessen (1999), the defining property: with the rescaled
    // raw scatter, the median squared distance of all rows is chi2_p(0.5).
    EXPECT_NEAR(median(distances(x, n, p, mu, s)), kChi2Median3, 1e-9 * kChi2Median3) << ellipsa_method_name(method);
    // The h-subset does not depend on the rule: same raw location, and the two
    // raw scatters differ by the ratio of the reported factors.
    const double ratio = diagnostic(med.get(), "consistency_factor") / (diagnostic(normal.get(), "consistency_factor") *
                                                                        diagnostic(normal.get(), "small_sample_raw"));
    for (int64_t j = 0; j < p; ++j) EXPECT_DOUBLE_EQ(mu[j], mu_n[j]);
    for (int64_t k = 0; k < p * p; ++k) EXPECT_NEAR(s[k], ratio * s_n[k], 1e-12 * std::abs(s[k]) + 1e-15);
    // Hawkins, Bradu & Kass (1984): rows 1-14 are the planted outliers (1-10
    // bad, 11-14 good leverage points); the median rule flags all of them.
    ScoreBuffers b(n, p);
    ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
    ASSERT_EQ(ellipsa_model_score_v2(&b.scores, med.get(), &v, 0.975, ELLIPSA_REFERENCE_CHI2), ELLIPSA_OK)
        << ellipsa_last_error();
    for (int64_t i = 0; i < 14; ++i) EXPECT_EQ(b.flag[i], 1) << "row " << i + 1;
  }
}

TEST(ConsistencyRule, TheRuleSurvivesTheModelFileAndOldFilesReadAsNormal) {
  int64_t n = 0;
  const int64_t p = 3;
  const auto x = hbk(&n);
  const Model med = fit_with(ELLIPSA_METHOD_MCD, x, n, p, ELLIPSA_CONSISTENCY_MEDIAN);
  const std::string text = save(med.get());
  ASSERT_NE(text.find("\"consistency_rule\": \"median\""), std::string::npos) << text;
  Model back;
  ASSERT_EQ(load(text, &back), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(diagnostic(back.get(), "consistency_rule"), ELLIPSA_CONSISTENCY_MEDIAN);
  EXPECT_EQ(diagnostic(back.get(), "consistency_factor"), diagnostic(med.get(), "consistency_factor"));
  // "normal" spelled out, and a file without the key (written before the
  // rule existed), read as the normal rule.
  const std::string key = "\"consistency_rule\": \"median\"";
  const auto at = text.find(key);
  std::string spelled = text;
  spelled.replace(at, key.size(), "\"consistency_rule\": \"normal\"");
  ASSERT_EQ(load(spelled, &back), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(diagnostic(back.get(), "consistency_rule"), ELLIPSA_CONSISTENCY_NORMAL);
  std::string old = text;
  const auto comma = old.rfind(',', at);  // the member before it ends with a comma
  old.erase(comma, at + key.size() - comma);
  ASSERT_EQ(old.find("consistency_rule"), std::string::npos);
  ASSERT_EQ(load(old, &back), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(diagnostic(back.get(), "consistency_rule"), ELLIPSA_CONSISTENCY_NORMAL);
  const Model normal = fit_with(ELLIPSA_METHOD_MCD, x, n, p, ELLIPSA_CONSISTENCY_NORMAL);
  EXPECT_EQ(save(normal.get()).find("consistency_rule"), std::string::npos);
  std::string bad = text;
  bad.replace(at, key.size(), "\"consistency_rule\": \"mean\"");
  EXPECT_EQ(load(bad, &back), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("consistency_rule"), std::string::npos) << ellipsa_last_error();
}

// MRCD's median calibration lives in the core, once: the rows the fit stores
// as outliers are exactly the rows that scoring the fitting data against the
// chi-square flags, for an even and an odd number of rows (with an even n the
// median is the mean of the two middle distances; a second median elsewhere
// made the two disagree). The median squared distance is chi2q(p, 0.5), taken
// here with R's qchisq: qchisq(0.5, 30) = 29.3360315167 (base R, run here).
// The planted row is shifted by 12 in every column: at 6, with p = 30 > n = 20,
// whether the best subset held it changed with OpenBLAS's thread count
// (rounding; its squared distance 31.7 against the cutoff 47.0 at one thread).
TEST(MrcdCalibration, StoredOutliersAreTheRowsScoringFlags) {
  for (int64_t n : {20, 21}) {
    const int64_t p = 30;
    std::vector<double> x = correlated_rows(n, p, 31);
    for (int64_t j = 0; j < p; ++j) x[0 * p + j] += 12.0;  // one planted outlier, row 0
    auto o = options(ELLIPSA_METHOD_MRCD);
    ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
    ellipsa_model* raw = nullptr;
    ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
    const Model m(raw);
    int64_t count = 0;
    ASSERT_EQ(ellipsa_model_row_set(nullptr, 0, &count, m.get(), ELLIPSA_ROWS_OUTLIERS), ELLIPSA_OK);
    std::vector<int64_t> stored(static_cast<size_t>(count));
    ASSERT_EQ(ellipsa_model_row_set(stored.data(), count, &count, m.get(), ELLIPSA_ROWS_OUTLIERS), ELLIPSA_OK);
    ScoreBuffers b(n, p);
    ASSERT_EQ(ellipsa_model_score_v2(&b.scores, m.get(), &v, 0.975, ELLIPSA_REFERENCE_CHI2), ELLIPSA_OK)
        << ellipsa_last_error();
    std::vector<int64_t> scored;
    for (int64_t i = 0; i < n; ++i)
      if (b.flag[i]) scored.push_back(i);
    EXPECT_EQ(stored, scored) << "n = " << n;
    EXPECT_EQ(std::count(scored.begin(), scored.end(), 0), 1)
        << "the planted row is flagged, n = " << n << ", its squared distance " << b.d2[0];
    EXPECT_NEAR(median(b.d2), 29.3360315167, 1e-8) << "n = " << n;
  }
}
