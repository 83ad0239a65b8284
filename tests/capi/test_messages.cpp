// The message convention of ellipsa.h: the core reports places as indices,
// the C layer names them as the caller knows them (the column's name, the
// 1-based row of the matrix passed). One exact message per path that names a
// cell or a column.
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {

std::string last() { return ellipsa_last_error(); }
const char* kInfinite = "is infinite (+Inf); NaN marks a missing value, Inf is not accepted";

struct Named {
  std::vector<double> x = correlated_rows(30, 3, 41);
  ellipsa_matrix view() const { return ellipsa_matrix_row_major(x.data(), 30, 3); }
  double& at(int row, int col) { return x[static_cast<size_t>(row * 3 + col)]; }  // 0-based
};

Options named_options(ellipsa_method method) {
  Options o = options(method);
  const char* names[] = {"melt", "pressure", "mass"};
  EXPECT_EQ(ellipsa_fit_options_set_column_names(o.get(), names, 3), ELLIPSA_OK);
  return o;
}

ellipsa_status fit(const Named& d, const Options& o) {
  ellipsa_model* m = nullptr;
  const ellipsa_matrix v = d.view();
  const ellipsa_status st = ellipsa_model_fit(&m, &v, o.get());
  ellipsa_model_destroy(m);
  return st;
}

}  // namespace

TEST(Messages, FitNamesTheCellByColumnNameAndDataRowUnderEveryPolicy) {
  Named d;
  d.at(4, 2) = INFINITY;  // data row 5, "mass"
  d.at(1, 0) = NAN;       // a dropped row before it: rows keep the caller's numbers
  for (ellipsa_method method : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MIXTURE}) {
    Options o = named_options(method);
    EXPECT_EQ(fit(d, o), ELLIPSA_ERR_DATA);
    EXPECT_EQ(last(), std::string("ellipsa_model_fit: data row 5, column \"mass\" ") + kInfinite)
        << ellipsa_method_name(method);
  }
  Options em = named_options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_missing(em.get(), ELLIPSA_MISSING_EM), ELLIPSA_OK);
  EXPECT_EQ(fit(d, em), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(), std::string("ellipsa_model_fit: data row 5, column \"mass\" ") + kInfinite);

  Named refused;
  refused.at(2, 1) = NAN;
  Options refuse = named_options(ELLIPSA_METHOD_CLASSICAL);
  ASSERT_EQ(ellipsa_fit_options_set_missing(refuse.get(), ELLIPSA_MISSING_REFUSE), ELLIPSA_OK);
  EXPECT_EQ(fit(refused, refuse), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(),
            "ellipsa_model_fit: data row 3, column \"pressure\" is missing (NaN), and missing values are "
            "refused here");
}

TEST(Messages, FitNamesAColumnByItsName) {
  Named d;
  for (int i = 0; i < 30; ++i) d.at(i, 1) = NAN;
  Options o = named_options(ELLIPSA_METHOD_CLASSICAL);
  EXPECT_EQ(fit(d, o), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(), "ellipsa_model_fit: data: column \"pressure\" has no value in any row");
  Named flat;
  for (int i = 0; i < 30; ++i) flat.at(i, 2) = 7.0;
  flat.at(0, 0) = NAN;  // the constant column is found in the complete rows
  EXPECT_EQ(fit(flat, o), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(), "ellipsa_model_fit: classical estimate: column \"mass\" is constant (zero variance)");
}

TEST(Messages, ScoringNamesTheCellWithTheModelsColumnNames) {
  Named d;
  Options o = named_options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* raw = nullptr;
  const ellipsa_matrix v = d.view();
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK);
  Model m(raw);
  std::vector<double> rows = correlated_rows(4, 3, 42);
  rows[2 * 3 + 1] = -INFINITY;  // data row 3, "pressure"
  const ellipsa_matrix s = ellipsa_matrix_row_major(rows.data(), 4, 3);
  ScoreBuffers b(4, 3);
  EXPECT_EQ(ellipsa_model_score(&b.scores, m.get(), &s, 0.975), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(),
            "ellipsa_model_score: data row 3, column \"pressure\" is infinite (-Inf); NaN marks a missing "
            "value, Inf is not accepted");
  ellipsa_shape_test shape;
  shape.struct_size = sizeof shape;
  EXPECT_EQ(ellipsa_data_shape(&shape, &s), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(),
            "ellipsa_data_shape: data row 3, column \"x2\" is infinite (-Inf); NaN marks a missing "
            "value, Inf is not accepted");
}

TEST(Messages, MixtureScoringNamesTheCellLikeTheSingleProfile) {
  Named d;
  Options o = named_options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_components(o.get(), 1, 2), ELLIPSA_OK);
  ellipsa_model* raw = nullptr;
  const ellipsa_matrix v = d.view();
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK);
  Model m(raw);
  std::vector<double> rows = correlated_rows(4, 3, 43);
  rows[1 * 3 + 0] = NAN;       // an incomplete row before it is scored on its pattern
  rows[2 * 3 + 2] = INFINITY;  // data row 3, "mass"
  const ellipsa_matrix s = ellipsa_matrix_row_major(rows.data(), 4, 3);
  ScoreBuffers b(4, 3);
  EXPECT_EQ(ellipsa_model_score(&b.scores, m.get(), &s, 0.975), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(), std::string("ellipsa_model_score: data row 3, column \"mass\" ") + kInfinite);
}

TEST(Messages, AccumulatorNamesTheCellOfTheChunkPassed) {
  ellipsa_accumulator* acc = nullptr;
  ASSERT_EQ(ellipsa_accumulator_create(&acc, 3), ELLIPSA_OK);
  std::vector<double> rows = correlated_rows(5, 3, 43);
  rows[1 * 3 + 2] = INFINITY;
  const ellipsa_matrix v = ellipsa_matrix_row_major(rows.data(), 5, 3);
  EXPECT_EQ(ellipsa_accumulator_add(acc, &v), ELLIPSA_ERR_DATA);
  EXPECT_EQ(last(), std::string("ellipsa_accumulator_add: chunk row 2, column \"x3\" ") + kInfinite);
  ellipsa_accumulator_destroy(acc);
}
