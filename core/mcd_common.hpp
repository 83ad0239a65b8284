// Pieces shared by the three Minimum Covariance Determinant algorithms
// (FAST-MCD, DetMCD, MRCD): the result type, the subset size h, the C-step,
// the consistency and reweighting factors, exact-fit detection and the
// final reweighting step.
//
// Units. The algorithms work on column-standardised data internally (for
// numerical range and for the exact-fit test); every field of RobustFit is in
// the caller's original units.
#pragma once
#include <Eigen/Core>
#include <cstdint>
#include <functional>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "cholesky.hpp"
#include "data_view.hpp"
#include "mcd_small_sample.hpp"
#include "robust_scale.hpp"

namespace ellipsa::core {

// Called at stage boundaries with a fraction in [0, 1]; returning false stops
// the fit with Error(ErrorKind::Cancelled). May be empty.
using ProgressCallback = std::function<bool(const char* stage, double fraction)>;

// A hyperplane {x : normal' x = offset} in original units, unit-length normal.
struct Hyperplane {
  Eigen::VectorXd normal;
  double offset = 0.0;
  // Rows with |normal' x - offset| <= tolerance (always >= h on an exact fit).
  Index rows_on = 0;
  double tolerance = 0.0;
  // normal' x_i - offset for every row (signed orthogonal distance).
  Eigen::VectorXd residual;
};

// Result of every MCD variant.
//
// Regular fit (exact_fit == false):
//   raw_location, raw_scatter: mean of the optimal h-subset and its covariance
//     (divisor h) multiplied by consistency_factor (Croux & Haesbroeck 1999)
//     and by small_sample.raw (mcd_small_sample.hpp; 1 when switched off).
//   raw_d2: squared Mahalanobis distance of every row under the raw estimate.
//   outlier[i]: raw_d2[i] > chi2q(p, reweight_level) (the reweighting flags).
//   location, scatter: mean and covariance (divisor = number of rows kept) of
//     the rows not flagged, scatter multiplied by reweight_factor and by
//     small_sample.reweighted; when that
//     covariance is singular, reweighted == false and they equal the raw ones.
//   robust_d2: squared distance of every row under (location, scatter).
//   raw_log_det: log det of the plain covariance (divisor h) of the h-subset,
//     i.e. the MCD objective, before any factor.
// Exact fit (exact_fit == true; at least h rows on a hyperplane, the MCD
// objective is 0 and no inverse exists):
//   hyperplane: the plane, with rows_on >= h and every row's residual.
//   raw_location, raw_scatter: mean and (singular) covariance, divisor h, of
//     the h-subset that revealed the plane (no consistency factor).
//   location, scatter: mean and (singular) covariance of all rows on the plane.
//   outlier[i]: row i is off the plane. raw_d2 and robust_d2 are empty,
//   raw_log_det = -infinity, consistency_factor = reweight_factor = 1.
// MRCD fills rho, target, condition_number (see mcd_regularised.hpp); for it
// location = raw_location and scatter = reweight_factor * raw_scatter, with
// reweight_factor = med(raw_d2) / chi2q(p, 0.5) (median calibration, no
// reweighting); robust_d2 = raw_d2 / reweight_factor and outlier[i]:
// robust_d2[i] > chi2q(p, reweight_level), the rule scoring applies.
// How the raw MCD scatter (the covariance of the h-subset) is scaled to
// estimate the covariance of the whole bulk.
enum class RawConsistency {
  // Croux & Haesbroeck (1999) factor, exact for a normal bulk as n grows, times
  // the small-sample factor (mcd_small_sample.hpp). The default.
  NormalFactor,
  // Rousseeuw & Van Driessen (1999, FAST-MCD paper): multiply by
  // med_i d2_i / chi2q(p, 0.5), with d2 the distances of all n rows under the
  // unscaled subset covariance, so that half of the rows lie inside the
  // chi-square median. It adapts to the bulk's own spread; no small-sample
  // factor is applied to it (the median is taken on the sample itself).
  Median,
};

struct RobustFit {
  Eigen::VectorXd location, raw_location;
  Eigen::MatrixXd scatter, raw_scatter;
  Index h = 0;
  std::vector<Index> h_subset;  // 0-based rows of the optimal h-subset, ascending
  std::vector<bool> outlier;
  Eigen::VectorXd raw_d2, robust_d2;
  double consistency_factor = 1.0;  // the factor applied to the raw scatter (either rule)
  RawConsistency raw_consistency = RawConsistency::NormalFactor;
  double reweight_factor = 1.0;
  SmallSampleFactors small_sample;  // the small-sample factors applied (1 = none)
  double reweight_level = 0.975;
  bool reweighted = false;
  double raw_log_det = 0.0;
  bool exact_fit = false;
  Hyperplane hyperplane;
  // MRCD only.
  double rho = 0.0;
  std::string target;
  double condition_number = 0.0;
  // Work done: C-steps over all starts, and the number of starts evaluated.
  int iterations = 0;
  int starts = 0;
};

// h = floor(2 floor((n+p+1)/2) - n + 2 (n - floor((n+p+1)/2)) alpha):
// floor((n+p+1)/2) at alpha = 0.5 (highest breakdown), n at alpha = 1.
// Throws Error(Argument) for alpha outside [0.5, 1].
Index mcd_subset_size(Index n, Index p, double alpha);

// Croux & Haesbroeck (1999): c = (h/n) / F_{chi2, p+2}(chi2q(p, h/n)); 1 when h = n.
double mcd_consistency_factor(Index h, Index n, Index p);

// The same correction for a hard rejection at chi2q(p, level):
// level / F_{chi2, p+2}(chi2q(p, level)).
double reweight_consistency_factor(double level, Index p);

class MomentAccumulator;
// The reweighting step's estimate from the moments of the rows kept (those
// whose raw distance is at most chi2q(p, level)): their mean and covariance
// (divisor = rows kept) times `factor` (the reweighting consistency factor
// times the small-sample factor). Empty when p or fewer rows were kept or the
// covariance is not positive definite: the raw estimate then stands.
// finish_fit() and the statistics path of the C interface both use it.
struct ReweightedEstimate {
  Eigen::VectorXd mean;
  Eigen::MatrixXd scatter;
  CholeskyFactor factor;
};
std::optional<ReweightedEstimate> reweighted_estimate(const MomentAccumulator& kept, double factor);

namespace mcd_detail {

// Smallest eigenvalue of a subset covariance, in units of the robust column
// variances (the data are standardised by median and MAD or Qn), at or below
// which the subset is treated as lying on a hyperplane (an exact fit): a
// spread of 1e-6 robust standard deviations across the plane. Absolute in
// those units, not relative to the largest eigenvalue, so that a subset that
// contains gross outliers (huge largest eigenvalue) is not mistaken for a plane.
inline constexpr double kExactFitEigenvalue = 1e-12;

void report_progress(const ProgressCallback& cb, const char* stage, double fraction);

// Input checks common to MCD and DetMCD (need_more_rows: n > p demanded).
void check_input(DataView x, double alpha, bool need_more_rows, const char* method);

// Column-wise robust standardisation z = (x - centre) / scale: centre = the
// column median; scale = the MAD (mad_about() of order_statistics.hpp) or Qn
// (qn_scale(), with its finite-sample factor); when
// that is 0 (more than half the values coincide) the root mean square about
// the mean; when that is 0 too (a constant column) 1. Each median and MAD is
// one selection (order_statistics.hpp) on the column, and the median is found
// once per column; the values equal median() of robust_scale.hpp and mad_about().
// ColumnScale::Tau: tau_scale() (DetMCD beyond kDetMcdQnMaxRows rows).
enum class ColumnScale { Mad, Qn, Tau };
// The one dispatch from a ColumnScale to its estimator.
double column_scale(ColumnScale kind, const Eigen::Ref<const Eigen::VectorXd>& x, ScaleWorkspace& workspace);
struct Standardised {
  Eigen::MatrixXd z;
  Eigen::VectorXd centre, scale;
  Index constant_column = -1;  // a column with one value only (all rows on x_j = c)
};
// `threads`: columns on that many threads (parallel.hpp); the result does not
// depend on it.
Standardised standardise(DataView x, ColumnScale kind, int threads = 1);

// Mean and covariance (divisor = subset size) of a subset of rows.
struct SubsetFit {
  std::vector<Index> rows;  // ascending
  Eigen::VectorXd mean;
  Eigen::MatrixXd cov;
  CholeskyFactor chol;
  Eigen::MatrixXd linv;  // L^-1 of chol (p x p lower), set when chol succeeded
  double log_det = 0.0;  // -inf when singular
  bool singular = false;
};
// Two passes (mean, then the centred cross-products): the most accurate form,
// for starts and final fits.
SubsetFit fit_subset(const Eigen::MatrixXd& z, std::vector<Index> rows);

// Row-chunk passes (distances of all rows) go on threads only from this many
// chunks of 1024 rows up: starting a thread costs tens of microseconds
// (measured here), about one chunk's distances at p = 10, so on a group or
// pooled set of a few thousand rows the threads cost more than they save
// (FAST-MCD's pooled stage took 15 ms on two threads against 4.6 on one).
inline constexpr Index kMinChunksForThreads = 16;

// Scratch memory of the C-steps. One lives for a whole fit, so that once the
// sizes are reached no C-step allocates O(n) memory. It carries no state
// between calls beyond buffer capacity: results never depend on its history.
struct CStepWorkspace {
  // Threads for the distances of all rows (subset_distances); per-row results,
  // so the C-steps do not depend on it.
  int threads = 1;
  std::vector<Eigen::MatrixXd> worker_y;  // one chunk of whitened rows per thread
  Eigen::MatrixXd linv_t, y;              // L^-T of the fit; one chunk of whitened rows
  Eigen::VectorXd shift, d2;              // L^-1 mean; squared distances of all rows
  std::vector<double> select;             // order-statistic scratch
  std::vector<Index> below, rows, tied;
  Eigen::MatrixXd g, g2;  // gathered, shifted rows
  std::vector<Index> enter, leave;
  // Sizes the O(n) buffers for C-steps on n rows of p columns. Call it on the
  // thread that starts a parallel loop, before the loop: memory a worker
  // thread allocates comes from that thread's malloc arena, which glibc hands
  // back to the system when it empties, so every later fit faults it in again
  // (measured: FAST-MCD at 1e5 x 10 on two threads took 76 ms with the
  // buffers allocated on the workers, 48 ms with them allocated here).
  void reserve(Index n, Index p);
};

// Cholesky factor, L^-1, log-determinant and exact-fit test of a fit whose
// mean and covariance are set.
void factor_fit(SubsetFit& f);

// The fit of the rows f.rows (ascending, set by the caller) in one pass:
// chunks of rows gathered into w, shifted by the subset's first row (so that no
// large common offset cancels) and accumulated by rank updates. Depends only on
// the set of rows. Agrees with fit_subset() to rounding.
void fit_rows(const Eigen::MatrixXd& z, SubsetFit& f, CStepWorkspace& w);

// The fit of f.rows (set by the caller, ascending, as many rows as old) as an
// update of the fit `old` of another subset: with D = rows entering, E = rows
// leaving and m the old mean, sum_new (z-m)(z-m)' = k cov_old + sum_D (z-m)(z-m)'
// - sum_E (z-m)(z-m)', then the shift to the new mean. Work grows with
// |D| + |E|, not with the subset size. Returns false (f untouched) when old
// is singular, the sizes differ, no row changed, or more than 1/8 of the rows
// changed (a recomputation is then as cheap and more accurate). Agrees with fit_rows() to rounding that grows
// with the number of chained updates.
bool update_fit(const Eigen::MatrixXd& z, const SubsetFit& old, SubsetFit& f, CStepWorkspace& w);

// d2_i = |L^-1 z_i - L^-1 mean|^2 for every row of z under a nonsingular fit,
// into w.d2: chunks of rows times L^-T (one small GEMM each, faster than
// triangular solves at small p), then the shift per column. For choosing rows;
// the distances reported in a RobustFit are computed with centring first.
void subset_distances(const Eigen::MatrixXd& z, const SubsetFit& fit, CStepWorkspace& w);
// The same for several fits in one pass over z (the chains of DetMCD's
// starts): distances under fits[f] into *d2[f] (resized to n). The values
// for a fit do not depend on the thread count; against the one-fit call they
// may differ by the BLAS product's rounding for a wider right-hand side (a
// test bounds it). Throws Error(Argument) when the spans differ in length.
void subset_distances(const Eigen::MatrixXd& z, std::span<const SubsetFit* const> fits,
                      std::span<Eigen::VectorXd* const> d2, CStepWorkspace& w);

// The h rows with the smallest d2, ascending by row, into w.rows (d2 may be
// w.d2). Rows tied at the cut are taken in lexicographic order of their
// values, so the chosen set does not depend on row order (identical rows are
// interchangeable).
void smallest_h_into(const Eigen::VectorXd& d2, Index h, const Eigen::MatrixXd& z, CStepWorkspace& w);
// The same, returning the rows (allocates its own scratch).
std::vector<Index> smallest_h(const Eigen::VectorXd& d2, Index h, const Eigen::MatrixXd& z);

// One C-step (Rousseeuw & Van Driessen 1999): distances of all rows of z under
// fit, the h smallest, their mean and covariance (updated from the current fit
// when few rows changed). Returns false when the subset did not change (a
// fixed point) or the determinant would rise (rounding between subsets of
// equal determinant). fit must not be singular; a singular new fit is always
// recomputed from its rows before it is accepted.
bool c_step(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, CStepWorkspace& w);
// The same C-step given the distances d2 of all rows under fit (from
// subset_distances); c_step() is subset_distances() then this. d2 may be w.d2.
bool c_step_from_distances(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, const Eigen::VectorXd& d2,
                           CStepWorkspace& w);

// C-steps until the subset repeats, the fit turns singular, or max_steps.
// Returns the number of steps taken. A fit changed by the steps is recomputed
// from its rows by fit_subset() at the end, so that it depends only on the set
// of rows and not on the path of updates.
// `threads`: see CStepWorkspace::threads.
int c_steps_to_convergence(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, int max_steps, int threads = 1);
// The same with the caller's scratch memory (its `threads` is used), for a
// caller running several chains one after another: reusing the O(n) buffers
// keeps the allocator from returning them to the system and faulting them
// back in (measured: a third of DetMCD's time at 1e5 x 10).
int c_steps_to_convergence(const Eigen::MatrixXd& z, Index h, SubsetFit& fit, int max_steps, CStepWorkspace& work);

// A singular subset fit found on some stage's rows z_stage (a group, a pool or
// the full data) defines a hyperplane; if at least h rows of the full data z lie
// on it, returns the fit of the h of them nearest the plane (singular: an exact
// fit of the whole problem); otherwise an empty optional.
std::optional<SubsetFit> exact_fit_subset(const Eigen::MatrixXd& z, const Eigen::MatrixXd& z_stage,
                                          const SubsetFit& singular_fit, Index h);

// How a regular fit is finished (the options of finish_fit()).
struct FinishRule {
  double level = 0.975;             // reweighting cutoff chi2q(p, level)
  SmallSampleFactors small_sample;  // 1 and 1: none
  RawConsistency raw = RawConsistency::NormalFactor;
};

// Final step of a regular fit: back to original units, consistency and
// small-sample factors, reweighting at chi2q(p, level) with the corrected raw
// distances. `threads`: the distances on that many threads (parallel.hpp);
// the result does not depend on it.
RobustFit finish_fit(DataView x, const Standardised& s, const SubsetFit& best, Index h, const FinishRule& rule,
                     int threads = 1);

// Result for an exact fit revealed by the (singular) subset fit `subset`.
RobustFit exact_fit_result(DataView x, const Standardised& s, const SubsetFit& subset, Index h);
// Exact fit when a whole column is constant (hyperplane x_j = value, all rows).
RobustFit constant_column_result(DataView x, const Standardised& s, Index h);

}  // namespace mcd_detail
}  // namespace ellipsa::core
