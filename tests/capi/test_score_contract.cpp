// Contract of ellipsa_model_score and the model queries.
#include <gtest/gtest.h>

#include <cmath>
#include <numeric>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {
Model fit(ellipsa_method method, const std::vector<double>& x, int64_t n, int64_t p, uint64_t seed = 1) {
  auto o = options(method);
  if (method == ELLIPSA_METHOD_MCD || method == ELLIPSA_METHOD_MIXTURE)
    EXPECT_EQ(ellipsa_fit_options_set_seed(o.get(), seed), ELLIPSA_OK);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  return Model(m);
}
}  // namespace

TEST(Score, MisuseIsReported) {
  const auto x = correlated_rows(50, 3, 1);
  auto m = fit(ELLIPSA_METHOD_CLASSICAL, x, 50, 3);
  std::vector<double> d2(50);
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = d2.data();
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 50, 3);
  EXPECT_EQ(ellipsa_model_score(nullptr, m.get(), &v, 0.975), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_score(&s, nullptr, &v, 0.975), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), nullptr, 0.975), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), &v, 1.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), &v, std::nan("")), ELLIPSA_ERR_ARGUMENT);
  ellipsa_matrix narrow = ellipsa_matrix_row_major(x.data(), 25, 2);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), &narrow, 0.975), ELLIPSA_ERR_SHAPE);
  ellipsa_scores old = s;
  old.struct_size = 8;
  EXPECT_EQ(ellipsa_model_score(&old, m.get(), &v, 0.975), ELLIPSA_ERR_SHAPE);
  std::vector<double> bad(x);
  bad[7] = -INFINITY;
  ellipsa_matrix vb = ellipsa_matrix_row_major(bad.data(), 50, 3);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), &vb, 0.975), ELLIPSA_ERR_DATA);
}

TEST(Score, FittingRowsOfTheUnbiasedClassicalFitSumToPTimesNMinusOne) {
  // Property of the sample covariance (divisor n-1): sum_i d2_i = p (n - 1)
  // (trace identity; common practice, no published source needed).
  const int64_t n = 73, p = 5;
  const auto x = correlated_rows(n, p, 2, 1e6);
  auto m = fit(ELLIPSA_METHOD_CLASSICAL, x, n, p);
  ScoreBuffers b(n, p);
  const auto &d2 = b.d2, &pv = b.p_value, &contrib = b.contribution, &drop = b.conditional_drop;
  const auto &flag = b.flag, &observed = b.observed;
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  // The chi-square reference on request (the model's default, new rows, is
  // checked in test_score_reference.cpp).
  ASSERT_EQ(ellipsa_model_score_v2(&b.scores, m.get(), &v, 0.975, ELLIPSA_REFERENCE_CHI2), ELLIPSA_OK);
  EXPECT_NEAR(std::accumulate(d2.begin(), d2.end(), 0.0), double(p * (n - 1)), 1e-8 * p * n);
  double cutoff = 0.0;
  ASSERT_EQ(ellipsa_chi2_quantile(&cutoff, 0.975, double(p)), ELLIPSA_OK);
  for (int64_t i = 0; i < n; ++i) {
    double sum = 0.0;
    for (int64_t j = 0; j < p; ++j) {
      sum += contrib[i * p + j];
      EXPECT_GE(drop[i * p + j], -1e-9);  // leaving a variable out never raises d2
      EXPECT_LE(drop[i * p + j], d2[i] + 1e-9);
    }
    EXPECT_NEAR(sum, d2[i], 1e-9 * (1 + d2[i]));
    EXPECT_EQ(observed[i], p);
    EXPECT_EQ(flag[i], d2[i] > cutoff ? 1 : 0);
    double tail = 0.0;
    ASSERT_EQ(ellipsa_chi2_tail(&tail, d2[i], double(p)), ELLIPSA_OK);
    EXPECT_DOUBLE_EQ(pv[i], tail);
  }
}

TEST(Score, MissingCoordinatesAreScoredOnTheObservedOnes) {
  const int64_t n = 60, p = 3;
  const auto x = correlated_rows(n, p, 3);
  auto m = fit(ELLIPSA_METHOD_CLASSICAL, x, n, p);
  std::vector<double> rows = {x[0], std::nan(""), x[2], std::nan(""), std::nan(""), std::nan("")};
  std::vector<double> d2(2), logd(2);
  std::vector<int32_t> flag(2), observed(2);
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = d2.data();
  s.flag = flag.data();
  s.observed = observed.data();
  s.log_density = logd.data();
  ellipsa_matrix v = ellipsa_matrix_row_major(rows.data(), 2, p);
  ASSERT_EQ(ellipsa_model_score(&s, m.get(), &v, 0.975), ELLIPSA_OK);
  EXPECT_EQ(observed[0], 2);
  EXPECT_EQ(observed[1], 0);
  EXPECT_EQ(flag[1], -1);
  EXPECT_TRUE(std::isnan(d2[1]));
  // The marginal distance on columns 0 and 2 from the model's own location and
  // scatter, by the explicit 2x2 formula.
  std::vector<double> loc(3), sc(9);
  ASSERT_EQ(ellipsa_model_component(loc.data(), 3, sc.data(), 9, nullptr, m.get(), 0), ELLIPSA_OK);
  const double a = sc[0], b = sc[2], c = sc[8];
  const double u = x[0] - loc[0], w = x[2] - loc[2];
  const double det = a * c - b * b;
  const double expected = (c * u * u - 2 * b * u * w + a * w * w) / det;
  EXPECT_NEAR(d2[0], expected, 1e-10 * (1 + expected));
  EXPECT_NEAR(logd[0], -0.5 * (2 * std::log(2 * M_PI) + std::log(det) + expected), 1e-10);
}

TEST(ModelQueries, ReportWhatTheFitHolds) {
  const auto x = correlated_rows(80, 3, 4);
  auto m = fit(ELLIPSA_METHOD_MCD, x, 80, 3, 5);
  int32_t kind = 0, components = 0;
  ellipsa_method method = 0;
  int64_t p = 0;
  ASSERT_EQ(ellipsa_model_describe(&kind, &method, &p, &components, m.get()), ELLIPSA_OK);
  EXPECT_EQ(kind, ELLIPSA_KIND_GAUSSIAN);
  EXPECT_EQ(method, ELLIPSA_METHOD_MCD);
  EXPECT_EQ(p, 3);
  EXPECT_EQ(components, 1);
  double h = 0.0;
  ASSERT_EQ(ellipsa_model_diagnostic(&h, m.get(), "h"), ELLIPSA_OK);
  EXPECT_EQ(h, 42.0);  // floor((80 + 3 + 1) / 2), METHODS: default h
  int64_t count = 0;
  ASSERT_EQ(ellipsa_model_row_set(nullptr, 0, &count, m.get(), ELLIPSA_ROWS_H_SUBSET), ELLIPSA_OK);
  EXPECT_EQ(count, 42);
  double v = 0.0;
  EXPECT_EQ(ellipsa_model_diagnostic(&v, m.get(), "bic"), ELLIPSA_ERR_STATE);
  EXPECT_EQ(ellipsa_model_diagnostic(&v, m.get(), "no_such_thing"), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_diagnostic(nullptr, m.get(), "h"), ELLIPSA_ERR_NULL);
  const char* name = nullptr;
  ASSERT_EQ(ellipsa_model_column_name(&name, m.get(), 2), ELLIPSA_OK);
  EXPECT_STREQ(name, "x3");
  EXPECT_EQ(ellipsa_model_column_name(&name, m.get(), 3), ELLIPSA_ERR_ARGUMENT);
  std::vector<double> loc(3), sc(9);
  EXPECT_EQ(ellipsa_model_component(loc.data(), 2, nullptr, 0, nullptr, m.get(), 0), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_model_component(loc.data(), 3, sc.data(), 9, nullptr, m.get(), 1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_raw_estimate(loc.data(), 3, sc.data(), 9, m.get()), ELLIPSA_OK);
  ellipsa_candidate table[1];
  table[0].struct_size = sizeof(ellipsa_candidate);
  EXPECT_EQ(ellipsa_model_selection(table, 1, &count, m.get()), ELLIPSA_ERR_STATE);
  ellipsa_model_destroy(nullptr);  // a no-op
}
