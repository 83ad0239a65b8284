// The memory ceiling of ellipsa_model_fit (option and ELLIPSA_MEMORY_LIMIT)
// and the overflow checks of the working-memory estimate. Whether the
// estimate bounds the measured peak is tested in tests/alloc
// (test_memory_estimate.cpp), where allocations can be counted.
#include <cstdint>
#include <cstdlib>
#include <limits>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "capi_test_util.hpp"
#include "ellipsa.h"

namespace {

using capi_test::Model;
using capi_test::Options;

Options make(ellipsa_method method) {
  ellipsa_fit_options* o = nullptr;
  EXPECT_EQ(ellipsa_fit_options_create(&o, method), ELLIPSA_OK);
  return Options(o);
}

// Clears ELLIPSA_MEMORY_LIMIT for one test and restores nothing else.
struct NoEnvironmentCeiling {
  NoEnvironmentCeiling() { unsetenv("ELLIPSA_MEMORY_LIMIT"); }
  ~NoEnvironmentCeiling() { unsetenv("ELLIPSA_MEMORY_LIMIT"); }
};

// Invented data: 200 rows of 4 columns from a fixed recurrence (no file needed).
std::vector<double> small_data() {
  std::vector<double> x(200 * 4);
  uint64_t s = 12345;
  for (double& v : x) {
    s = s * 6364136223846793005ULL + 1442695040888963407ULL;
    v = static_cast<double>(s >> 11) / 9007199254740992.0;
  }
  return x;
}

// A view of a huge matrix that occupies one double: both strides 0, so the
// library can read every "row" without the caller owning n*p doubles.
ellipsa_matrix huge_view(const double* one, int64_t rows, int64_t cols) {
  return ellipsa_matrix{one, rows, cols, 0, 0};
}

TEST(MemoryCeiling, SetterRejectsNegativeAndAcceptsZero) {
  auto o = make(ELLIPSA_METHOD_MCD);
  EXPECT_EQ(ellipsa_fit_options_set_memory_limit(o.get(), -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("ellipsa_fit_options_set_memory_limit"), std::string::npos);
  EXPECT_EQ(ellipsa_fit_options_set_memory_limit(o.get(), 0), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_memory_limit(nullptr, 1), ELLIPSA_ERR_NULL);
}

TEST(MemoryCeiling, EstimateGrowsWithTheDataAndIsRefusedBelowIt) {
  NoEnvironmentCeiling guard;
  const auto x = small_data();
  const ellipsa_matrix view = ellipsa_matrix_row_major(x.data(), 200, 4);
  for (ellipsa_method method : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_MCD,
                                ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MIXTURE}) {
    SCOPED_TRACE(ellipsa_method_name(method));
    auto o = make(method);
    ASSERT_EQ(ellipsa_fit_options_set_threads(o.get(), 1), ELLIPSA_OK);
    int64_t small = 0, large = 0;
    ASSERT_EQ(ellipsa_fit_memory_estimate(&small, o.get(), 200, 4), ELLIPSA_OK);
    ASSERT_EQ(ellipsa_fit_memory_estimate(&large, o.get(), 200000, 4), ELLIPSA_OK);
    EXPECT_GT(large, small);
    // A ceiling one byte under the estimate refuses, naming estimate and ceiling.
    ASSERT_EQ(ellipsa_fit_options_set_memory_limit(o.get(), small - 1), ELLIPSA_OK);
    ellipsa_model* m = nullptr;
    EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), ELLIPSA_ERR_MEMORY);
    EXPECT_EQ(m, nullptr);
    const std::string msg = ellipsa_last_error();
    EXPECT_EQ(msg.rfind("ellipsa_model_fit: ", 0), 0u) << msg;
    EXPECT_NE(msg.find(std::to_string(small) + " bytes"), std::string::npos) << msg;
    EXPECT_NE(msg.find("ceiling of " + std::to_string(small - 1) + " bytes"), std::string::npos) << msg;
    EXPECT_NE(msg.find("ellipsa_fit_options_set_memory_limit"), std::string::npos) << msg;
    // At the estimate the same fit runs.
    ASSERT_EQ(ellipsa_fit_options_set_memory_limit(o.get(), small), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), ELLIPSA_OK) << ellipsa_last_error();
    ellipsa_model_destroy(m);
  }
}

TEST(MemoryCeiling, EnvironmentVariableSetsTheCeilingAndTheOptionWins) {
  NoEnvironmentCeiling guard;
  const double one = 1.0;
  // 4 million rows of 40 columns (stride-0 view): FAST-MCD estimates over 5 GB.
  const ellipsa_matrix view = huge_view(&one, 4000000, 40);
  auto o = make(ELLIPSA_METHOD_MCD);
  ellipsa_model* m = nullptr;
  setenv("ELLIPSA_MEMORY_LIMIT", "64M", 1);
  EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), ELLIPSA_ERR_MEMORY);
  std::string msg = ellipsa_last_error();
  EXPECT_NE(msg.find("ceiling of 67108864 bytes (ELLIPSA_MEMORY_LIMIT)"), std::string::npos) << msg;
  // The option takes precedence over the variable.
  ASSERT_EQ(ellipsa_fit_options_set_memory_limit(o.get(), 1 << 30), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), ELLIPSA_ERR_MEMORY);
  msg = ellipsa_last_error();
  EXPECT_NE(msg.find("ceiling of 1073741824 bytes (ellipsa_fit_options_set_memory_limit)"), std::string::npos) << msg;
  EXPECT_EQ(m, nullptr);
}

TEST(MemoryCeiling, UnreadableEnvironmentVariableIsAnArgumentError) {
  NoEnvironmentCeiling guard;
  const auto x = small_data();
  const ellipsa_matrix view = ellipsa_matrix_row_major(x.data(), 200, 4);
  auto o = make(ELLIPSA_METHOD_CLASSICAL);
  for (const char* bad : {"lots", "-5", "12T", "1.5G", "99999999999999999999", "9000000000G"}) {
    SCOPED_TRACE(bad);
    setenv("ELLIPSA_MEMORY_LIMIT", bad, 1);
    ellipsa_model* m = nullptr;
    EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), ELLIPSA_ERR_ARGUMENT);
    EXPECT_NE(std::string(ellipsa_last_error()).find("ELLIPSA_MEMORY_LIMIT"), std::string::npos);
    EXPECT_EQ(m, nullptr);
  }
  for (const char* good : {"0", "", "1G", "1073741824"}) {
    SCOPED_TRACE(good);
    setenv("ELLIPSA_MEMORY_LIMIT", good, 1);
    ellipsa_model* m = nullptr;
    EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), ELLIPSA_OK) << ellipsa_last_error();
    ellipsa_model_destroy(m);
  }
}

// Sizes whose products overflow size_t and int64: refused with
// ELLIPSA_ERR_MEMORY (the estimate) or ELLIPSA_ERR_SHAPE (the view's extent),
// before any allocation, for every method.
TEST(MemoryCeiling, ProductsThatOverflowAreRefused) {
  NoEnvironmentCeiling guard;
  const double one = 1.0;
  struct Case {
    int64_t rows, cols;
    ellipsa_status fit_status;
  };
  // p^2 * 8 overflows int64 for p = 2^31 (one row); n p overflows for 2^40 x 2^30.
  const Case cases[] = {{1, int64_t{1} << 31, ELLIPSA_ERR_MEMORY},
                        {3, int64_t{1} << 33, ELLIPSA_ERR_MEMORY},
                        {int64_t{1} << 40, int64_t{1} << 30, ELLIPSA_ERR_SHAPE}};
  for (ellipsa_method method : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_OAS, ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD,
                                ELLIPSA_METHOD_MRCD, ELLIPSA_METHOD_MIXTURE}) {
    auto o = make(method);
    for (const Case& c : cases) {
      SCOPED_TRACE(std::string(ellipsa_method_name(method)) + " " + std::to_string(c.rows) + " x " +
                   std::to_string(c.cols));
      int64_t bytes = -7;
      EXPECT_EQ(ellipsa_fit_memory_estimate(&bytes, o.get(), c.rows, c.cols), ELLIPSA_ERR_MEMORY);
      EXPECT_EQ(bytes, -7);
      EXPECT_NE(std::string(ellipsa_last_error()).find("overflows a 64-bit size"), std::string::npos);
      const ellipsa_matrix view = huge_view(&one, c.rows, c.cols);
      ellipsa_model* m = nullptr;
      EXPECT_EQ(ellipsa_model_fit(&m, &view, o.get()), c.fit_status) << ellipsa_last_error();
      EXPECT_EQ(m, nullptr);
    }
  }
  auto o = make(ELLIPSA_METHOD_MCD);
  int64_t bytes = 0;
  EXPECT_EQ(ellipsa_fit_memory_estimate(&bytes, o.get(), -1, 3), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_fit_memory_estimate(nullptr, o.get(), 1, 3), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_fit_memory_estimate(&bytes, nullptr, 1, 3), ELLIPSA_ERR_NULL);
}

}  // namespace
