// Median, MAD and Qn (Rousseeuw & Croux 1993) against brute force.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include <boost/math/quadrature/exp_sinh.hpp>
#include <boost/math/quadrature/gauss_kronrod.hpp>
#include <limits>

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
  EXPECT_NEAR(mcd_test::mad_of(b), 2.0 / 0.674489750196082, 1e-12);
  Eigen::VectorXd one(1);
  one << 7;
  EXPECT_EQ(median(one), 7.0);
  EXPECT_EQ(qn_scale(one), 0.0);
  EXPECT_THROW(median(Eigen::VectorXd()), Error);
  // Huge values of equal sign: the midpoint must not overflow.
  Eigen::VectorXd big(2);
  big << 1.5e308, 1.7e308;
  EXPECT_NEAR(median(big), 1.6e308, 1e294);
  // Opposite signs: the difference would overflow, the sum does not.
  Eigen::VectorXd wide(2);
  wide << -1e308, 1.5e308;
  EXPECT_EQ(median(wide), 0.25e308);
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
    ASSERT_EQ(qn_scale_asymptotic(x), qn_consistency_constant() * brute_pairwise(x, hq * (hq - 1) / 2));
    // qn_scale is the same times the finite-sample factor (robust_scale.hpp).
    ASSERT_EQ(qn_scale(x), qn_finite_sample_factor(n) * qn_scale_asymptotic(x));
  }
}

TEST(RobustScale, QnLargeSampleAndInvariances) {
  // n = 3000: brute force has 4.5e6 pairs, still cheap.
  std::mt19937_64 g(7);
  const Eigen::VectorXd x = mcd_test::normal_data(3000, 1, 99).col(0);
  const long long hq = 3000 / 2 + 1;
  EXPECT_EQ(qn_scale_asymptotic(x), qn_consistency_constant() * brute_pairwise(x, hq * (hq - 1) / 2));
  // Consistency at the normal: sd of Qn is about 0.6/sqrt(n) relative at n = 3000 -> 0.011;
  // allow 5 sd.
  EXPECT_NEAR(qn_scale(x), 1.0, 0.06);
  // Location invariance with a huge offset, scale equivariance, permutation.
  Eigen::VectorXd shifted = (x.array() * 3.0 + 1e6).matrix();
  EXPECT_NEAR(qn_scale(shifted), 3.0 * qn_scale(x), 3.0 * qn_scale(x) * 1e-9);
  Eigen::VectorXd rev = x.reverse();
  EXPECT_EQ(qn_scale(rev), qn_scale(x));
  EXPECT_NEAR(mcd_test::mad_of(x), 1.0, 0.08);  // MAD sd about 1.17/sqrt(n) = 0.021
}

TEST(RobustScale, QnAllEqualAndSubnormal) {
  Eigen::VectorXd same = Eigen::VectorXd::Constant(50, 4.25);
  EXPECT_EQ(qn_scale(same), 0.0);
  EXPECT_EQ(mcd_test::mad_of(same), 0.0);
  Eigen::VectorXd tiny(6);
  tiny << 1e-310, 2e-310, 3e-310, 4e-310, 5e-310, 6e-310;
  const long long hq = 6 / 2 + 1;
  EXPECT_EQ(qn_scale(tiny),
            qn_finite_sample_factor(6) * (qn_consistency_constant() * brute_pairwise(tiny, hq * (hq - 1) / 2)));
  EXPECT_GT(qn_scale(tiny), 0.0);
}

namespace {

// All pairwise differences, sorted: the reference for every rank k at once.
std::vector<double> sorted_differences(const Eigen::VectorXd& x) {
  std::vector<double> d;
  d.reserve(static_cast<std::size_t>(x.size() * (x.size() - 1) / 2));
  for (Index i = 0; i < x.size(); ++i)
    for (Index j = i + 1; j < x.size(); ++j) d.push_back(std::abs(x(i) - x(j)));
  std::sort(d.begin(), d.end());
  return d;
}

// Ranks spread over [1, pairs], with both ends and the Qn rank.
std::vector<long long> probe_ranks(Index n, std::mt19937_64& g) {
  const long long pairs = static_cast<long long>(n) * (n - 1) / 2;
  const long long hq = n / 2 + 1;
  std::vector<long long> k{1, 2, pairs - 1, pairs, hq * (hq - 1) / 2, pairs / 2, pairs / 4 + 1};
  for (int r = 0; r < 12; ++r) k.push_back(1 + static_cast<long long>(g() % static_cast<std::uint64_t>(pairs)));
  return k;
}

void expect_all_ranks(const Eigen::VectorXd& x, std::mt19937_64& g, const char* what) {
  const std::vector<double> d = sorted_differences(x);
  for (long long k : probe_ranks(x.size(), g))
    ASSERT_EQ(pairwise_difference_order_statistic(x, k), d[static_cast<std::size_t>(k - 1)])
        << what << " n=" << x.size() << " k=" << k;
}

}  // namespace

// Sizes above a few hundred, where the sampled bracketing rounds run (below,
// the candidates are enumerated at once), against the sorted list of all
// differences.
TEST(RobustScale, SampledSelectionMatchesBruteForceRandomSizes) {
  std::mt19937_64 g(2024);
  for (int trial = 0; trial < 8; ++trial) {
    const Index n = 400 + static_cast<Index>(g() % 2600);
    expect_all_ranks(random_vector(n, g, false), g, "distinct");
  }
}

TEST(RobustScale, SampledSelectionWithHeavyTies) {
  std::mt19937_64 g(99);
  // 20 distinct values (random_vector with ties), then only 3, then 2: most
  // candidates equal the answer, so bracketing alone cannot shrink the set.
  expect_all_ranks(random_vector(2500, g, true), g, "20 values");
  Eigen::VectorXd three(2000), two(2200);
  for (Index i = 0; i < three.size(); ++i) three(i) = static_cast<double>(g() % 3) * 0.7 - 5.0;
  for (Index i = 0; i < two.size(); ++i) two(i) = (g() % 5 == 0) ? 1e300 : -1e300;  // differences 0 and 2e300
  expect_all_ranks(three, g, "3 values");
  expect_all_ranks(two, g, "2 values");
  // Mostly identical with a few distinct: Qn is 0, the largest difference is not.
  Eigen::VectorXd spike = Eigen::VectorXd::Constant(3000, 2.5);
  for (Index i = 0; i < 40; ++i) spike(static_cast<Index>(g() % 3000)) = static_cast<double>(i);
  expect_all_ranks(spike, g, "spike");
  EXPECT_EQ(qn_scale(spike), 0.0);
}

TEST(RobustScale, SampledSelectionSignsZerosSubnormalsAndOffsets) {
  std::mt19937_64 g(5);
  // Mixed signs with +0, -0 and subnormals (the sort keys map the sign bit).
  Eigen::VectorXd v(1500);
  for (Index i = 0; i < v.size(); ++i) {
    switch (g() % 5) {
      case 0: v(i) = 0.0; break;
      case 1: v(i) = -0.0; break;
      case 2: v(i) = static_cast<double>(g() % 1000) * 1e-312 * ((g() % 2) ? 1.0 : -1.0); break;
      default: v(i) = (static_cast<double>(g() % 100000) - 50000.0) / 7.0;
    }
  }
  expect_all_ranks(v, g, "signs");
  // A huge offset: differences carry the offset's rounding, identically in
  // both computations.
  Eigen::VectorXd off(1200);
  for (Index i = 0; i < off.size(); ++i) off(i) = 1e15 + static_cast<double>(g() % 100000) * 0.01;
  expect_all_ranks(off, g, "offset");
  // Sorted, reversed and permuted inputs give the same answer.
  Eigen::VectorXd s = random_vector(3000, g, false);
  std::sort(s.data(), s.data() + s.size());
  const double q = qn_scale(s);
  EXPECT_EQ(qn_scale(Eigen::VectorXd(s.reverse())), q);
  std::vector<double> perm(s.data(), s.data() + s.size());
  std::shuffle(perm.begin(), perm.end(), g);
  EXPECT_EQ(qn_scale(Eigen::Map<Eigen::VectorXd>(perm.data(), s.size())), q);
}

// n = 2e5: no brute force, but the answer must split the differences exactly:
// fewer than k strictly below it and at least k at or below it (counted
// directly, O(n^2) comparisons avoided by a sorted sweep).
TEST(RobustScale, QnLargeNRankIdentity) {
  const Index n = 200000;
  const Eigen::VectorXd x = mcd_test::normal_data(n, 1, 31).col(0);
  std::vector<double> y(x.data(), x.data() + n);
  std::sort(y.begin(), y.end());
  const long long hq = n / 2 + 1, k = hq * (hq - 1) / 2;
  const double t = pairwise_difference_order_statistic(x, k);
  long long below = 0, not_above = 0;
  std::size_t jb = 0, ja = 0;
  for (std::size_t i = 0; i < y.size(); ++i) {
    jb = std::max(jb, i + 1);
    ja = std::max(ja, i + 1);
    while (jb < y.size() && y[jb] - y[i] < t) ++jb;
    while (ja < y.size() && y[ja] - y[i] <= t) ++ja;
    below += static_cast<long long>(jb - i - 1);
    not_above += static_cast<long long>(ja - i - 1);
  }
  EXPECT_LT(below, k);
  EXPECT_GE(not_above, k);
  // Qn is consistent at the normal; sd about 0.6/sqrt(n) relative -> 0.0013.
  EXPECT_NEAR(qn_consistency_constant() * t, 1.0, 0.01);
}

// The normal expectation of the tau scale, E[min(Z^2, 9)], against Boost's
// quadrature of its definition: Gauss-Kronrod over [-3, 3] of z^2 phi(z), plus
// 9 P(|Z| > 3) with the tail integrated by exp-sinh (general-purpose library).
TEST(RobustScale, TauNormalExpectationMatchesQuadrature) {
  const double c = kTauScaleCutoff;
  auto phi = [](double z) { return std::exp(-0.5 * z * z) / std::sqrt(2.0 * 3.14159265358979323846); };
  const double inside =
      boost::math::quadrature::gauss_kronrod<double, 31>::integrate([&](double z) { return z * z * phi(z); }, -c, c);
  boost::math::quadrature::exp_sinh<double> tail_rule;
  const double tail = tail_rule.integrate(phi, c, std::numeric_limits<double>::infinity());
  EXPECT_NEAR(tau_normal_expectation(), inside + c * c * 2.0 * tail, 1e-12);
  EXPECT_NEAR(tau_normal_expectation(), 0.99501, 1e-5);  // the value quoted in robust_scale.cpp
}

TEST(RobustScale, TauConsistentEquivariantAndBounded) {
  // Consistency at the normal: n = 20000, the sd of the estimate is about
  // 1/sqrt(2 n 0.8) = 0.006 (efficiency about 80%, common practice for
  // scales of this kind; from memory); allow 5 sd.
  Eigen::VectorXd x = mcd_test::normal_data(20000, 1, 1201).col(0);
  const double t = tau_scale(x);
  EXPECT_NEAR(t, 1.0, 0.03);
  // Location invariance with a huge offset, scale equivariance.
  const Eigen::VectorXd moved = (x.array() * -3.0 + 1e6).matrix();
  EXPECT_NEAR(tau_scale(moved), 3.0 * t, 3.0 * t * 1e-8);
  // Bounded influence: 30% of the values far out. Moving them from 1e3 to 1e9
  // changes nothing (zero weight in the location, a capped term in the scale),
  // while the standard deviation grows a millionfold.
  Eigen::VectorXd near = x, far = x;
  for (Index i = 0; i < 6000; ++i) {
    near(i) = 1e3 + static_cast<double>(i);
    far(i) = 1e9 + static_cast<double>(i);
  }
  EXPECT_EQ(tau_scale(near), tau_scale(far));
  // The same far out where the deviation from the median overflows (the
  // median near -1e308, the outliers at +1.5e308: x - median = inf): still
  // no weight and a capped term, not 0 * inf = NaN. Against outliers at
  // +1e307 (a finite deviation, as far out in MADs), bit for bit.
  const Eigen::VectorXd noise = mcd_test::normal_data(200, 1, 77).col(0);
  Eigen::VectorXd low = (-1e308 * (1.0 + 1e-3 * noise.array())).matrix();
  Eigen::VectorXd overflowing = low;
  for (Index i = 0; i < 40; ++i) {
    low(i) = 1e307 + 1e300 * static_cast<double>(i);
    overflowing(i) = 1.5e308 + 1e300 * static_cast<double>(i);
  }
  ASSERT_TRUE(std::isinf(overflowing(0) - median(overflowing)));
  EXPECT_TRUE(std::isfinite(tau_scale(overflowing)));
  EXPECT_EQ(tau_scale(overflowing), tau_scale(low));
  // Each term of the mean is at most c2^2, so tau <= s0 c2 / sqrt(E) (from
  // the definition), s0 the normalised MAD.
  EXPECT_LE(tau_scale(far), mcd_test::mad_of(far) * kTauScaleCutoff / std::sqrt(tau_normal_expectation()));
  // More than half the values equal: 0, as the MAD; empty: refused.
  Eigen::VectorXd tied = x.head(101);
  tied.head(51).setConstant(2.5);
  EXPECT_EQ(tau_scale(tied), 0.0);
  EXPECT_THROW(tau_scale(Eigen::VectorXd()), Error);
}
