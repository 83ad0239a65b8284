// Contract of ellipsa_model_fit and the fit options: every status path, the
// missing-value policy, and strided views.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {
std::string last() { return ellipsa_last_error(); }
bool mentions(const std::string& what) { return last().find(what) != std::string::npos; }
}  // namespace

TEST(FitOptions, CreateAndSettersCheckTheirArguments) {
  ellipsa_fit_options* o = nullptr;
  EXPECT_EQ(ellipsa_fit_options_create(nullptr, ELLIPSA_METHOD_MCD), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_fit_options_create(&o, 99), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(o, nullptr);
  ASSERT_EQ(ellipsa_fit_options_create(&o, ELLIPSA_METHOD_MIXTURE), ELLIPSA_OK);
  Options guard(o);
  // Settings a method does not use are refused and the message names the
  // methods they apply to.
  auto classical = options(ELLIPSA_METHOD_CLASSICAL);
  EXPECT_EQ(ellipsa_fit_options_set_components(classical.get(), 2, 2), ELLIPSA_ERR_ARGUMENT);
  EXPECT_TRUE(mentions("applies to mixture")) << last();
  auto det = options(ELLIPSA_METHOD_DETMCD);
  EXPECT_EQ(ellipsa_fit_options_set_seed(det.get(), 3), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_alpha(det.get(), 0.75), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_divisor(det.get(), ELLIPSA_DIVISOR_N), ELLIPSA_ERR_ARGUMENT);
  auto mcd = options(ELLIPSA_METHOD_MCD);
  EXPECT_EQ(ellipsa_fit_options_set_alpha(mcd.get(), 0.49), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_alpha(mcd.get(), std::nan("")), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_alpha(mcd.get(), 0.75), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_alpha(nullptr, 0.75), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_fit_options_set_divisor(classical.get(), 3), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_missing(mcd.get(), ELLIPSA_MISSING_EM), ELLIPSA_ERR_ARGUMENT);  // mixtures only
  EXPECT_EQ(ellipsa_fit_options_set_missing(o, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_components(o, 0, 3), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_components(o, 3, 2), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_structure(o, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_restarts(o, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_iterations(o, 0, 1e-8), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_iterations(o, 10, -1.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_regularisation(o, -1.0), ELLIPSA_ERR_ARGUMENT);
  const char* names[] = {"a", nullptr};
  EXPECT_EQ(ellipsa_fit_options_set_column_names(o, names, 2), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_fit_options_set_column_names(o, names, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_column_names(o, nullptr, 1), ELLIPSA_ERR_NULL);
  ellipsa_fit_options_destroy(nullptr);  // a no-op
}

TEST(FitOptions, MethodNamesRoundTrip) {
  for (ellipsa_method m = ELLIPSA_METHOD_CLASSICAL; m <= ELLIPSA_METHOD_MIXTURE; ++m) {
    ellipsa_method back = 0;
    ASSERT_EQ(ellipsa_method_from_name(&back, ellipsa_method_name(m)), ELLIPSA_OK);
    EXPECT_EQ(back, m);
  }
  ellipsa_method back = 0;
  EXPECT_EQ(ellipsa_method_from_name(&back, "kmeans"), ELLIPSA_ERR_ARGUMENT);
  EXPECT_TRUE(mentions("kmeans"));
  EXPECT_STREQ(ellipsa_method_name(0), "unknown");
}

TEST(Fit, NullAndShapeMisuse) {
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  std::vector<double> x = correlated_rows(20, 3, 1);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 20, 3);
  ellipsa_model* m = reinterpret_cast<ellipsa_model*>(0x1);
  EXPECT_EQ(ellipsa_model_fit(&m, nullptr, o.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(m, nullptr);  // set to NULL on failure
  EXPECT_EQ(ellipsa_model_fit(nullptr, &v, o.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_fit(&m, &v, nullptr), ELLIPSA_ERR_NULL);
  ellipsa_matrix bad = v;
  bad.rows = -1;
  EXPECT_EQ(ellipsa_model_fit(&m, &bad, o.get()), ELLIPSA_ERR_SHAPE);
  bad = v;
  bad.col_stride = -1;
  EXPECT_EQ(ellipsa_model_fit(&m, &bad, o.get()), ELLIPSA_ERR_SHAPE);
  bad = v;
  bad.data = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&m, &bad, o.get()), ELLIPSA_ERR_NULL);
  bad = v;
  bad.cols = 0;
  EXPECT_EQ(ellipsa_model_fit(&m, &bad, o.get()), ELLIPSA_ERR_SHAPE);
  bad = v;
  bad.rows = std::numeric_limits<int64_t>::max() / 2;  // extent overflows
  EXPECT_EQ(ellipsa_model_fit(&m, &bad, o.get()), ELLIPSA_ERR_SHAPE);
  const char* two[] = {"a", "b"};
  ASSERT_EQ(ellipsa_fit_options_set_column_names(o.get(), two, 2), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_ERR_SHAPE);
  EXPECT_TRUE(mentions("2 column names given for 3 data columns")) << last();
}

TEST(Fit, DataProblemsGetAStatusAndAMessageNamingTheColumn) {
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  const char* names[] = {"melt", "pressure", "mass"};
  ASSERT_EQ(ellipsa_fit_options_set_column_names(o.get(), names, 3), ELLIPSA_OK);
  ellipsa_model* m = nullptr;

  // One buffer, refilled for each case, so the view stays valid.
  std::vector<double> x(90);
  const auto refill = [&](uint64_t seed) {
    const auto fresh = correlated_rows(30, 3, seed);
    std::copy(fresh.begin(), fresh.end(), x.begin());
  };
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 30, 3);
  refill(2);
  for (int i = 0; i < 30; ++i) x[static_cast<size_t>(i * 3 + 1)] = 5.0;  // constant pressure
  EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_ERR_DATA);
  EXPECT_TRUE(mentions("constant")) << last();

  refill(3);
  x[4 * 3 + 2] = INFINITY;
  EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_ERR_DATA);
  EXPECT_TRUE(mentions("nfinite") || mentions("non-finite")) << last();

  refill(4);
  for (int i = 0; i < 30; ++i) x[static_cast<size_t>(i * 3)] = std::nan("");
  EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_ERR_DATA);
  EXPECT_TRUE(mentions("\"melt\" has no value in any row")) << last();

  // Collinear columns: mass = melt + pressure exactly.
  refill(5);
  for (int i = 0; i < 30; ++i)
    x[static_cast<size_t>(i * 3 + 2)] = x[static_cast<size_t>(i * 3)] + x[static_cast<size_t>(i * 3 + 1)];
  const ellipsa_status s = ellipsa_model_fit(&m, &v, o.get());
  EXPECT_EQ(s, ELLIPSA_NUM_SINGULAR) << ellipsa_status_string(s) << ": " << last();
  EXPECT_TRUE(mentions("collinear")) << last();
  EXPECT_TRUE(mentions("ledoit-wolf")) << last();
  EXPECT_EQ(m, nullptr);
}

TEST(Fit, MoreColumnsThanRowsPointsToShrinkageWhichWorks) {
  std::vector<double> x = correlated_rows(8, 12, 6);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 8, 12);
  auto classical = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&m, &v, classical.get()), ELLIPSA_ERR_DATA);
  EXPECT_TRUE(mentions("shrinkage")) << last();
  for (ellipsa_method method : {ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS}) {
    auto o = options(method);
    ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK) << last();
    Model guard(m);
    double intensity = -1.0;
    ASSERT_EQ(ellipsa_model_diagnostic(&intensity, m, "shrinkage_intensity"), ELLIPSA_OK);
    EXPECT_GT(intensity, 0.0);
    EXPECT_LE(intensity, 1.0);
  }
}

TEST(Fit, RowsWithMissingValuesAreDroppedAndCountedOrRefused) {
  std::vector<double> x = correlated_rows(40, 3, 7);
  x[5 * 3 + 1] = std::nan("");
  x[17 * 3 + 0] = std::nan("");
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 40, 3);
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* m = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK) << last();
  Model guard(m);
  int64_t used = 0, dropped = 0;
  ASSERT_EQ(ellipsa_model_rows(&used, &dropped, m), ELLIPSA_OK);
  EXPECT_EQ(used, 38);
  EXPECT_EQ(dropped, 2);
  int64_t rows[4] = {0, 0, 0, 0}, count = 0;
  ASSERT_EQ(ellipsa_model_row_set(rows, 4, &count, m, ELLIPSA_ROWS_DROPPED), ELLIPSA_OK);
  ASSERT_EQ(count, 2);
  EXPECT_EQ(rows[0], 5);
  EXPECT_EQ(rows[1], 17);
  EXPECT_EQ(ellipsa_model_row_set(rows, 1, &count, m, ELLIPSA_ROWS_DROPPED), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_model_row_set(rows, 4, &count, m, ELLIPSA_ROWS_H_SUBSET), ELLIPSA_ERR_STATE);

  ASSERT_EQ(ellipsa_fit_options_set_missing(o.get(), ELLIPSA_MISSING_REFUSE), ELLIPSA_OK);
  ellipsa_model* refused = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&refused, &v, o.get()), ELLIPSA_ERR_DATA);
  EXPECT_EQ(refused, nullptr);
}

TEST(Fit, RowMajorColumnMajorAndSlicedViewsGiveIdenticalModels) {
  const int64_t n = 57, p = 4;
  std::vector<double> rm = correlated_rows(n, p, 8, 1000.0);
  std::vector<double> cm(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i)
    for (int64_t j = 0; j < p; ++j) cm[static_cast<size_t>(j * n + i)] = rm[static_cast<size_t>(i * p + j)];
  // A slice: every other row of a wider buffer with two padding columns.
  const int64_t wide = p + 2;
  std::vector<double> big(static_cast<size_t>(2 * n * wide), -9.0);
  for (int64_t i = 0; i < n; ++i)
    for (int64_t j = 0; j < p; ++j)
      big[static_cast<size_t>((2 * i) * wide + 1 + j)] = rm[static_cast<size_t>(i * p + j)];
  const ellipsa_matrix views[] = {ellipsa_matrix_row_major(rm.data(), n, p),
                                  ellipsa_matrix_col_major(cm.data(), n, p),
                                  {big.data() + 1, n, p, 2 * wide, 1}};
  for (ellipsa_method method : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_MCD,
                                ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MIXTURE}) {
    auto o = options(method);
    if (method == ELLIPSA_METHOD_MCD || method == ELLIPSA_METHOD_MIXTURE)
      ASSERT_EQ(ellipsa_fit_options_set_seed(o.get(), 11), ELLIPSA_OK);
    std::vector<std::vector<double>> results;
    for (const auto& v : views) {
      ellipsa_model* m = nullptr;
      ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK) << ellipsa_method_name(method) << ": " << last();
      Model guard(m);
      std::vector<double> loc(p), sc(p * p);
      ASSERT_EQ(ellipsa_model_component(loc.data(), p, sc.data(), p * p, nullptr, m, 0), ELLIPSA_OK);
      loc.insert(loc.end(), sc.begin(), sc.end());
      results.push_back(loc);
    }
    EXPECT_EQ(results[0], results[1]) << ellipsa_method_name(method);  // bit-identical
    EXPECT_EQ(results[0], results[2]) << ellipsa_method_name(method);
  }
}

TEST(Fit, ProgressCallbackCanCancel) {
  std::vector<double> x = correlated_rows(200, 3, 9);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 200, 3);
  auto o = options(ELLIPSA_METHOD_MCD);
  int calls = 0;
  ASSERT_EQ(
      ellipsa_fit_options_set_progress(
          o.get(), [](const char*, double, void* user) { return ++*static_cast<int*>(user) >= 2 ? 1 : 0; }, &calls),
      ELLIPSA_OK);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_ERR_CANCELLED);
  EXPECT_EQ(m, nullptr);
  EXPECT_GE(calls, 2);
}

TEST(Fit, ExactFitIsReportedWithTheHyperplane) {
  // 30 rows, 24 of them on the plane z = x + 2y + 1: more than h = 17 rows.
  std::vector<double> x = correlated_rows(30, 3, 10);
  for (int i = 0; i < 24; ++i)
    x[static_cast<size_t>(i * 3 + 2)] = x[static_cast<size_t>(i * 3)] + 2 * x[static_cast<size_t>(i * 3 + 1)] + 1;
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 30, 3);
  for (ellipsa_method method : {ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD}) {
    auto o = options(method);
    ellipsa_model* m = nullptr;
    EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_NUM_EXACT_FIT)
        << ellipsa_method_name(method) << ": " << last();
    EXPECT_TRUE(mentions("rows lie on the hyperplane")) << last();
    EXPECT_TRUE(mentions("24 of 30")) << last();
    EXPECT_EQ(m, nullptr);
  }
}
