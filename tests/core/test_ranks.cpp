// average_ranks(): the radix path (n >= 4096) and the comparison path against
// the definition (rank = 1 + number of smaller values + (number of equal
// values - 1) / 2, counted directly), with ties, signed zeros, infinities,
// subnormals and huge magnitudes, at random sizes on both sides of the switch.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "core/error.hpp"
#include "core/ranks.hpp"

using ellipsa::core::average_ranks;
using ellipsa::core::RankWorkspace;

namespace {

// The definition, in O(n log n) on a sorted copy (equal_range gives the count
// below and the count equal; -0 == +0 as doubles compare).
long long reference_ranks(const Eigen::VectorXd& v, Eigen::VectorXd& r) {
  std::vector<double> s(v.data(), v.data() + v.size());
  std::sort(s.begin(), s.end());
  r.resize(v.size());
  long long pairs = 0;
  for (Eigen::Index i = 0; i < v.size(); ++i) {
    const auto [lo, hi] = std::equal_range(s.begin(), s.end(), v(i));
    const double below = static_cast<double>(lo - s.begin()), equal = static_cast<double>(hi - lo);
    r(i) = below + (equal + 1.0) / 2.0;
    pairs += static_cast<long long>(hi - lo) - 1;  // each tied pair is counted from both ends
  }
  return pairs / 2;
}

Eigen::VectorXd awkward_sample(Eigen::Index n, std::mt19937_64& g) {
  const double inf = std::numeric_limits<double>::infinity();
  const double specials[] = {0.0, -0.0, inf, -inf, 4.9e-324, -4.9e-324, 2.2e-308, 1e308, -1e308, 1.0, -1.0};
  std::uniform_int_distribution<int> pick(0, 9);
  std::normal_distribution<double> normal;
  Eigen::VectorXd v(n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const int kind = pick(g);
    if (kind == 0) v(i) = specials[g() % std::size(specials)];
    else if (kind <= 2) v(i) = std::round(normal(g) * 3.0);  // many ties
    else if (kind == 3) v(i) = 1e9 + normal(g) * 1e-6;       // a huge offset, close values
    else v(i) = normal(g);
  }
  return v;
}

}  // namespace

TEST(Ranks, EqualTheDefinitionAtRandomSizesOnBothPaths) {
  std::mt19937_64 g(20261204);
  RankWorkspace w;  // reused across sizes: results must not depend on its history
  for (Eigen::Index n : {1, 2, 3, 17, 4095, 4096, 4097, 9000, 65537}) {
    const Eigen::VectorXd v = awkward_sample(n, g);
    Eigen::VectorXd expected, got(n);
    const long long expected_pairs = reference_ranks(v, expected);
    const long long pairs = average_ranks(v, got, w);
    EXPECT_EQ(pairs, expected_pairs) << "n = " << n;
    for (Eigen::Index i = 0; i < n; ++i) ASSERT_EQ(got(i), expected(i)) << "n = " << n << ", row " << i;
    // The ranks sum to n (n + 1) / 2 whatever the ties (exact in doubles here).
    EXPECT_EQ(got.sum(), 0.5 * static_cast<double>(n) * static_cast<double>(n + 1)) << "n = " << n;
  }
}

// Small whole numbers on the radix path: the keys share their high digits,
// so some passes are skipped and the others must still order the rows.
TEST(Ranks, SmallWholeNumbersOnTheRadixPath) {
  std::mt19937_64 g(11);
  std::uniform_int_distribution<int> pick(-3, 12);
  const Eigen::Index n = 5000;
  Eigen::VectorXd v(n), got(n), expected;
  for (Eigen::Index i = 0; i < n; ++i) v(i) = pick(g);
  RankWorkspace w;
  w.reserve(n);
  EXPECT_EQ(average_ranks(v, got, w), reference_ranks(v, expected));
  for (Eigen::Index i = 0; i < n; ++i) ASSERT_EQ(got(i), expected(i)) << "row " << i;
}

TEST(Ranks, SignedZerosTieAndAllEqualValuesShareTheMiddleRank) {
  RankWorkspace w;
  for (Eigen::Index n : {6, 5000}) {
    Eigen::VectorXd v(n), r(n);
    for (Eigen::Index i = 0; i < n; ++i) v(i) = i % 2 == 0 ? 0.0 : -0.0;
    EXPECT_EQ(average_ranks(v, r, w), static_cast<long long>(n) * (n - 1) / 2);
    for (Eigen::Index i = 0; i < n; ++i) ASSERT_EQ(r(i), 0.5 * static_cast<double>(n + 1));
  }
}

TEST(Ranks, PermutingTheValuesPermutesTheRanks) {
  std::mt19937_64 g(7);
  const Eigen::Index n = 20000;
  const Eigen::VectorXd v = awkward_sample(n, g);
  std::vector<Eigen::Index> perm(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) perm[static_cast<std::size_t>(i)] = i;
  std::shuffle(perm.begin(), perm.end(), g);
  Eigen::VectorXd pv(n), r(n), pr(n);
  for (Eigen::Index i = 0; i < n; ++i) pv(i) = v(perm[static_cast<std::size_t>(i)]);
  RankWorkspace w;
  EXPECT_EQ(average_ranks(v, r, w), average_ranks(pv, pr, w));
  for (Eigen::Index i = 0; i < n; ++i) ASSERT_EQ(pr(i), r(perm[static_cast<std::size_t>(i)]));
}

TEST(Ranks, OutputOfAnotherLengthIsAnArgumentError) {
  RankWorkspace w;
  Eigen::VectorXd v = Eigen::VectorXd::Ones(5), r(4);
  EXPECT_THROW(average_ranks(v, r, w), ellipsa::core::Error);
}
