// Cancellation of long fits through the progress callback, counted, not
// timed (the wall-clock latency is measured in bench/bench_cancel.cpp and
// reported in docs/robustness.md). A large FAST-MCD (20000 x 10, nested
// scheme) and a large EM (20000 x 5, K = 3, 5 restarts) are stopped at the
// k-th callback for several k. The promise (ellipsa.h, ellipsa_progress_fn):
//  - the fit returns ELLIPSA_ERR_CANCELLED, *out NULL, a message naming the
//    function and the cancellation;
//  - the callback is not called again after it asked to stop: zero calls, and
//    so zero starts, C-steps or EM iterations after the request (the core
//    checks before each of them: tests/core/test_mcd_fast.cpp counts the work
//    between two calls);
//  - nothing leaks (this test runs under the leak detector in the sanitizer
//    build and under valgrind in scripts/run-valgrind.sh).
// Invented data: correlated normal rows from a fixed seed, a tenth shifted.
#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "capi_test_util.hpp"
#include "ellipsa.h"

namespace {

using capi_test::Options;

std::vector<double> rows(int64_t n, int64_t p, uint64_t seed) {
  std::mt19937_64 g(seed);
  std::normal_distribution<double> z;  // the values need not be portable here
  std::vector<double> x(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i) {
    double common = z(g);
    for (int64_t j = 0; j < p; ++j)
      x[static_cast<size_t>(i * p + j)] = common + 0.5 * z(g) + (i % 10 == 0 ? 6.0 : 0.0) + 3.0 * (j % 2);
  }
  return x;
}

struct Counter {
  int calls = 0;
  int stop_at = 0;
  int after_stop = 0;
};

int count_and_stop(const char*, double, void* user) {
  auto* c = static_cast<Counter*>(user);
  if (c->calls >= c->stop_at) ++c->after_stop;
  ++c->calls;
  return c->calls >= c->stop_at ? 1 : 0;
}

// `threads`: the fit's thread count, fixed so that the calls of each stage are
// known (the default follows the machine's cores).
void expect_prompt_cancel(ellipsa_method method, int64_t n, int64_t p, const std::vector<int>& stops,
                          int32_t threads = 1) {
  const auto x = rows(n, p, 42);
  const ellipsa_matrix view = ellipsa_matrix_row_major(x.data(), n, p);
  for (int stop_at : stops) {
    SCOPED_TRACE(std::string(ellipsa_method_name(method)) + " stop at call " + std::to_string(stop_at));
    ellipsa_fit_options* raw = nullptr;
    ASSERT_EQ(ellipsa_fit_options_create(&raw, method), ELLIPSA_OK);
    Options o(raw);
    ASSERT_EQ(ellipsa_fit_options_set_threads(o.get(), threads), ELLIPSA_OK);
    if (method == ELLIPSA_METHOD_MIXTURE) {
      ASSERT_EQ(ellipsa_fit_options_set_components(o.get(), 3, 3), ELLIPSA_OK);
      ASSERT_EQ(ellipsa_fit_options_set_restarts(o.get(), 5), ELLIPSA_OK);
      ASSERT_EQ(ellipsa_fit_options_set_iterations(o.get(), 500, 1e-12), ELLIPSA_OK);
    }
    Counter c;
    c.stop_at = stop_at;
    ASSERT_EQ(ellipsa_fit_options_set_progress(o.get(), count_and_stop, &c), ELLIPSA_OK);
    ellipsa_model* m = nullptr;
    EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), ELLIPSA_ERR_CANCELLED);
    EXPECT_EQ(m, nullptr);
    const std::string msg = ellipsa_last_error();
    EXPECT_EQ(msg.rfind("ellipsa_model_fit: ", 0), 0u) << msg;
    EXPECT_NE(msg.find("cancelled"), std::string::npos) << msg;
    EXPECT_EQ(c.calls, stop_at);
    EXPECT_EQ(c.after_stop, 0);
    ellipsa_model_destroy(m);
  }
}

TEST(Cancellation, LargeFastMcdStopsAtTheCallThatAsked) {
  // Nested scheme: 5 groups of 300 rows, 100 starts each, then the pool and
  // the full-data C-steps; stops during each stage.
  expect_prompt_cancel(ELLIPSA_METHOD_MCD, 20000, 10, {1, 2, 30, 250, 502});
  // On two threads each group's 100 starts are one round (50 per thread, one
  // call): calls 1-5 the groups, 6-7 the pool, then the full-data C-steps.
  expect_prompt_cancel(ELLIPSA_METHOD_MCD, 20000, 10, {1, 3, 6, 7, 10}, 2);
}

TEST(Cancellation, LargeEmStopsAtTheCallThatAsked) {
  // Seeding of the first start, its EM iterations, a later start.
  expect_prompt_cancel(ELLIPSA_METHOD_MIXTURE, 20000, 5, {1, 2, 25});
}

}  // namespace
