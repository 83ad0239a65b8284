// Contract of the shape checks (ellipsa_data_shape, ellipsa_model_shape):
// values against base R on the iris data, the rows a robust model used, and
// every documented status.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "capi_test_util.hpp"
#include "ellipsa.h"

using namespace capi_test;

namespace {
std::vector<double> setosa() {
  int64_t rows = 0;
  const auto all = read_columns(std::string(ELLIPSA_REFERENCE_DIR) + "/mixtures/iris.csv",
                                {"Sepal.Length", "Sepal.Width", "Petal.Length", "Petal.Width"}, &rows);
  return std::vector<double>(all.begin(), all.begin() + 200);
}
}  // namespace

TEST(Shape, IrisSetosaThroughTheInterface) {
  // base R 4.x, Mardia (1970) by its definition (tests/core/test_mardia.cpp).
  const auto x = setosa();
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 50, 4);
  ellipsa_shape_test s;
  s.struct_size = sizeof s;
  ASSERT_EQ(ellipsa_data_shape(&s, &v), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(s.rows, 50);
  EXPECT_NEAR(s.skewness, 3.079721342355574, 1e-12);
  EXPECT_NEAR(s.skewness_p_value, 0.177185884467652, 1e-12);
  EXPECT_NEAR(s.kurtosis, 26.537656161439703, 1e-11);
  EXPECT_EQ(s.kurtosis_expected, 24.0);
  EXPECT_NEAR(s.kurtosis_p_value, 0.195322907441934, 1e-12);
  EXPECT_EQ(s.approximate, 0);
  // A classical model's fitted rows are all complete rows: the same answer.
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* m = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK);
  Model model(m);
  ellipsa_shape_test t;
  t.struct_size = sizeof t;
  ASSERT_EQ(ellipsa_model_shape(&t, model.get(), &v), ELLIPSA_OK);
  EXPECT_EQ(t.skewness, s.skewness);
  EXPECT_EQ(t.approximate, 0);
}

TEST(Shape, RobustModelUsesTheRowsOfItsFinalEstimate) {
  // 120 normal rows and 10 gross ones: the MCD flags the 10, and the shape
  // check of the model equals the check of the unflagged rows, centred for
  // the cutoff.
  auto x = correlated_rows(130, 3, 21);
  for (int i = 0; i < 10; ++i)
    for (int j = 0; j < 3; ++j) x[static_cast<size_t>(i * 3 + j)] += 25.0;
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 130, 3);
  auto o = options(ELLIPSA_METHOD_MCD);
  ASSERT_EQ(ellipsa_fit_options_set_seed(o.get(), 4), ELLIPSA_OK);
  ellipsa_model* m = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK);
  Model model(m);
  int64_t count = 0;
  ASSERT_EQ(ellipsa_model_row_set(nullptr, 0, &count, model.get(), ELLIPSA_ROWS_OUTLIERS), ELLIPSA_OK);
  std::vector<int64_t> flagged(static_cast<size_t>(count));
  ASSERT_EQ(ellipsa_model_row_set(flagged.data(), count, &count, model.get(), ELLIPSA_ROWS_OUTLIERS), ELLIPSA_OK);
  ASSERT_GE(count, 10);
  std::vector<double> kept;
  for (int64_t i = 0; i < 130; ++i)
    if (std::find(flagged.begin(), flagged.end(), i) == flagged.end())
      kept.insert(kept.end(), x.begin() + i * 3, x.begin() + i * 3 + 3);
  const ellipsa_matrix vk = ellipsa_matrix_row_major(kept.data(), static_cast<int64_t>(kept.size() / 3), 3);
  ellipsa_shape_test s, t;
  s.struct_size = t.struct_size = sizeof s;
  ASSERT_EQ(ellipsa_data_shape(&s, &vk), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_model_shape(&t, model.get(), &v), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(t.rows, 130 - count);
  EXPECT_NEAR(t.skewness, s.skewness, 1e-12 * (1.0 + s.skewness));
  EXPECT_NEAR(t.kurtosis, s.kurtosis, 1e-12 * s.kurtosis);
  EXPECT_EQ(t.approximate, 1);
  EXPECT_LT(t.kurtosis_expected, 15.0);  // below p (p + 2) = 15: the tail beyond the cutoff is missing
  EXPECT_GT(t.kurtosis_expected, 12.0);
  // With the gross rows, the data as a whole are far from normal.
  ASSERT_EQ(ellipsa_data_shape(&s, &v), ELLIPSA_OK);
  EXPECT_LT(s.skewness_p_value, 1e-6);
}

TEST(Shape, RowsWithNaNKeepTheFitsRowNumbers) {
  // The model's row sets count NaN rows (ellipsa_model_row_set); the check of
  // a robust model on data with a NaN row uses the same rows as the check of
  // those data without it.
  auto x = correlated_rows(90, 2, 41);
  for (int j = 0; j < 2; ++j) x[static_cast<size_t>(5 * 2 + j)] += 30.0;  // row 5: gross
  std::vector<double> with_nan(x.begin(), x.begin() + 2 * 3);
  with_nan.insert(with_nan.end(), {NAN, 1.0});
  with_nan.insert(with_nan.end(), x.begin() + 2 * 3, x.end());
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 90, 2);
  const ellipsa_matrix vn = ellipsa_matrix_row_major(with_nan.data(), 91, 2);
  auto o = options(ELLIPSA_METHOD_DETMCD);
  ellipsa_model *m = nullptr, *mn = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_model_fit(&mn, &vn, o.get()), ELLIPSA_OK);
  Model model(m), model_nan(mn);
  ellipsa_shape_test s, t;
  s.struct_size = t.struct_size = sizeof s;
  ASSERT_EQ(ellipsa_model_shape(&s, model.get(), &v), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_model_shape(&t, model_nan.get(), &vn), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(s.rows, t.rows);
  EXPECT_NEAR(s.skewness, t.skewness, 1e-10 * (1.0 + s.skewness));
  EXPECT_NEAR(s.kurtosis, t.kurtosis, 1e-10 * s.kurtosis);
  EXPECT_LT(s.rows, 90);  // the gross row is not among them
  const ellipsa_matrix short_by_one = ellipsa_matrix_row_major(with_nan.data(), 90, 2);
  EXPECT_EQ(ellipsa_model_shape(&t, model_nan.get(), &short_by_one), ELLIPSA_ERR_SHAPE);
}

TEST(Shape, MisuseIsReported) {
  const auto x = correlated_rows(40, 3, 31);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 40, 3);
  ellipsa_shape_test s;
  s.struct_size = sizeof s;
  EXPECT_EQ(ellipsa_data_shape(nullptr, &v), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_data_shape(&s, nullptr), ELLIPSA_ERR_NULL);
  s.struct_size = 8;
  EXPECT_EQ(ellipsa_data_shape(&s, &v), ELLIPSA_ERR_SHAPE);
  s.struct_size = sizeof s;
  const ellipsa_matrix few = ellipsa_matrix_row_major(x.data(), 4, 3);
  EXPECT_EQ(ellipsa_data_shape(&s, &few), ELLIPSA_ERR_DATA);  // needs p + 2 rows
  const ellipsa_matrix empty = ellipsa_matrix_row_major(x.data(), 40, 0);
  EXPECT_EQ(ellipsa_data_shape(&s, &empty), ELLIPSA_ERR_SHAPE);
  auto flat = x;
  for (int i = 0; i < 40; ++i) flat[static_cast<size_t>(i * 3 + 1)] = 2.0;
  const ellipsa_matrix vf = ellipsa_matrix_row_major(flat.data(), 40, 3);
  EXPECT_EQ(ellipsa_data_shape(&s, &vf), ELLIPSA_NUM_SINGULAR);
  auto inf = x;
  inf[7] = INFINITY;
  const ellipsa_matrix vi = ellipsa_matrix_row_major(inf.data(), 40, 3);
  EXPECT_EQ(ellipsa_data_shape(&s, &vi), ELLIPSA_ERR_DATA);
  // NaN rows are left out.
  auto nan = x;
  nan[7] = NAN;
  const ellipsa_matrix vn = ellipsa_matrix_row_major(nan.data(), 40, 3);
  ASSERT_EQ(ellipsa_data_shape(&s, &vn), ELLIPSA_OK);
  EXPECT_EQ(s.rows, 39);

  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* m = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK);
  Model model(m);
  EXPECT_EQ(ellipsa_model_shape(&s, nullptr, &v), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_shape(&s, model.get(), &few), ELLIPSA_ERR_SHAPE);  // not the fitting rows
  const ellipsa_matrix two = ellipsa_matrix_row_major(x.data(), 40, 2);
  EXPECT_EQ(ellipsa_model_shape(&s, model.get(), &two), ELLIPSA_ERR_SHAPE);
  auto mo = options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_seed(mo.get(), 1), ELLIPSA_OK);
  ellipsa_model* mm = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&mm, &v, mo.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model mixture(mm);
  EXPECT_EQ(ellipsa_model_shape(&s, mixture.get(), &v), ELLIPSA_ERR_STATE);
}
