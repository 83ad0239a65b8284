// group_missing_patterns(): the shortcut for tables with no missing or infinite
// value builds exactly the layout of the row-by-row scan, in both memory
// layouts and at random sizes; tables with gaps or an infinite value still
// take the scan.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <numeric>
#include <vector>

#include "core/error.hpp"
#include "core/missing.hpp"
#include "core/portable_random.hpp"

using namespace ellipsa::core;

namespace {

void expect_same_layout(const MissingLayout& a, const MissingLayout& b) {
  EXPECT_EQ(a.incomplete_rows, b.incomplete_rows);
  EXPECT_EQ(a.all_missing_rows, b.all_missing_rows);
  ASSERT_EQ(a.patterns.size(), b.patterns.size());
  for (std::size_t k = 0; k < a.patterns.size(); ++k) {
    EXPECT_EQ(a.patterns[k].observed, b.patterns[k].observed);
    EXPECT_EQ(a.patterns[k].missing, b.patterns[k].missing);
    EXPECT_EQ(a.patterns[k].rows, b.patterns[k].rows);
  }
}

// The scan itself: the overload over listed rows, given every row.
MissingLayout scanned(DataView x) {
  std::vector<Index> all(static_cast<std::size_t>(x.rows()));
  std::iota(all.begin(), all.end(), Index{0});
  return group_missing_patterns(x, all, "test");
}

}  // namespace

TEST(MissingLayout, CompleteTablesGetTheScansLayoutInBothMemoryOrders) {
  PortableRandom rng(31);
  for (int trial = 0; trial < 20; ++trial) {
    const Index n = static_cast<Index>(rng.below(40));  // 0 rows included
    const Index p = 1 + static_cast<Index>(rng.below(6));
    std::vector<double> cells(static_cast<std::size_t>(n * p));
    for (double& c : cells) c = 1e6 * (rng.uniform() - 0.5);
    for (bool row_major : {false, true}) {
      const DataView x = row_major ? make_view(cells.data(), n, p, p, 1) : make_view(cells.data(), n, p, 1, n);
      const MissingLayout fast = group_missing_patterns(x, "test");
      expect_same_layout(fast, scanned(x));
      if (n > 0) {
        ASSERT_EQ(fast.patterns.size(), 1u);
        EXPECT_EQ(static_cast<Index>(fast.patterns[0].rows.size()), n);
      }
    }
  }
}

TEST(MissingLayout, GapsAndInfiniteValuesStillTakeTheScan) {
  Eigen::MatrixXd x = Eigen::MatrixXd::Constant(6, 3, 2.0);
  x(1, 2) = std::numeric_limits<double>::quiet_NaN();
  x(4, 0) = x(4, 1) = x(4, 2) = std::numeric_limits<double>::quiet_NaN();
  const MissingLayout layout = group_missing_patterns(make_view(x), "test");
  expect_same_layout(layout, scanned(make_view(x)));
  EXPECT_EQ(layout.incomplete_rows, 2);
  EXPECT_EQ(layout.all_missing_rows, std::vector<Index>{4});
  EXPECT_EQ(layout.patterns.size(), 2u);
  x(4, 0) = std::numeric_limits<double>::infinity();
  EXPECT_THROW(group_missing_patterns(make_view(x), "test"), Error);
}
