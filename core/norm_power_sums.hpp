// Power sums of the row norms about a centre, kept exact under merging and
// re-centring, so that the Ledoit-Wolf intensity (which needs sum_k |x_k - m|^4
// about the final mean m) can be computed in one pass over a stream of chunks.
//
// With y = x - c for a centre c the sums are
//   first  = sum y,   second = sum |y|^2,   third = sum |y|^2 y,   fourth = sum |y|^4.
// Moving the centre to c' = c - d (y' = y + d) is an algebraic identity that
// needs, besides these, the cross-products sum y y' about c (from
// MomentAccumulator): with a = d'y,
//   |y + d|^2 = |y|^2 + 2a + |d|^2, and the sums of its products with 1, y + d
// and itself expand into the terms of recentre() in norm_power_sums.cpp. Each
// chunk is summed about its own mean and merged by re-centring both sides on
// the merged mean: differences between nearby means, as in the update of
// Chan, Golub & LeVeque (1979) for the cross-products, so no large offset is
// ever cancelled (the same reasoning as the higher-moment updates of
// Pebay 2008, Sandia report SAND2008-6212, written here for norms).
#pragma once
#include <Eigen/Core>

#include "data_view.hpp"
#include "moments.hpp"

namespace ellipsa::core {

struct NormPowerSums {
  double rows = 0.0;
  Eigen::VectorXd centre;  // c
  Eigen::VectorXd first;   // sum (x - c)
  double second = 0.0;     // sum |x - c|^2
  Eigen::VectorXd third;   // sum |x - c|^2 (x - c)
  double fourth = 0.0;     // sum |x - c|^4
};

// The sums of the rows of x (finite; not checked) about `centre`.
NormPowerSums norm_power_sums(DataView x, const Eigen::VectorXd& centre);

// The same sums about `to`. `cross_about_mean` is sum (x - mean)(x - mean)'
// of the same rows, mean = centre + first / rows (MomentAccumulator's
// cross_products()).
NormPowerSums recentre(const NormPowerSums& s, const Eigen::MatrixXd& cross_about_mean, const Eigen::VectorXd& to);

// Sums of two disjoint row sets already about the same centre.
NormPowerSums combine(const NormPowerSums& a, const NormPowerSums& b);

// A stream's state: moments, and norm sums about moments.mean() once rows
// were added. The two operations below keep both exact (the C interface's
// accumulator is this pair).
// Adds the rows of x (finite; not checked): their sums are taken about the
// merged mean directly, the old sums are moved there.
void add_rows(MomentAccumulator& moments, NormPowerSums& norms, DataView x);
// Adds the state of a disjoint row set: both norm sums are moved to the merged mean.
void merge_state(MomentAccumulator& moments, NormPowerSums& norms, const MomentAccumulator& other_moments,
                 const NormPowerSums& other_norms);

}  // namespace ellipsa::core
