// ellipsa_fit_options_set_starts: the range, the methods it applies to, and
// that the count set is the count run (the progress callback is asked once
// per start, ellipsa.h), reproducibly for a seed.
#include <cstdint>
#include <cstring>
#include <random>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "capi_test_util.hpp"
#include "ellipsa.h"

namespace {

using capi_test::Options;

Options make(ellipsa_method method) {
  ellipsa_fit_options* o = nullptr;
  EXPECT_EQ(ellipsa_fit_options_create(&o, method), ELLIPSA_OK);
  return Options(o);
}

int count_starts(const char* stage, double, void* user) {
  if (std::strcmp(stage, "random starts") == 0) ++*static_cast<int*>(user);
  return 0;
}

TEST(FitStarts, RangeAndMethods) {
  auto o = make(ELLIPSA_METHOD_MCD);
  EXPECT_EQ(ellipsa_fit_options_set_starts(o.get(), 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_fit_options_set_starts(o.get(), 100001), ELLIPSA_ERR_ARGUMENT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("[1, 100000]"), std::string::npos);
  EXPECT_EQ(ellipsa_fit_options_set_starts(o.get(), 1), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_starts(o.get(), 100000), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_starts(nullptr, 5), ELLIPSA_ERR_NULL);
  for (ellipsa_method m :
       {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MRCD, ELLIPSA_METHOD_MIXTURE}) {
    auto other = make(m);
    EXPECT_EQ(ellipsa_fit_options_set_starts(other.get(), 5), ELLIPSA_ERR_ARGUMENT) << ellipsa_method_name(m);
  }
}

TEST(FitStarts, TheCountSetIsTheCountRunAndReproducible) {
  // Invented data: 150 rows of 3 correlated columns.
  std::mt19937_64 g(3);
  std::normal_distribution<double> z;
  std::vector<double> x(150 * 3);
  for (size_t i = 0; i < 150; ++i) {
    const double c = z(g);
    for (size_t j = 0; j < 3; ++j) x[i * 3 + j] = c + 0.5 * z(g);
  }
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 150, 3);
  for (int32_t starts : {1, 7, 500}) {
    SCOPED_TRACE(starts);
    // Runs 0 and 1 on one thread, where the callback is asked once before
    // every start (ellipsa.h); run 2 on two threads, where starts go in
    // rounds of 50 per thread: fewer calls, the same model.
    std::string saved[3];
    for (int run = 0; run < 3; ++run) {
      auto o = make(ELLIPSA_METHOD_MCD);
      ASSERT_EQ(ellipsa_fit_options_set_seed(o.get(), 11), ELLIPSA_OK);
      ASSERT_EQ(ellipsa_fit_options_set_threads(o.get(), run < 2 ? 1 : 2), ELLIPSA_OK);
      if (starts != 500) ASSERT_EQ(ellipsa_fit_options_set_starts(o.get(), starts), ELLIPSA_OK);
      int seen = 0;
      ASSERT_EQ(ellipsa_fit_options_set_progress(o.get(), count_starts, &seen), ELLIPSA_OK);
      ellipsa_model* m = nullptr;
      ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
      capi_test::Model model(m);
      EXPECT_EQ(seen, run < 2 ? starts : (starts + 99) / 100);
      saved[run] = capi_test::save(m);
    }
    EXPECT_EQ(saved[0], saved[1]);
    EXPECT_EQ(saved[0], saved[2]);
  }
}

}  // namespace
