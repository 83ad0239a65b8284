// Univariate robust location and scale: the median and the Qn scale of
// Rousseeuw & Croux (1993). They standardise columns before the MCD algorithms
// and re-estimate the spread of projections in the deterministic MCD.
//
// Qn comes in two forms. qn_scale() applies the finite-sample factor d_n
// (Croux & Rousseeuw 1992) on top of the asymptotic consistency constant, so
// that its mean is sigma at a normal sample of every size n >= 2, up to the
// Monte Carlo error of d_n (standard error at most 0.0012). Without d_n, Qn
// overestimates sigma on average by 150% at n = 2, 9% at n = 40 and about
// 3.7/n (even n) or 1.6/n (odd n) beyond.
// qn_scale_asymptotic() leaves d_n out. The factors are this project's own
// Monte Carlo (scripts/calibration/qn_factors.cpp, its seed and table in
// docs/calibration.md, "Finite-sample factors of Qn"): a table for small n, a
// fitted n / (n + a) with one constant a per parity above it.
// Where Qn is used: the column standardisation of DetMCD and MRCD and the
// projection scales of their deterministic starts, all with the factor. In
// DetMCD every Qn is taken over the same n values, so the factor multiplies
// all scales alike and the fit is unchanged up to rounding; in MRCD the
// target of the regularisation is the identity on the Qn-standardised columns,
// so the factor sets its magnitude (diag(Qn_j^2) in original units).
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

// Finite-sample factor d_n of Qn for a sample of n >= 2 values: 1 / E[Qn]
// with Qn = qn_scale_asymptotic() of n i.i.d. N(0, 1) values, so that
// d_n qn_scale_asymptotic(x) is unbiased for sigma at the normal. A simulated
// table for n <= kQnFactorTableMax, n / (n + a) above it with a fitted per
// parity (constants and their standard errors in robust_scale.cpp, from
// scripts/calibration/qn_factors.cpp). Tends to 1 as n grows. Throws
// Error(Argument) for n < 2 (Qn of one value is 0 whatever the factor).
inline constexpr Index kQnFactorTableMax = 39;
double qn_finite_sample_factor(Index n);

// Qn scale (Rousseeuw & Croux 1993) with the finite-sample factor:
// d_n * d * {|x_i - x_j|; i < j}_(k) with k = C(floor(n/2)+1, 2),
// d = qn_consistency_constant() and d_n = qn_finite_sample_factor(n). Mean
// sigma at a normal sample of any n >= 2 (up to the Monte Carlo error of d_n).
// n = 1 gives 0; so do samples in which at least k pairs are tied.
//
// Exact order statistic without forming the n(n-1)/2 differences: one sort,
// then a selection in the implicit sorted matrix of differences (Croux &
// Rousseeuw 1992) whose trial values are drawn from a sample of the remaining
// candidates (Floyd & Rivest 1975); a few O(n) counting sweeps, O(n) memory.
// Deterministic (fixed internal seed); about 2 ms at n = 1e4 and 20 ms at
// n = 1e5 here (2.8 times one std::sort of the sample; bench_mcd, BM_Qn).
double qn_scale(const Eigen::Ref<const Eigen::VectorXd>& x);
// The same value, with caller-provided scratch memory.
double qn_scale(const Eigen::Ref<const Eigen::VectorXd>& x, ScaleWorkspace& workspace);

// Qn without the finite-sample factor: d * {|x_i - x_j|; i < j}_(k), the
// asymptotically consistent estimate (the one qn_factors.cpp simulates).
// Equals qn_scale(x) / qn_finite_sample_factor(n) up to rounding; n = 1 gives 0.
double qn_scale_asymptotic(const Eigen::Ref<const Eigen::VectorXd>& x);
double qn_scale_asymptotic(const Eigen::Ref<const Eigen::VectorXd>& x, ScaleWorkspace& workspace);

// The raw order statistic {|x_i - x_j|; i < j}_(k), k 1-based in
// [1, n(n-1)/2]. Exposed for tests and for callers needing another quantile.
double pairwise_difference_order_statistic(const Eigen::Ref<const Eigen::VectorXd>& x, long long k);
double pairwise_difference_order_statistic(const Eigen::Ref<const Eigen::VectorXd>& x, long long k,
                                           ScaleWorkspace& workspace);

// Tau scale (Yohai & Zamar 1988) in the form used by the OGK estimator of
// Maronna & Zamar (2002): with mu0 the median and s0 the MAD (normalised, as
// mad_about), location mu = weighted mean with weights (1 - (u/c1)^2)^2 on
// |u| = |x - mu0| / s0 <= c1, and scale^2 = s0^2 mean(min(((x - mu)/s0)^2,
// c2^2)) / E[min(Z^2, c2^2)], so that it estimates sigma at the normal
// (tau_normal_expectation(), derived in robust_scale.cpp). O(n): two
// selections and two passes, where Qn needs a sort. The constants c1 = 4.5
// and c2 = 3 are Maronna & Zamar's as remembered (their paper could not be
// read here); whether they apply them to the raw or the normalised MAD was
// not verified either: here the normalised one. 0 when s0 is 0 (more than
// half the values equal the median). Values must be finite; an empty sample
// throws Error(Data). The sums run in Eigen's vectorised order, so a
// permutation of the sample may change the last bits.
inline constexpr double kTauLocationCutoff = 4.5;
inline constexpr double kTauScaleCutoff = 3.0;
double tau_normal_expectation();
double tau_scale(const Eigen::Ref<const Eigen::VectorXd>& x);
double tau_scale(const Eigen::Ref<const Eigen::VectorXd>& x, ScaleWorkspace& workspace);

}  // namespace ellipsa::core
