// Thread counts: the fit options' setter, the scoring call with a thread count,
// the ELLIPSA_THREADS default, and the promise that models and scores are
// bit-identical at 1, 2 and 3 threads (fixed row chunks, fixed merge order;
// ellipsa.h, "Threads"). Bit-identity is checked with memcmp of every output.
#include <sched.h>

#include <algorithm>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {

// Rows enough for many chunks of every kernel (4096 rows for the moments, 1024
// for scoring), so that 2 and 3 threads really split the work.
constexpr int64_t kRows = 20000;
constexpr int64_t kCols = 6;

struct FittedOutputs {
  std::vector<double> location, scatter;
  std::string text;  // the model file, every double in shortest round-trip form
};

FittedOutputs fit_with_threads(ellipsa_method method, const ellipsa_matrix& view, int32_t threads) {
  FittedOutputs f;
  auto o = options(method);
  if (method == ELLIPSA_METHOD_MIXTURE) {
    EXPECT_EQ(ellipsa_fit_options_set_components(o.get(), 2, 2), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_fit_options_set_seed(o.get(), 15), ELLIPSA_OK);
    // A few EM iterations from one start exercise every threaded piece (E-step,
    // weighted moments) many times; the whole run to convergence is not needed.
    EXPECT_EQ(ellipsa_fit_options_set_restarts(o.get(), 1), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_fit_options_set_iterations(o.get(), 25, 1e-10), ELLIPSA_OK);
  }
  if (method == ELLIPSA_METHOD_MCD) EXPECT_EQ(ellipsa_fit_options_set_seed(o.get(), 15), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_threads(o.get(), threads), ELLIPSA_OK) << ellipsa_last_error();
  ellipsa_model* raw = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&raw, &view, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model m(raw);
  if (!m) return f;
  f.location.assign(kCols, 0.0);
  f.scatter.assign(kCols * kCols, 0.0);
  EXPECT_EQ(ellipsa_model_component(f.location.data(), kCols, f.scatter.data(), kCols * kCols, nullptr, m.get(), 0),
            ELLIPSA_OK);
  f.text = save(m.get());
  return f;
}

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0;
}

template <class T>
bool same_bits_any(const std::vector<T>& a, const std::vector<T>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(T)) == 0;
}

// Column-major copy of row-major x (n x p).
std::vector<double> column_major(const std::vector<double>& x, int64_t n, int64_t p) {
  std::vector<double> c(x.size());
  for (int64_t i = 0; i < n; ++i)
    for (int64_t j = 0; j < p; ++j) c[static_cast<size_t>(j * n + i)] = x[static_cast<size_t>(i * p + j)];
  return c;
}

class ThreadsFit : public ::testing::TestWithParam<ellipsa_method> {};

TEST_P(ThreadsFit, ModelIsBitIdenticalAtOneTwoAndThreeThreads) {
  // Offset 0 takes the raw-product path of the moments, offset 1e6 the
  // centred path (moments.cpp); both layouts are read.
  for (double offset : {0.0, 1e6}) {
    const auto x = correlated_rows(kRows, kCols, 1501, offset);
    const auto xc = column_major(x, kRows, kCols);
    for (int layout = 0; layout < 2; ++layout) {
      const ellipsa_matrix v = layout == 0 ? ellipsa_matrix_row_major(x.data(), kRows, kCols)
                                           : ellipsa_matrix_col_major(xc.data(), kRows, kCols);
      const FittedOutputs one = fit_with_threads(GetParam(), v, 1);
      ASSERT_FALSE(one.text.empty());
      for (int32_t t : {2, 3}) {
        const FittedOutputs many = fit_with_threads(GetParam(), v, t);
        EXPECT_TRUE(same_bits(one.location, many.location)) << t << " threads, offset " << offset;
        EXPECT_TRUE(same_bits(one.scatter, many.scatter)) << t << " threads, offset " << offset;
        EXPECT_EQ(one.text, many.text) << t << " threads, offset " << offset;
      }
    }
  }
}

INSTANTIATE_TEST_SUITE_P(Methods, ThreadsFit,
                         ::testing::Values(ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS,
                                           ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MIXTURE));

TEST(ThreadsScore, EveryOutputIsBitIdenticalAtOneTwoAndThreeThreads) {
  auto x = correlated_rows(kRows, kCols, 1502);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), kRows, kCols);
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model m(raw);
  // Missing coordinates in rows spread over several chunks (scored by pattern
  // after the complete rows), and one row with nothing observed.
  for (int64_t i = 7; i < kRows; i += 997) x[static_cast<size_t>(i * kCols + (i % kCols))] = NAN;
  for (int64_t j = 0; j < kCols; ++j) x[static_cast<size_t>(5003 * kCols + j)] = NAN;
  ScoreBuffers one(kRows, kCols);
  ASSERT_EQ(ellipsa_model_score_v3(&one.scores, m.get(), &v, 0.975, ELLIPSA_REFERENCE_CHI2, 1), ELLIPSA_OK)
      << ellipsa_last_error();
  EXPECT_EQ(one.observed[5003], 0);
  EXPECT_EQ(one.observed[7], kCols - 1);
  for (int32_t t : {2, 3}) {
    ScoreBuffers many(kRows, kCols);
    ASSERT_EQ(ellipsa_model_score_v3(&many.scores, m.get(), &v, 0.975, ELLIPSA_REFERENCE_CHI2, t), ELLIPSA_OK)
        << ellipsa_last_error();
    EXPECT_TRUE(same_bits(one.d2, many.d2)) << t;
    EXPECT_TRUE(same_bits(one.p_value, many.p_value)) << t;
    EXPECT_TRUE(same_bits(one.contribution, many.contribution)) << t;
    EXPECT_TRUE(same_bits(one.conditional_drop, many.conditional_drop)) << t;
    EXPECT_TRUE(same_bits(one.log_density, many.log_density)) << t;
    EXPECT_TRUE(same_bits_any(one.flag, many.flag)) << t;
    EXPECT_TRUE(same_bits_any(one.observed, many.observed)) << t;
  }
  // Distances alone (no other buffer) are the same numbers.
  std::vector<double> d2(kRows);
  ellipsa_scores only = ELLIPSA_SCORES_INIT;
  only.squared_distance = d2.data();
  ASSERT_EQ(ellipsa_model_score_v3(&only, m.get(), &v, 0.975, ELLIPSA_REFERENCE_CHI2, 3), ELLIPSA_OK);
  EXPECT_TRUE(same_bits(one.d2, d2));
}

TEST(ThreadsScore, InfiniteValueIsReportedForTheFirstRowWhateverTheThreads) {
  auto x = correlated_rows(kRows, kCols, 1503);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), kRows, kCols);
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK);
  Model m(raw);
  x[static_cast<size_t>(15000 * kCols + 2)] = INFINITY;
  x[static_cast<size_t>(3000 * kCols + 1)] = -INFINITY;
  for (int32_t t : {1, 2, 3}) {
    std::vector<double> d2(kRows);
    ellipsa_scores s = ELLIPSA_SCORES_INIT;
    s.squared_distance = d2.data();
    EXPECT_EQ(ellipsa_model_score_v3(&s, m.get(), &v, 0.975, ELLIPSA_REFERENCE_MODEL, t), ELLIPSA_ERR_DATA);
    // 0-based row 3000 is data row 3001 in messages (1-based rows, header "Messages").
    EXPECT_NE(std::string(ellipsa_last_error()).find("data row 3001, column \"x2\""), std::string::npos)
        << ellipsa_last_error();
  }
}

TEST(ThreadsContract, SetterAndScoringRefuseOutOfRangeCounts) {
  EXPECT_EQ(ellipsa_fit_options_set_threads(nullptr, 1), ELLIPSA_ERR_NULL);
  auto o = options(ELLIPSA_METHOD_MCD);
  EXPECT_EQ(ellipsa_fit_options_set_threads(o.get(), -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_threads(o.get(), 257), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_threads(o.get(), 0), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_threads(o.get(), 256), ELLIPSA_OK);
  const auto x = correlated_rows(200, 3, 1504);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 200, 3);
  auto c = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, c.get()), ELLIPSA_OK);
  Model m(raw);
  std::vector<double> d2(200);
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = d2.data();
  EXPECT_EQ(ellipsa_model_score_v3(&s, m.get(), &v, 0.975, ELLIPSA_REFERENCE_MODEL, -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_score_v3(&s, m.get(), &v, 0.975, ELLIPSA_REFERENCE_MODEL, 257), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_score_v3(nullptr, m.get(), &v, 0.975, ELLIPSA_REFERENCE_MODEL, 1), ELLIPSA_ERR_NULL);
}

TEST(ThreadsContract, EnvironmentVariableSetsTheDefaultAndABadValueIsRefused) {
  const auto x = correlated_rows(200, 3, 1505);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 200, 3);
  auto c = options(ELLIPSA_METHOD_CLASSICAL);
  std::vector<double> d2(200);
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = d2.data();
  ellipsa_model* raw = nullptr;
  for (const char* bad : {"zero", "0", "-2", "257", "3x"}) {
    ASSERT_EQ(setenv("ELLIPSA_THREADS", bad, 1), 0);
    EXPECT_EQ(ellipsa_model_fit(&raw, &v, c.get()), ELLIPSA_ERR_ARGUMENT) << bad;
    EXPECT_EQ(raw, nullptr);
    EXPECT_NE(std::string(ellipsa_last_error()).find("ELLIPSA_THREADS"), std::string::npos);
  }
  // An explicit count does not read the variable.
  ASSERT_EQ(ellipsa_fit_options_set_threads(c.get(), 2), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, c.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model m(raw);
  EXPECT_EQ(ellipsa_model_score_v3(&s, m.get(), &v, 0.975, ELLIPSA_REFERENCE_MODEL, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), &v, 0.975), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_score_v3(&s, m.get(), &v, 0.975, ELLIPSA_REFERENCE_MODEL, 1), ELLIPSA_OK);
  ASSERT_EQ(setenv("ELLIPSA_THREADS", "2", 1), 0);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), &v, 0.975), ELLIPSA_OK) << ellipsa_last_error();
  ASSERT_EQ(unsetenv("ELLIPSA_THREADS"), 0);
  EXPECT_EQ(ellipsa_model_score(&s, m.get(), &v, 0.975), ELLIPSA_OK) << ellipsa_last_error();
}

TEST(ThreadsContract, ResolveReportsTheCountACallUses) {
  int32_t t = -1;
  EXPECT_EQ(ellipsa_threads_resolve(nullptr, 0), ELLIPSA_ERR_NULL);
  for (const int32_t bad : {-1, 257}) {
    EXPECT_EQ(ellipsa_threads_resolve(&t, bad), ELLIPSA_ERR_ARGUMENT) << bad;
    EXPECT_EQ(t, -1);  // untouched on error
  }
  EXPECT_EQ(ellipsa_threads_resolve(&t, 3), ELLIPSA_OK);
  EXPECT_EQ(t, 3);
  EXPECT_EQ(ellipsa_threads_resolve(&t, 256), ELLIPSA_OK);
  EXPECT_EQ(t, 256);
  ASSERT_EQ(setenv("ELLIPSA_THREADS", "5", 1), 0);
  EXPECT_EQ(ellipsa_threads_resolve(&t, 0), ELLIPSA_OK);
  EXPECT_EQ(t, 5);
  EXPECT_EQ(ellipsa_threads_resolve(&t, 2), ELLIPSA_OK);  // an explicit count does not read the variable
  EXPECT_EQ(t, 2);
  ASSERT_EQ(setenv("ELLIPSA_THREADS", "3x", 1), 0);
  t = -1;
  EXPECT_EQ(ellipsa_threads_resolve(&t, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("ELLIPSA_THREADS"), std::string::npos);
  EXPECT_EQ(t, -1);
  ASSERT_EQ(unsetenv("ELLIPSA_THREADS"), 0);
  // Unset: the cores this process may run on (sched_getaffinity), as the library counts them.
  cpu_set_t set;
  CPU_ZERO(&set);
  ASSERT_EQ(sched_getaffinity(0, sizeof(set), &set), 0);
  EXPECT_EQ(ellipsa_threads_resolve(&t, 0), ELLIPSA_OK);
  EXPECT_EQ(t, std::min(CPU_COUNT(&set), 256));
}

}  // namespace
