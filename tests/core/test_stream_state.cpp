// The stream state of the C interface's accumulator (core/norm_power_sums.hpp:
// add_rows, merge_state): rows added in chunks, or chunks summed apart and
// merged, give the norm power sums of all rows about their mean, on data with
// a large offset where sums about a fixed origin would cancel.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>

#include "core/norm_power_sums.hpp"

namespace core = ellipsa::core;

#include "offset_rows.hpp"

namespace {
Eigen::MatrixXd rows(Eigen::Index n, Eigen::Index p, unsigned seed, double offset) {
  return offset_rows(n, p, seed, offset);
}
void expect_close(const core::NormPowerSums& a, const core::NormPowerSums& b) {
  // Relative 1e-9: the same sums in another order of additions (common practice).
  EXPECT_EQ(a.rows, b.rows);
  EXPECT_NEAR(a.second, b.second, 1e-9 * b.second);
  EXPECT_NEAR(a.fourth, b.fourth, 1e-9 * b.fourth);
  EXPECT_LE((a.third - b.third).norm(), 1e-9 * (b.fourth / std::sqrt(b.second / b.rows)));
  EXPECT_LE(a.first.norm(), 1e-6 * std::sqrt(b.second));  // about the mean: zero to rounding
}
}  // namespace

TEST(StreamState, ChunksAddedOrMergedEqualOnePassAboutTheMean) {
  const Eigen::MatrixXd x = rows(300, 4, 5, 1e9);
  core::MomentAccumulator all(4);
  all.add(core::make_view(x));
  const core::NormPowerSums expected = core::norm_power_sums(core::make_view(x), all.mean());

  core::MomentAccumulator m(4);
  core::NormPowerSums s;
  for (int start = 0; start < 300; start += 70) {
    const Eigen::MatrixXd chunk = x.middleRows(start, std::min(70, 300 - start));
    core::add_rows(m, s, core::make_view(chunk));
  }
  expect_close(s, expected);

  core::MomentAccumulator a(4), b(4);
  core::NormPowerSums sa, sb;
  const Eigen::MatrixXd top = x.topRows(120), bottom = x.bottomRows(180);
  core::add_rows(a, sa, core::make_view(top));
  core::add_rows(b, sb, core::make_view(bottom));
  core::merge_state(a, sa, b, sb);
  expect_close(sa, expected);

  // Merging an empty state changes nothing; merging into an empty one copies.
  core::MomentAccumulator empty(4);
  core::NormPowerSums none;
  core::merge_state(a, sa, empty, none);
  expect_close(sa, expected);
  core::merge_state(empty, none, a, sa);
  expect_close(none, expected);
}
