// The MCD from statistics (ellipsa_accumulator_add_within,
// ellipsa_model_from_mcd_statistics): given the h-subset and the kept rows
// that ellipsa_model_fit (method mcd, FAST-MCD of Rousseeuw & Van Driessen
// 1999) reports, the statistics path gives that fit's raw and reweighted
// estimates; the rows within a limit are those a plain loop picks; every
// status of the header.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {

// The demo data's complete rows in the named columns ("NA" cells mark missing values).
std::vector<double> demo_complete_rows(const std::vector<std::string>& names, int64_t* rows) {
  return read_complete_rows(ELLIPSA_EXAMPLES_DIR "/moulding_line.csv", names, rows);
}

const std::vector<std::string> kColumns = {"melt_temp_C", "cooling_water_C", "injection_pressure_bar", "hold_time_s",
                                           "cap_mass_g"};

std::vector<int64_t> row_set(const ellipsa_model* m, int32_t which) {
  int64_t count = 0;
  EXPECT_EQ(ellipsa_model_row_set(nullptr, 0, &count, m, which), ELLIPSA_OK);
  std::vector<int64_t> rows(static_cast<size_t>(count));
  EXPECT_EQ(ellipsa_model_row_set(rows.data(), count, &count, m, which), ELLIPSA_OK);
  return rows;
}

Acc accumulate(const std::vector<double>& x, int64_t p, const std::vector<char>& take) {
  Acc a = make_accumulator(p);
  std::vector<double> rows;
  for (size_t i = 0; i < take.size(); ++i)
    if (take[i])
      rows.insert(rows.end(), x.begin() + static_cast<long>(i * p), x.begin() + static_cast<long>((i + 1) * p));
  const ellipsa_matrix v = ellipsa_matrix_row_major(rows.data(), static_cast<int64_t>(rows.size()) / p, p);
  EXPECT_EQ(ellipsa_accumulator_add(a.get(), &v), ELLIPSA_OK) << ellipsa_last_error();
  return a;
}

void expect_close(const std::vector<double>& a, const std::vector<double>& b, double tol, const char* what) {
  ASSERT_EQ(a.size(), b.size());
  for (size_t i = 0; i < a.size(); ++i) EXPECT_NEAR(a[i], b[i], tol * (1.0 + std::abs(b[i]))) << what << " " << i;
}

}  // namespace

TEST(McdStatistics, TheFitsSubsetAndKeptRowsGiveTheFitsEstimates) {
  int64_t n = 0;
  const auto x = demo_complete_rows(kColumns, &n);
  const int64_t p = static_cast<int64_t>(kColumns.size());
  auto o = options(ELLIPSA_METHOD_MCD);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model fit(raw);
  std::vector<char> in_subset(static_cast<size_t>(n), 0), kept(static_cast<size_t>(n), 1);
  for (int64_t r : row_set(fit.get(), ELLIPSA_ROWS_H_SUBSET)) in_subset[static_cast<size_t>(r)] = 1;
  for (int64_t r : row_set(fit.get(), ELLIPSA_ROWS_OUTLIERS)) kept[static_cast<size_t>(r)] = 0;
  Acc subset = accumulate(x, p, in_subset), keep = accumulate(x, p, kept);
  ellipsa_model *m_raw = nullptr, *m_final = nullptr;
  ASSERT_EQ(ellipsa_model_from_mcd_statistics(&m_raw, subset.get(), nullptr, n, o.get()), ELLIPSA_OK)
      << ellipsa_last_error();
  ASSERT_EQ(ellipsa_model_from_mcd_statistics(&m_final, subset.get(), keep.get(), n, o.get()), ELLIPSA_OK)
      << ellipsa_last_error();
  Model a(m_raw), b(m_final);
  std::vector<double> l1(p), s1(p * p), l2(p), s2(p * p);
  ASSERT_EQ(ellipsa_model_raw_estimate(l1.data(), p, s1.data(), p * p, fit.get()), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_model_component(l2.data(), p, s2.data(), p * p, nullptr, a.get(), 0), ELLIPSA_OK);
  expect_close(l2, l1, 1e-12, "raw location");  // ellipsa_model_fit, to rounding
  expect_close(s2, s1, 1e-10, "raw scatter");
  ASSERT_EQ(ellipsa_model_component(l1.data(), p, s1.data(), p * p, nullptr, fit.get(), 0), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_model_component(l2.data(), p, s2.data(), p * p, nullptr, b.get(), 0), ELLIPSA_OK);
  expect_close(l2, l1, 1e-12, "location");
  expect_close(s2, s1, 1e-10, "scatter");
  for (const char* d : {"h", "consistency_factor", "reweight_factor", "small_sample_raw", "small_sample_reweighted"})
    EXPECT_NEAR(diagnostic(b.get(), d), diagnostic(fit.get(), d), 1e-12 * diagnostic(fit.get(), d)) << d;
  EXPECT_NEAR(diagnostic(b.get(), "raw_log_det"), diagnostic(fit.get(), "raw_log_det"), 1e-9);
  EXPECT_EQ(row_set(b.get(), ELLIPSA_ROWS_H_SUBSET).size(), 0u);  // statistics do not list rows
}

TEST(McdStatistics, AddWithinTakesTheRowsAtOrBelowTheLimit) {
  const int64_t n = 50, p = 3;
  const auto x = correlated_rows(n, p, 4, 100.0);
  std::vector<double> d2(n);
  for (int64_t i = 0; i < n; ++i) d2[static_cast<size_t>(i)] = static_cast<double>((i * 7) % 13);
  d2[5] = NAN;
  Acc a = make_accumulator(p);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  int64_t added = -1;
  ASSERT_EQ(ellipsa_accumulator_add_within(a.get(), &v, d2.data(), 6.0, &added), ELLIPSA_OK) << ellipsa_last_error();
  std::vector<char> take(static_cast<size_t>(n), 0);
  int64_t expected = 0;
  for (int64_t i = 0; i < n; ++i) expected += take[static_cast<size_t>(i)] = d2[static_cast<size_t>(i)] <= 6.0;
  EXPECT_EQ(added, expected);
  Acc b = accumulate(x, p, take);
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model *ma = nullptr, *mb = nullptr;
  ASSERT_EQ(ellipsa_model_from_accumulator(&ma, a.get(), o.get()), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_model_from_accumulator(&mb, b.get(), o.get()), ELLIPSA_OK);
  Model A(ma), B(mb);
  EXPECT_EQ(save(A.get()), save(B.get()));  // the same rows in the same order: the same bytes
  // Statuses: NULL d2, a NaN limit, other p, an infinite value (nothing added).
  EXPECT_EQ(ellipsa_accumulator_add_within(a.get(), &v, nullptr, 1.0, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_add_within(nullptr, &v, d2.data(), 1.0, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_add_within(a.get(), &v, d2.data(), NAN, nullptr), ELLIPSA_ERR_ARGUMENT);
  const ellipsa_matrix v2 = ellipsa_matrix_row_major(x.data(), n, 2);
  EXPECT_EQ(ellipsa_accumulator_add_within(a.get(), &v2, d2.data(), 1.0, nullptr), ELLIPSA_ERR_SHAPE);
  auto bad = x;
  bad[4] = INFINITY;
  const ellipsa_matrix vb = ellipsa_matrix_row_major(bad.data(), n, p);
  EXPECT_EQ(ellipsa_accumulator_add_within(a.get(), &vb, d2.data(), 100.0, nullptr), ELLIPSA_ERR_DATA);
  int64_t rows = 0, skipped = 0;
  ASSERT_EQ(ellipsa_accumulator_rows(&rows, &skipped, a.get()), ELLIPSA_OK);
  EXPECT_EQ(rows, expected);
  // A missing value within the limit is skipped and counted: d2 <= 0.5 holds
  // for rows 0, 13, 26, 39 (d2 = 7 i mod 13); row 13 has a NaN.
  auto gap = x;
  gap[13 * p + 1] = NAN;
  const ellipsa_matrix vg = ellipsa_matrix_row_major(gap.data(), n, p);
  ASSERT_EQ(ellipsa_accumulator_add_within(a.get(), &vg, d2.data(), 0.5, &added), ELLIPSA_OK);
  EXPECT_EQ(added, 3);
  ASSERT_EQ(ellipsa_accumulator_rows(&rows, &skipped, a.get()), ELLIPSA_OK);
  EXPECT_EQ(skipped, 1);
  EXPECT_EQ(rows, expected + 3);
}

TEST(McdStatistics, StatusesOfTheHeader) {
  const int64_t n = 40, p = 2;
  const auto x = correlated_rows(n, p, 8);
  std::vector<char> first_h(static_cast<size_t>(n), 0);
  const int64_t h = (n + p + 1) / 2;
  for (int64_t i = 0; i < h; ++i) first_h[static_cast<size_t>(i)] = 1;
  Acc subset = accumulate(x, p, first_h);
  auto mcd = options(ELLIPSA_METHOD_MCD);
  ellipsa_model* out = nullptr;
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), nullptr, n, mcd.get()), ELLIPSA_OK)
      << ellipsa_last_error();
  ellipsa_model_destroy(out);
  out = nullptr;
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(nullptr, subset.get(), nullptr, n, mcd.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, nullptr, nullptr, n, mcd.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), nullptr, n, nullptr), ELLIPSA_ERR_NULL);
  auto det = options(ELLIPSA_METHOD_DETMCD);
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), nullptr, n, det.get()), ELLIPSA_ERR_ARGUMENT);
  auto alpha = options(ELLIPSA_METHOD_MCD);
  ASSERT_EQ(ellipsa_fit_options_set_alpha(alpha.get(), 0.75), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), nullptr, n, alpha.get()), ELLIPSA_ERR_ARGUMENT);
  auto median = options(ELLIPSA_METHOD_MCD);
  ASSERT_EQ(ellipsa_fit_options_set_consistency(median.get(), ELLIPSA_CONSISTENCY_MEDIAN), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), nullptr, n, median.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), nullptr, n + 10, mcd.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("h for"), std::string::npos) << ellipsa_last_error();
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), nullptr, p, mcd.get()), ELLIPSA_ERR_DATA);
  Acc all = accumulate(x, p, std::vector<char>(static_cast<size_t>(n), 1));
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), all.get(), n - 1, mcd.get()),
            ELLIPSA_ERR_ARGUMENT);  // h of 39 rows is 21 as well; 40 kept rows are more than 39
  Acc three = make_accumulator(3);
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, subset.get(), three.get(), n, mcd.get()), ELLIPSA_ERR_SHAPE);
  // A subset on a line: its covariance is singular.
  std::vector<double> line;
  for (int64_t i = 0; i < h; ++i) line.insert(line.end(), {static_cast<double>(i), 2.0 * i + 1.0});
  Acc on_line = accumulate(line, p, std::vector<char>(static_cast<size_t>(h), 1));
  EXPECT_EQ(ellipsa_model_from_mcd_statistics(&out, on_line.get(), nullptr, n, mcd.get()), ELLIPSA_NUM_SINGULAR);
  EXPECT_EQ(out, nullptr);
}
