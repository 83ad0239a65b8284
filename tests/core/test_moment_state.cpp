// MomentAccumulator::state() / from_state(): the exact state for storing or
// sending an accumulator, and the refusal of states no accumulator can be in.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "core/error.hpp"
#include "core/moments.hpp"

using namespace ellipsa::core;

#include "offset_rows.hpp"

namespace {
Eigen::MatrixXd rows(Eigen::Index n, Eigen::Index p, unsigned seed, double offset) {
  return offset_rows(n, p, seed, offset);
}
void expect_refused(const MomentAccumulator::State& s, const char* what) {
  try {
    (void)MomentAccumulator::from_state(s);
    ADD_FAILURE() << what << ": accepted";
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Format) << what;
  }
}
}  // namespace

// Reference: the original accumulator; the rebuilt one must give the same bits
// under the same later add and merge.
TEST(MomentState, RebuiltAccumulatorContinuesBitForBit) {
  const Eigen::MatrixXd a = rows(700, 4, 1, 1e8), b = rows(300, 4, 2, 1e8);
  MomentAccumulator original(4);
  original.add(make_view(a));
  MomentAccumulator copy = MomentAccumulator::from_state(original.state());
  MomentAccumulator other(4);
  other.add(make_view(b));
  original.merge(other);
  copy.merge(other);
  EXPECT_EQ(copy.rows(), original.rows());
  EXPECT_EQ(copy.weight_sum(), original.weight_sum());
  EXPECT_TRUE((copy.mean().array() == original.mean().array()).all());
  EXPECT_TRUE((copy.cross_products().array() == original.cross_products().array()).all());
}

TEST(MomentState, ImpossibleStatesAreRefused) {
  MomentAccumulator acc(3);
  acc.add(make_view(rows(50, 3, 3, 0.0)));
  const MomentAccumulator::State good = acc.state();
  auto s = good;
  s.relative_mean.resize(2);
  expect_refused(s, "sizes differ");
  s = good;
  s.shift(1) = NAN;
  expect_refused(s, "NaN shift");
  s = good;
  s.lower(2, 0) = INFINITY;
  expect_refused(s, "infinite cross-product");
  s = good;
  s.rows = -1;
  expect_refused(s, "negative rows");
  s = good;
  s.direct_rows = s.rows + 1;
  expect_refused(s, "direct rows above rows");
  s = good;
  s.weight = 0.0;
  expect_refused(s, "rows without weight");
  s = good;
  s.shifted = false;
  expect_refused(s, "rows without a shift");
  s = good;
  s.lower(1, 1) = -1.0;
  expect_refused(s, "negative diagonal");
  // The upper triangle is not part of the state: garbage there is ignored.
  s = good;
  s.lower(0, 2) = NAN;
  EXPECT_NO_THROW((void)MomentAccumulator::from_state(s));
}
