// Contract of the batch comparison (ellipsa_batch_compare and its queries):
// every documented status path, the promises of the header, and the values
// against the iris example (base R) through the shared library.
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <thread>
#include <vector>

#include "capi_test_util.hpp"
#include "ellipsa.h"

using namespace capi_test;

namespace {

struct ComparisonFree {
  void operator()(ellipsa_comparison* c) const { ellipsa_comparison_destroy(c); }
};
using Comparison = std::unique_ptr<ellipsa_comparison, ComparisonFree>;

Comparison compare(const ellipsa_matrix& a, const ellipsa_matrix& b, const ellipsa_compare_options* o,
                   ellipsa_status expected = ELLIPSA_OK) {
  ellipsa_comparison* c = nullptr;
  EXPECT_EQ(ellipsa_batch_compare(&c, &a, &b, o), expected) << ellipsa_last_error();
  return Comparison(c);
}

ellipsa_compare_options classical_only() {
  ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.robust = 0;
  return o;
}

// Iris species k (0 setosa, 1 versicolor, 2 virginica) as 50 x 4 row-major values.
std::vector<double> iris(int k) {
  int64_t rows = 0;
  const auto all = read_columns(std::string(ELLIPSA_REFERENCE_DIR) + "/mixtures/iris.csv",
                                {"Sepal.Length", "Sepal.Width", "Petal.Length", "Petal.Width"}, &rows);
  return std::vector<double>(all.begin() + 200 * k, all.begin() + 200 * (k + 1));
}

}  // namespace

TEST(Compare, DefaultsOfTheInitialiser) {
  const ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
  EXPECT_EQ(o.struct_size, static_cast<int64_t>(sizeof(ellipsa_compare_options)));
  EXPECT_EQ(o.robust, 1);
  EXPECT_EQ(o.permutations, 199);
  EXPECT_EQ(o.seed, 0u);
  EXPECT_EQ(o.alpha, 0.75);
  EXPECT_EQ(o.progress, nullptr);
}

TEST(Compare, IrisValuesThroughTheInterface) {
  const auto a = iris(1), b = iris(2);
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 50, 4), vb = ellipsa_matrix_row_major(b.data(), 50, 4);
  const auto o = classical_only();
  auto c = compare(va, vb, &o);
  ASSERT_TRUE(c);
  ellipsa_test_result t;
  t.struct_size = sizeof t;
  ASSERT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_OK);
  // base R 4.x on the iris data (see tests/core/test_two_sample_tests.cpp).
  EXPECT_NEAR(t.statistic, 355.472145199055, 1e-9);
  EXPECT_NEAR(t.transformed, 86.1475862089547, 1e-10);
  EXPECT_EQ(t.df1, 4.0);
  EXPECT_EQ(t.df2, 95.0);
  EXPECT_EQ(t.law, ELLIPSA_LAW_F);
  EXPECT_EQ(t.approximate, 0);
  ASSERT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_COVARIANCE_CHANGE), ELLIPSA_OK);
  EXPECT_NEAR(t.statistic, 36.6445157039014, 1e-9);  // base R: Box's M, versicolor vs virginica
  EXPECT_NEAR(t.transformed, 35.0366440964854, 1e-9);
  EXPECT_EQ(t.df1, 10.0);
  EXPECT_TRUE(std::isnan(t.df2));
  EXPECT_EQ(t.law, ELLIPSA_LAW_CHI2);
  EXPECT_EQ(t.approximate, 1);
  EXPECT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_ERR_STATE);
  int64_t count = 0;
  ASSERT_EQ(ellipsa_comparison_variables(nullptr, 0, &count, c.get()), ELLIPSA_OK);
  ASSERT_EQ(count, 4);
  std::vector<ellipsa_variable_shift> v(4);
  for (auto& s : v) s.struct_size = sizeof s;
  EXPECT_EQ(ellipsa_comparison_variables(v.data(), 3, &count, c.get()), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(count, 4);
  ASSERT_EQ(ellipsa_comparison_variables(v.data(), 4, &count, c.get()), ELLIPSA_OK);
  EXPECT_NEAR(v[3].t, 14.6253670474101, 1e-10);  // base R t.test (Welch)
  EXPECT_NEAR(v[3].df, 89.0433751125165, 1e-9);
  EXPECT_NEAR(v[1].p_holm / 1.81948348210493e-03, 1.0, 1e-7);  // base R p.adjust(, "holm")
  EXPECT_NEAR(v[0].reference_mean, 5.936, 1e-12);              // Fisher (1936), versicolor sepal length mean
  EXPECT_NEAR(v[0].batch_mean, 6.588, 1e-12);                  // virginica
  EXPECT_NEAR(v[0].shift_in_sd, (6.588 - 5.936) / v[0].reference_sd, 1e-12);
  int64_t ru = 0, rd = -1, bu = 0, bd = -1;
  ASSERT_EQ(ellipsa_comparison_rows(&ru, &rd, &bu, &bd, c.get()), ELLIPSA_OK);
  EXPECT_EQ(ru, 50);
  EXPECT_EQ(rd, 0);
  EXPECT_EQ(bu, 50);
  EXPECT_EQ(bd, 0);
  EXPECT_EQ(ellipsa_comparison_rows(nullptr, nullptr, nullptr, nullptr, c.get()), ELLIPSA_OK);
}

TEST(Compare, MisuseIsReported) {
  const auto a = correlated_rows(30, 3, 1), b = correlated_rows(20, 3, 2), w = correlated_rows(20, 2, 3);
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 30, 3), vb = ellipsa_matrix_row_major(b.data(), 20, 3);
  const ellipsa_matrix vw = ellipsa_matrix_row_major(w.data(), 20, 2);
  ellipsa_comparison* c = reinterpret_cast<ellipsa_comparison*>(&c);
  EXPECT_EQ(ellipsa_batch_compare(&c, nullptr, &vb, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(c, nullptr);  // out is cleared on failure
  EXPECT_EQ(ellipsa_batch_compare(nullptr, &va, &vb, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &vw, nullptr), ELLIPSA_ERR_SHAPE);
  EXPECT_NE(std::string(ellipsa_last_error()).find("columns"), std::string::npos);
  ellipsa_matrix negative = va;
  negative.rows = -1;
  EXPECT_EQ(ellipsa_batch_compare(&c, &negative, &vb, nullptr), ELLIPSA_ERR_SHAPE);
  ellipsa_matrix none = va;
  none.data = nullptr;
  EXPECT_EQ(ellipsa_batch_compare(&c, &none, &vb, nullptr), ELLIPSA_ERR_NULL);
  ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.struct_size = 8;
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &vb, &o), ELLIPSA_ERR_SHAPE);
  o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.robust = 2;
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &vb, &o), ELLIPSA_ERR_ARGUMENT);
  o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.permutations = -1;
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &vb, &o), ELLIPSA_ERR_ARGUMENT);
  o.permutations = 100001;
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &vb, &o), ELLIPSA_ERR_ARGUMENT);
  o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.alpha = 1.5;
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &vb, &o), ELLIPSA_ERR_ARGUMENT);
  // An infinite value is refused and named; one complete row is too few.
  auto inf = b;
  inf[4] = INFINITY;
  const ellipsa_matrix vi = ellipsa_matrix_row_major(inf.data(), 20, 3);
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &vi, nullptr), ELLIPSA_ERR_DATA);
  const ellipsa_matrix one = ellipsa_matrix_row_major(b.data(), 1, 3);
  EXPECT_EQ(ellipsa_batch_compare(&c, &va, &one, nullptr), ELLIPSA_ERR_DATA);
  EXPECT_EQ(c, nullptr);

  const auto co = classical_only();
  auto ok = compare(va, vb, &co);
  ellipsa_test_result t;
  t.struct_size = sizeof t;
  EXPECT_EQ(ellipsa_comparison_test(nullptr, ok.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_comparison_test(&t, nullptr, ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_comparison_test(&t, ok.get(), 99), ELLIPSA_ERR_ARGUMENT);
  t.struct_size = 8;
  EXPECT_EQ(ellipsa_comparison_test(&t, ok.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_ERR_SHAPE);
  int64_t count = 0;
  EXPECT_EQ(ellipsa_comparison_variables(nullptr, 0, nullptr, ok.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_comparison_variables(nullptr, 0, &count, nullptr), ELLIPSA_ERR_NULL);
  std::vector<ellipsa_variable_shift> v(3);
  v[0].struct_size = 8;
  EXPECT_EQ(ellipsa_comparison_variables(v.data(), 3, &count, ok.get()), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_comparison_rows(nullptr, nullptr, nullptr, nullptr, nullptr), ELLIPSA_ERR_NULL);
  ellipsa_comparison_destroy(nullptr);  // a no-op
}

TEST(Compare, TestsThatCannotBeComputedSayWhy) {
  // Column 3 constant in both batches: no T^2 (singular, column named), no Box's M.
  auto a = correlated_rows(30, 3, 4), b = correlated_rows(20, 3, 5);
  for (int i = 0; i < 30; ++i) a[static_cast<size_t>(i * 3 + 2)] = 7.0;
  for (int i = 0; i < 20; ++i) b[static_cast<size_t>(i * 3 + 2)] = 7.0;
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 30, 3), vb = ellipsa_matrix_row_major(b.data(), 20, 3);
  const auto o = classical_only();
  auto c = compare(va, vb, &o);
  ASSERT_TRUE(c);
  ellipsa_test_result t;
  t.struct_size = sizeof t;
  EXPECT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_NUM_SINGULAR);
  EXPECT_NE(std::string(ellipsa_last_error()).find("column 3"), std::string::npos) << ellipsa_last_error();
  EXPECT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_COVARIANCE_CHANGE), ELLIPSA_NUM_SINGULAR);
  std::vector<ellipsa_variable_shift> v(3);
  for (auto& s : v) s.struct_size = sizeof s;
  int64_t count = 0;
  ASSERT_EQ(ellipsa_comparison_variables(v.data(), 3, &count, c.get()), ELLIPSA_OK);
  EXPECT_TRUE(std::isnan(v[2].p_value) && std::isnan(v[2].p_holm) && std::isnan(v[2].t));
  EXPECT_FALSE(std::isnan(v[0].p_holm));

  // Three rows in the new batch of p = 3: T^2 works, Box's M needs p + 1 rows
  // per batch and the robust test's DetMCD n > p rows (both ERR_DATA).
  const auto good = correlated_rows(30, 3, 6), three = correlated_rows(3, 3, 7);
  const ellipsa_matrix vg = ellipsa_matrix_row_major(good.data(), 30, 3);
  const ellipsa_matrix few = ellipsa_matrix_row_major(three.data(), 3, 3);
  ellipsa_compare_options r = ELLIPSA_COMPARE_OPTIONS_INIT;
  r.permutations = 0;
  auto d = compare(vg, few, &r);
  ASSERT_TRUE(d);
  EXPECT_EQ(ellipsa_comparison_test(&t, d.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_comparison_test(&t, d.get(), ELLIPSA_TEST_COVARIANCE_CHANGE), ELLIPSA_ERR_DATA);
  EXPECT_EQ(ellipsa_comparison_test(&t, d.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_ERR_DATA);
}

TEST(Compare, NaNRowsAreCountedAndLeftOut) {
  auto a = correlated_rows(40, 2, 8);
  const auto b = correlated_rows(30, 2, 9);
  std::vector<double> with_nan = a;
  with_nan.insert(with_nan.end(), {NAN, 1.0, 2.0, NAN});
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 40, 2),
                       vn = ellipsa_matrix_row_major(with_nan.data(), 42, 2);
  const ellipsa_matrix vb = ellipsa_matrix_row_major(b.data(), 30, 2);
  const auto o = classical_only();
  auto c = compare(vn, vb, &o), d = compare(va, vb, &o);
  int64_t ru = 0, rd = 0;
  ASSERT_EQ(ellipsa_comparison_rows(&ru, &rd, nullptr, nullptr, c.get()), ELLIPSA_OK);
  EXPECT_EQ(ru, 40);
  EXPECT_EQ(rd, 2);
  ellipsa_test_result t, u;
  t.struct_size = u.struct_size = sizeof t;
  ASSERT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_comparison_test(&u, d.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_OK);
  EXPECT_DOUBLE_EQ(t.statistic, u.statistic);
}

TEST(Compare, RobustTestIsSeededAndCancellable) {
  const auto a = correlated_rows(40, 2, 10), b = correlated_rows(30, 2, 11, 0.8);
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 40, 2), vb = ellipsa_matrix_row_major(b.data(), 30, 2);
  ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.permutations = 19;
  o.seed = 3;
  auto c = compare(va, vb, &o), d = compare(va, vb, &o);
  ellipsa_test_result t, u;
  t.struct_size = u.struct_size = sizeof t;
  ASSERT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_comparison_test(&u, d.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_OK);
  EXPECT_EQ(t.p_value, u.p_value);
  EXPECT_EQ(t.law, ELLIPSA_LAW_PERMUTATION);
  EXPECT_EQ(t.approximate, 1);
  EXPECT_EQ(t.permutations_used + t.permutations_failed, 19);
  // The p-value is (1 + count) / (1 + used): a multiple of 1/20 here.
  const double k = t.p_value * (1.0 + static_cast<double>(t.permutations_used));
  EXPECT_NEAR(k, std::round(k), 1e-9);
  EXPECT_GE(t.p_value, 1.0 / 20.0);
  o.permutations = 0;
  auto e = compare(va, vb, &o);
  ASSERT_EQ(ellipsa_comparison_test(&u, e.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_OK);
  EXPECT_TRUE(std::isnan(u.p_value));
  EXPECT_EQ(u.statistic, t.statistic);  // the statistic does not depend on the relabellings
  o.permutations = 19;
  int calls = 0;
  o.progress = [](const char*, double, void* user) { return ++*static_cast<int*>(user) >= 3 ? 1 : 0; };
  o.progress_user = &calls;
  ellipsa_comparison* none = nullptr;
  EXPECT_EQ(ellipsa_batch_compare(&none, &va, &vb, &o), ELLIPSA_ERR_CANCELLED);
  EXPECT_EQ(none, nullptr);
  EXPECT_EQ(calls, 3);
}

TEST(Compare, NullOptionsMeanTheDefaults) {
  const auto a = correlated_rows(40, 2, 12), b = correlated_rows(30, 2, 13);
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 40, 2), vb = ellipsa_matrix_row_major(b.data(), 30, 2);
  auto c = compare(va, vb, nullptr);
  const ellipsa_compare_options init = ELLIPSA_COMPARE_OPTIONS_INIT;
  auto d = compare(va, vb, &init);
  ellipsa_test_result t, u;
  t.struct_size = u.struct_size = sizeof t;
  ASSERT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_comparison_test(&u, d.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_OK);
  EXPECT_EQ(t.permutations_used + t.permutations_failed, 199);  // the documented default
  EXPECT_EQ(t.p_value, u.p_value);
  EXPECT_EQ(t.statistic, u.statistic);
}

TEST(Compare, ThreadsShareOneResultAndCompareIndependently) {
  // Header: ellipsa_batch_compare is thread-safe; a result is shareable read-only.
  const auto a = correlated_rows(50, 3, 14), b = correlated_rows(40, 3, 15, 0.3);
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 50, 3), vb = ellipsa_matrix_row_major(b.data(), 40, 3);
  ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.permutations = 9;
  auto shared = compare(va, vb, &o);
  ellipsa_test_result want;
  want.struct_size = sizeof want;
  ASSERT_EQ(ellipsa_comparison_test(&want, shared.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_OK);
  std::vector<double> robust(4), classical(4);
  std::vector<std::thread> threads;
  for (int k = 0; k < 4; ++k)
    threads.emplace_back([&, k] {
      ellipsa_comparison* own = nullptr;
      ellipsa_test_result r;
      r.struct_size = sizeof r;
      if (ellipsa_batch_compare(&own, &va, &vb, &o) == ELLIPSA_OK &&
          ellipsa_comparison_test(&r, own, ELLIPSA_TEST_ROBUST_MEAN_SHIFT) == ELLIPSA_OK)
        robust[static_cast<size_t>(k)] = r.p_value;
      ellipsa_comparison_destroy(own);
      if (ellipsa_comparison_test(&r, shared.get(), ELLIPSA_TEST_MEAN_SHIFT) == ELLIPSA_OK)
        classical[static_cast<size_t>(k)] = r.statistic;
    });
  for (auto& t : threads) t.join();
  ellipsa_test_result m;
  m.struct_size = sizeof m;
  ASSERT_EQ(ellipsa_comparison_test(&m, shared.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_OK);
  for (int k = 0; k < 4; ++k) {
    EXPECT_EQ(robust[static_cast<size_t>(k)], want.p_value);
    EXPECT_EQ(classical[static_cast<size_t>(k)], m.statistic);
  }
}

TEST(Compare, ExactFitInABatchIsTheRobustTestsReason) {
  // 36 of 40 reference rows on the line x2 = 2 x1 + 1, 4 off it: the classical
  // covariance is regular, but the DetMCD subset (h = 31 of 40 at alpha 0.75)
  // lies on the line (METHODS.md, MCD exact fit).
  std::vector<double> a;
  for (int i = 0; i < 40; ++i) {
    const double x1 = 0.1 * i;
    a.push_back(x1);
    a.push_back(i < 36 ? 2.0 * x1 + 1.0 : 2.0 * x1 + 1.0 + (i % 2 ? 3.0 : -2.5));
  }
  const auto b = correlated_rows(30, 2, 16);
  const ellipsa_matrix va = ellipsa_matrix_row_major(a.data(), 40, 2), vb = ellipsa_matrix_row_major(b.data(), 30, 2);
  ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
  o.permutations = 0;
  auto c = compare(va, vb, &o);
  ASSERT_TRUE(c);
  ellipsa_test_result t;
  t.struct_size = sizeof t;
  EXPECT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_MEAN_SHIFT), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_comparison_test(&t, c.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT), ELLIPSA_NUM_EXACT_FIT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("hyperplane"), std::string::npos) << ellipsa_last_error();
  // No columns at all.
  const ellipsa_matrix none = ellipsa_matrix_row_major(a.data(), 40, 0);
  ellipsa_comparison* out = nullptr;
  EXPECT_EQ(ellipsa_batch_compare(&out, &none, &none, &o), ELLIPSA_ERR_SHAPE);
}
