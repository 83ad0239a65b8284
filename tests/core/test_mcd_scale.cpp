// Median, MAD and Qn (Rousseeuw & Croux 1993) against brute force.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include "core/error.hpp"
#include "core/robust_scale.hpp"
#include "test_mcd_common.hpp"

using namespace ellipsa::core;

namespace {

double brute_pairwise(const Eigen::VectorXd& x, long long k) {
  std::vector<double> d;
  for (Index i = 0; i < x.size(); ++i)
    for (Index j = i + 1; j < x.size(); ++j) d.push_back(std::abs(x(i) - x(j)));
  std::sort(d.begin(), d.end());
  return d[static_cast<std::size_t>(k - 1)];
}

Eigen::VectorXd random_vector(Index n, std::mt19937_64& g, bool ties) {
  Eigen::VectorXd v(n);
  for (Index i = 0; i < n; ++i) {
    const double u = static_cast<double>(g() % 1000000) / 1000.0;
    v(i) = ties ? std::floor(u / 50.0) : u * (1.0 + 1e-7 * static_cast<double>(g() % 97));
  }
  return v;
}

}  // namespace

TEST(RobustScale, QnConstantFromItsDefinition) {
  // 1/(sqrt(2) Phi^-1(5/8)); Phi^-1(0.625) = 0.318639363964375 (common tables).
  EXPECT_NEAR(qn_consistency_constant(), 1.0 / (std::sqrt(2.0) * 0.318639363964375), 1e-12);
  EXPECT_NEAR(qn_consistency_constant(), 2.21914, 1e-5);  // from memory: 2.2219 printed, 2.21914 exact
}

TEST(RobustScale, MedianAndMadSmallCases) {
  Eigen::VectorXd a(4);
  a << 4, 1, 3, 2;
  EXPECT_EQ(median(a), 2.5);
  Eigen::VectorXd b(5);
  b << 5, -1, 3, 100, 2;
  EXPECT_EQ(median(b), 3.0);
  // |b - 3| = 2 4 0 97 1 -> median 2; MAD = 2 / Phi^-1(3/4), Phi^-1(0.75) = 0.674489750196082.
  EXPECT_NEAR(mad(b), 2.0 / 0.674489750196082, 1e-12);
  Eigen::VectorXd one(1);
  one << 7;
  EXPECT_EQ(median(one), 7.0);
  EXPECT_EQ(qn_scale(one), 0.0);
  EXPECT_THROW(median(Eigen::VectorXd()), Error);
  // Huge values of equal sign: the midpoint must not overflow.
  Eigen::VectorXd big(2);
  big << 1.5e308, 1.7e308;
  EXPECT_NEAR(median(big), 1.6e308, 1e294);
}

TEST(RobustScale, PairwiseOrderStatisticMatchesBruteForce) {
  std::mt19937_64 g(12345);
  for (int trial = 0; trial < 300; ++trial) {
    const Index n = 2 + static_cast<Index>(g() % 150);
    const Eigen::VectorXd x = random_vector(n, g, trial % 3 == 0);
    const long long pairs = static_cast<long long>(n) * (n - 1) / 2;
    for (long long k : {1LL, pairs, 1 + static_cast<long long>(g() % pairs)})
      ASSERT_EQ(pairwise_difference_order_statistic(x, k), brute_pairwise(x, k)) << "n=" << n << " k=" << k;
    const long long hq = n / 2 + 1;
    ASSERT_EQ(qn_scale(x), qn_consistency_constant() * brute_pairwise(x, hq * (hq - 1) / 2));
  }
}

TEST(RobustScale, QnLargeSampleAndInvariances) {
  // n = 3000: brute force has 4.5e6 pairs, still cheap.
  std::mt19937_64 g(7);
  const Eigen::VectorXd x = mcd_test::normal_data(3000, 1, 99).col(0);
  const long long hq = 3000 / 2 + 1;
  EXPECT_EQ(qn_scale(x), qn_consistency_constant() * brute_pairwise(x, hq * (hq - 1) / 2));
  // Consistency at the normal: sd of Qn is about 0.6/sqrt(n) relative at n = 3000 -> 0.011;
  // allow 5 sd.
  EXPECT_NEAR(qn_scale(x), 1.0, 0.06);
  // Location invariance with a huge offset, scale equivariance, permutation.
  Eigen::VectorXd shifted = (x.array() * 3.0 + 1e6).matrix();
  EXPECT_NEAR(qn_scale(shifted), 3.0 * qn_scale(x), 3.0 * qn_scale(x) * 1e-9);
  Eigen::VectorXd rev = x.reverse();
  EXPECT_EQ(qn_scale(rev), qn_scale(x));
  EXPECT_NEAR(mad(x), 1.0, 0.08);  // MAD sd about 1.17/sqrt(n) = 0.021
}

TEST(RobustScale, QnAllEqualAndSubnormal) {
  Eigen::VectorXd same = Eigen::VectorXd::Constant(50, 4.25);
  EXPECT_EQ(qn_scale(same), 0.0);
  EXPECT_EQ(mad(same), 0.0);
  Eigen::VectorXd tiny(6);
  tiny << 1e-310, 2e-310, 3e-310, 4e-310, 5e-310, 6e-310;
  const long long hq = 6 / 2 + 1;
  EXPECT_EQ(qn_scale(tiny), qn_consistency_constant() * brute_pairwise(tiny, hq * (hq - 1) / 2));
  EXPECT_GT(qn_scale(tiny), 0.0);
}
