// Streaming classical and shrinkage fits: chunks and merges equal one pass;
// missing and infinite values; every status path.
#include <gtest/gtest.h>

#include <cmath>
#include <memory>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {
std::vector<double> estimate(const ellipsa_model* m, int64_t p) {
  std::vector<double> v(static_cast<size_t>(p + p * p));
  EXPECT_EQ(ellipsa_model_component(v.data(), p, v.data() + p, p * p, nullptr, m, 0), ELLIPSA_OK);
  return v;
}
// Adds row-major x (p columns) in chunks of the given lengths, the chunks that
// start before row `split` to one accumulator and the rest to another, merges
// the two and makes the model of `o`.
Model streamed_fit(const std::vector<double>& x, int64_t p, std::initializer_list<int64_t> lengths, int64_t split,
                   const ellipsa_fit_options* o) {
  auto a = make_accumulator(p), b = make_accumulator(p);
  int64_t start = 0;
  for (int64_t len : lengths) {
    ellipsa_matrix chunk = ellipsa_matrix_row_major(x.data() + start * p, len, p);
    EXPECT_EQ(ellipsa_accumulator_add(start < split ? a.get() : b.get(), &chunk), ELLIPSA_OK);
    start += len;
  }
  EXPECT_EQ(start * p, static_cast<int64_t>(x.size()));
  EXPECT_EQ(ellipsa_accumulator_merge(a.get(), b.get()), ELLIPSA_OK);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_from_accumulator(&m, a.get(), o), ELLIPSA_OK) << ellipsa_last_error();
  return Model(m);
}
}  // namespace

TEST(Accumulator, ChunksAndMergesEqualOneFit) {
  const int64_t n = 10000, p = 4;
  const auto x = correlated_rows(n, p, 31, 1e4);  // offset 1e4, sd ~ 1-4
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_matrix all = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* direct = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&direct, &all, o.get()), ELLIPSA_OK);
  Model d(direct);
  // Two accumulators over uneven chunks, merged.
  const Model s = streamed_fit(x, p, {1, 999, 3000, 1, 2499, 3500}, 4000, o.get());
  ASSERT_NE(s.get(), nullptr);
  const auto e1 = estimate(d.get(), p), e2 = estimate(s.get(), p);
  for (size_t i = 0; i < e1.size(); ++i) EXPECT_NEAR(e2[i], e1[i], 1e-12 * (1.0 + std::abs(e1[i]))) << i;
  int64_t used = 0, dropped = -1;
  ASSERT_EQ(ellipsa_model_rows(&used, &dropped, s.get()), ELLIPSA_OK);
  EXPECT_EQ(used, n);
  EXPECT_EQ(dropped, 0);
}

TEST(Accumulator, ShrinkageFromChunksEqualsOneFit) {
  // The one-pass fits are themselves checked against the papers' formulas in
  // tests/core/test_shrinkage.cpp; here the streamed model must equal them,
  // with p > n inside every chunk and a large offset.
  const int64_t n = 60, p = 25;
  const auto x = correlated_rows(n, p, 32, 1e6);
  for (const int32_t method : {ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS}) {
    auto o = options(method);
    ellipsa_matrix all = ellipsa_matrix_row_major(x.data(), n, p);
    ellipsa_model* direct = nullptr;
    ASSERT_EQ(ellipsa_model_fit(&direct, &all, o.get()), ELLIPSA_OK) << ellipsa_last_error();
    Model d(direct);
    const Model s = streamed_fit(x, p, {7, 1, 22, 13, 17}, 30, o.get());
    ASSERT_NE(s.get(), nullptr);
    double i1 = -1.0, i2 = -2.0;
    ASSERT_EQ(ellipsa_model_diagnostic(&i1, d.get(), "shrinkage_intensity"), ELLIPSA_OK);
    ASSERT_EQ(ellipsa_model_diagnostic(&i2, s.get(), "shrinkage_intensity"), ELLIPSA_OK);
    EXPECT_GT(i1, 0.0);
    EXPECT_NEAR(i2, i1, 1e-9) << method;
    const auto e1 = estimate(d.get(), p), e2 = estimate(s.get(), p);
    for (size_t i = 0; i < e1.size(); ++i) EXPECT_NEAR(e2[i], e1[i], 1e-9 * (1.0 + std::abs(e1[i]))) << i;
    ellipsa_method got = 0;
    ASSERT_EQ(ellipsa_model_describe(nullptr, &got, nullptr, nullptr, s.get()), ELLIPSA_OK);
    EXPECT_EQ(got, method);
  }
  // Fewer than 2 rows: a shrinkage fit cannot be made.
  auto one = make_accumulator(p);
  ellipsa_matrix row = ellipsa_matrix_row_major(x.data(), 1, p);
  ASSERT_EQ(ellipsa_accumulator_add(one.get(), &row), ELLIPSA_OK);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_from_accumulator(&m, one.get(), options(ELLIPSA_METHOD_OAS).get()), ELLIPSA_ERR_DATA);
  EXPECT_EQ(m, nullptr);
}

TEST(Accumulator, MissingRowsAreSkippedAndCountedInfinityRefused) {
  const int64_t n = 50, p = 3;
  auto x = correlated_rows(n, p, 32);
  x[7 * p + 1] = std::nan("");
  auto acc = make_accumulator(p);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  ASSERT_EQ(ellipsa_accumulator_add(acc.get(), &v), ELLIPSA_OK);
  int64_t added = 0, skipped = 0;
  ASSERT_EQ(ellipsa_accumulator_rows(&added, &skipped, acc.get()), ELLIPSA_OK);
  EXPECT_EQ(added, 49);
  EXPECT_EQ(skipped, 1);
  auto bad = x;
  bad[3] = INFINITY;
  ellipsa_matrix vb = ellipsa_matrix_row_major(bad.data(), n, p);
  EXPECT_EQ(ellipsa_accumulator_add(acc.get(), &vb), ELLIPSA_ERR_DATA);
  ASSERT_EQ(ellipsa_accumulator_rows(&added, &skipped, acc.get()), ELLIPSA_OK);
  EXPECT_EQ(added, 49);  // the refused call added nothing
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* m = nullptr;
  ASSERT_EQ(ellipsa_model_from_accumulator(&m, acc.get(), o.get()), ELLIPSA_OK);
  Model guard(m);
  int64_t used = 0, dropped = 0, count = -1;
  ASSERT_EQ(ellipsa_model_rows(&used, &dropped, m), ELLIPSA_OK);
  EXPECT_EQ(used, 49);
  EXPECT_EQ(dropped, 1);
  ASSERT_EQ(ellipsa_model_row_set(nullptr, 0, &count, m, ELLIPSA_ROWS_DROPPED), ELLIPSA_OK);
  EXPECT_EQ(count, 0);  // which row is not known to an accumulator
  // The model file keeps the count and loads back.
  char* text = nullptr;
  int64_t length = 0;
  ASSERT_EQ(ellipsa_model_save(&text, &length, m), ELLIPSA_OK);
  ellipsa_model* back = nullptr;
  EXPECT_EQ(ellipsa_model_load(&back, text, length), ELLIPSA_OK) << ellipsa_last_error();
  ASSERT_EQ(ellipsa_model_rows(&used, &dropped, back), ELLIPSA_OK);
  EXPECT_EQ(dropped, 1);
  ellipsa_model_destroy(back);
  ellipsa_text_free(text);
  // With the policy "refuse", the skipped row makes the fit fail instead.
  ASSERT_EQ(ellipsa_fit_options_set_missing(o.get(), ELLIPSA_MISSING_REFUSE), ELLIPSA_OK);
  ellipsa_model* refused = nullptr;
  EXPECT_EQ(ellipsa_model_from_accumulator(&refused, acc.get(), o.get()), ELLIPSA_ERR_DATA);
  EXPECT_NE(std::string(ellipsa_last_error()).find("1 rows had a missing value"), std::string::npos);
  EXPECT_EQ(refused, nullptr);
}

TEST(Accumulator, StatusPaths) {
  ellipsa_accumulator* a = nullptr;
  EXPECT_EQ(ellipsa_accumulator_create(nullptr, 3), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_create(&a, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_accumulator_create(&a, -2), ELLIPSA_ERR_ARGUMENT);
  auto acc = make_accumulator(3), other = make_accumulator(2);
  std::vector<double> x = correlated_rows(3, 3, 33);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 3, 3);
  ellipsa_matrix narrow = ellipsa_matrix_row_major(x.data(), 4, 2);
  EXPECT_EQ(ellipsa_accumulator_add(nullptr, &v), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_add(acc.get(), nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_add(acc.get(), &narrow), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_accumulator_merge(acc.get(), other.get()), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_accumulator_merge(acc.get(), acc.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_accumulator_merge(nullptr, acc.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_rows(nullptr, nullptr, nullptr), ELLIPSA_ERR_NULL);
  ASSERT_EQ(ellipsa_accumulator_add(acc.get(), &v), ELLIPSA_OK);
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_from_accumulator(&m, acc.get(), o.get()), ELLIPSA_ERR_DATA);  // 3 rows, 3 columns
  EXPECT_NE(std::string(ellipsa_last_error()).find("shrinkage"), std::string::npos);
  auto mcd = options(ELLIPSA_METHOD_MCD);
  EXPECT_EQ(ellipsa_model_from_accumulator(&m, acc.get(), mcd.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_from_accumulator(nullptr, acc.get(), o.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(m, nullptr);
  // A constant column is named.
  auto c = make_accumulator(2);
  std::vector<double> constant = {1, 5, 2, 5, 3, 5, 4, 5};
  ellipsa_matrix vc = ellipsa_matrix_row_major(constant.data(), 4, 2);
  ASSERT_EQ(ellipsa_accumulator_add(c.get(), &vc), ELLIPSA_OK);
  const char* names[] = {"melt", "pressure"};
  ASSERT_EQ(ellipsa_fit_options_set_column_names(o.get(), names, 2), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_model_from_accumulator(&m, c.get(), o.get()), ELLIPSA_ERR_DATA);
  EXPECT_NE(std::string(ellipsa_last_error()).find("\"pressure\" is constant"), std::string::npos);
  ellipsa_accumulator_destroy(nullptr);  // a no-op
}
