// The rules of the C interface that hold for every call: version, status names,
// the thread-local message, and the exception boundary seen from outside.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <set>
#include <string>
#include <thread>

#include "ellipsa.h"

TEST(Foundation, VersionOfHeaderAndLibraryAgree) {
  EXPECT_EQ(ellipsa_version_number(), ELLIPSA_VERSION_NUMBER);
  const std::string expected = std::to_string(ELLIPSA_VERSION_MAJOR) + "." + std::to_string(ELLIPSA_VERSION_MINOR) +
                               "." + std::to_string(ELLIPSA_VERSION_PATCH);
  EXPECT_EQ(expected, ellipsa_version());
}

TEST(Foundation, EveryStatusHasADistinctName) {
  const ellipsa_status codes[] = {ELLIPSA_OK,           ELLIPSA_ERR_NULL,     ELLIPSA_ERR_ARGUMENT,
                                  ELLIPSA_ERR_SHAPE,    ELLIPSA_ERR_STATE,    ELLIPSA_ERR_DATA,
                                  ELLIPSA_ERR_FORMAT,   ELLIPSA_ERR_MEMORY,   ELLIPSA_ERR_CANCELLED,
                                  ELLIPSA_ERR_INTERNAL, ELLIPSA_NUM_SINGULAR, ELLIPSA_NUM_NOT_CONVERGED,
                                  ELLIPSA_NUM_EXACT_FIT};
  std::set<std::string> names;
  for (ellipsa_status c : codes) {
    const char* n = ellipsa_status_string(c);
    ASSERT_NE(n, nullptr);
    EXPECT_EQ(std::strncmp(n, "ELLIPSA_", 8), 0) << n;
    names.insert(n);
  }
  EXPECT_EQ(names.size(), sizeof(codes) / sizeof(codes[0]));
  EXPECT_STREQ(ellipsa_status_string(12345), "ELLIPSA_UNKNOWN_STATUS");
  EXPECT_STREQ(ellipsa_status_string(-1), "ELLIPSA_UNKNOWN_STATUS");
}

TEST(Foundation, LastErrorIsNeverNullAndIsPerThread) {
  std::string seen_in_thread = "unset";
  std::thread t([&] {
    const char* m = ellipsa_last_error();
    seen_in_thread = m == nullptr ? "NULL" : m;
  });
  t.join();
  EXPECT_EQ(seen_in_thread, "");  // a fresh thread has an empty, non-NULL message

  double out = 0.0;
  ASSERT_EQ(ellipsa_chi2_quantile(&out, 2.0, 3.0), ELLIPSA_ERR_ARGUMENT);
  const std::string here = ellipsa_last_error();
  EXPECT_NE(here.find("ellipsa_chi2_quantile"), std::string::npos) << here;

  std::thread t2([&] { seen_in_thread = ellipsa_last_error(); });
  t2.join();
  EXPECT_EQ(seen_in_thread, "");  // another thread's failure does not leak here
}

TEST(Foundation, NullOutParameterIsMisuseNotACrash) {
  EXPECT_EQ(ellipsa_chi2_quantile(nullptr, 0.5, 3.0), ELLIPSA_ERR_NULL);
  EXPECT_NE(std::string(ellipsa_last_error()).find("out is NULL"), std::string::npos);
  EXPECT_EQ(ellipsa_hotelling_limit(nullptr, ELLIPSA_PHASE_TWO, 20, 3, 0.05), ELLIPSA_ERR_NULL);
}

TEST(Foundation, ExceptionsInsideBecomeStatusesAndLeaveOutputsUntouched) {
  // Each of these reaches a throw inside the library (argument checks of the
  // distribution layer); the caller sees a status and the message.
  double out = -7.0;
  const double nan = std::nan("");
  EXPECT_EQ(ellipsa_chi2_quantile(&out, nan, 3.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_chi2_quantile(&out, 0.5, -1.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_chi2_tail(&out, nan, 3.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_f_quantile(&out, 0.5, 0.0, 3.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_beta_quantile(&out, 1.5, 1.0, 1.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_hotelling_limit(&out, 3, 20, 3, 0.05), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_hotelling_limit(&out, ELLIPSA_PHASE_ONE, 4, 3, 0.05), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_hotelling_limit(&out, ELLIPSA_PHASE_TWO, 20, 3, 1.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(out, -7.0);
}

TEST(Foundation, DistributionValuesThroughTheInterface) {
  double q = 0.0;
  ASSERT_EQ(ellipsa_chi2_quantile(&q, 0.975, 3.0), ELLIPSA_OK);
  // NIST/SEMATECH e-Handbook 1.3.6.7.4, upper-tail 0.025 critical value, df 3: 9.348
  EXPECT_NEAR(q, 9.348, 0.0005);
  double tail = 0.0;
  ASSERT_EQ(ellipsa_chi2_tail(&tail, q, 3.0), ELLIPSA_OK);
  EXPECT_NEAR(tail, 0.025, 1e-14);
  // Upper tail far out keeps its digits: P(chi2_2 > 100) = exp(-50) exactly
  // (chi-square with 2 df is exponential with mean 2; common practice).
  ASSERT_EQ(ellipsa_chi2_tail(&tail, 100.0, 2.0), ELLIPSA_OK);
  EXPECT_NEAR(tail / std::exp(-50.0), 1.0, 1e-12);
}

TEST(Foundation, HotellingPhaseTwoLimitMatchesItsFForm) {
  // Tracy, Young & Mason (1992) phase II: p(m+1)(m-1)/(m(m-p)) * F(1-a; p, m-p).
  const int64_t m = 20, p = 3;
  const double alpha = 0.05;
  double f = 0.0, ucl = 0.0;
  ASSERT_EQ(ellipsa_f_quantile(&f, 1.0 - alpha, 3.0, 17.0), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_hotelling_limit(&ucl, ELLIPSA_PHASE_TWO, m, p, alpha), ELLIPSA_OK);
  EXPECT_NEAR(ucl, 3.0 * 21.0 * 19.0 / (20.0 * 17.0) * f, 1e-12);
  // from memory: F(0.95; 3, 17) = 3.197 in printed F tables (alpha 0.05)
  EXPECT_NEAR(f, 3.197, 0.0005);
}
