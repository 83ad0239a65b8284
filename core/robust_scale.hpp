// Univariate robust location and scale: median, MAD and the Qn scale of
// Rousseeuw & Croux (1993). They standardise columns before the MCD algorithms
// and re-estimate the spread of projections in the deterministic MCD.
//
// Every function takes its sample by value or const reference and never
// reorders the caller's data. Values must be finite (not checked here: the MCD
// entry points screen their input); an empty sample throws Error(Data).
#pragma once
#include <Eigen/Core>
#include <memory>

#include "data_view.hpp"

namespace ellipsa::core {

// Sample median; for even n the mean of the two middle order statistics.
double median(const Eigen::Ref<const Eigen::VectorXd>& x);

// Median absolute deviation from the median, multiplied by 1/Phi^-1(3/4)
// (about 1.4826) so that it estimates sigma at the normal distribution.
// No small-sample correction.
double mad(const Eigen::Ref<const Eigen::VectorXd>& x);

// Consistency constant of Qn at the normal: 1/(sqrt(2) Phi^-1(5/8)), about
// 2.21914. Derived from the definition (the first quartile of |X-Y| for X, Y
// i.i.d. N(0, sigma^2) is sqrt(2) sigma Phi^-1(5/8)).
double qn_consistency_constant();

// Scratch memory for qn_scale and pairwise_difference_order_statistic. A
// caller evaluating many scales (the deterministic MCD: about p^2 of them)
// keeps one and passes it, so that the buffers (a few arrays of n values) are
// allocated once. It carries no state between calls beyond their capacity:
// results never depend on what it was used for before. Not shareable between
// threads.
class ScaleWorkspace {
 public:
  ScaleWorkspace();
  ~ScaleWorkspace();
  ScaleWorkspace(ScaleWorkspace&&) noexcept;
  ScaleWorkspace& operator=(ScaleWorkspace&&) noexcept;
  struct Buffers;  // defined in robust_scale.cpp
  Buffers& buffers() { return *buffers_; }

 private:
  std::unique_ptr<Buffers> buffers_;
};

// Qn scale (Rousseeuw & Croux 1993): d * {|x_i - x_j|; i < j}_(k) with
// k = C(floor(n/2)+1, 2) and d = qn_consistency_constant(). The published
// finite-sample factors d_n are NOT applied (we do not have the published
// values here); the estimate is the asymptotically consistent one. n = 1
// gives 0.
//
// Exact order statistic without forming the n(n-1)/2 differences: one sort,
// then a selection in the implicit sorted matrix of differences (Croux &
// Rousseeuw 1992) whose trial values are drawn from a sample of the remaining
// candidates (Floyd & Rivest 1975); a few O(n) counting sweeps, O(n) memory.
// Deterministic (fixed internal seed); about 2 ms at n = 1e5.
double qn_scale(const Eigen::Ref<const Eigen::VectorXd>& x);
// The same value, with caller-provided scratch memory.
double qn_scale(const Eigen::Ref<const Eigen::VectorXd>& x, ScaleWorkspace& workspace);

// The raw order statistic {|x_i - x_j|; i < j}_(k), k 1-based in
// [1, n(n-1)/2]. Exposed for tests and for callers needing another quantile.
double pairwise_difference_order_statistic(const Eigen::Ref<const Eigen::VectorXd>& x,
                                           long long k);
double pairwise_difference_order_statistic(const Eigen::Ref<const Eigen::VectorXd>& x,
                                           long long k, ScaleWorkspace& workspace);

}  // namespace ellipsa::core
