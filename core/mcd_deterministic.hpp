// Deterministic MCD (Hubert, Rousseeuw & Verdonck 2012, J. Comput. Graph.
// Statist. 21, 618-637): the MCD from six deterministic starting estimates
// instead of random subsets. No seed; the same data give the same answer.
//
// Row order: every step is a function of the values, not of the row order
// (medians, Qn, ranks with average ties, the h smallest distances with ties
// broken by the row values), so permuting the rows permutes h_subset, outlier
// and the distances accordingly and leaves location and scatter unchanged up
// to rounding (sums are formed in row order, so the last bits may differ; the
// selected subsets are the same unless two distances tie within rounding).
#pragma once
#include "mcd_common.hpp"
#include "robust_scale.hpp"

namespace ellipsa::core {

// Rows up to which DetMCD takes Qn as its robust scale (standardisation,
// OGK start, eigenvalue re-estimation); beyond, the tau scale (tau_scale(),
// O(n) where Qn needs a sort of each of its p(p+1)/2 + 6p samples). From
// memory, not verified against the paper's text: Hubert, Rousseeuw &
// Verdonck allow the tau scale for large n for this reason. The switch point
// is chosen, not tuned: the published sets and the samples of a sheet (at
// most a few thousand rows) keep Qn and their results; at 1e5 x 10 Qn took
// more than half of the fit (docs/performance.md). Both scales estimate sigma
// at the normal, so the starts agree in scale on either side.
inline constexpr Index kDetMcdQnMaxRows = 10000;

struct DetMcdOptions {
  double alpha = 0.5;  // h = mcd_subset_size(n, p, alpha)
  // Qn up to this many rows, tau beyond (kDetMcdQnMaxRows; tests set it to
  // compare the two on the same data).
  Index qn_max_rows = kDetMcdQnMaxRows;
  int max_csteps = 200;           // cap for "to convergence"
  double reweight_level = 0.975;  // reweighting cutoff chi2q(p, level)
  // Small-sample factors of the raw and reweighted scatter (mcd_small_sample.hpp).
  SmallSample small_sample = SmallSample::Both;
  // Scaling of the raw scatter (mcd_common.hpp): the normal-consistency factor or the median rule.
  RawConsistency raw_consistency = RawConsistency::NormalFactor;
  ProgressCallback progress;  // optional; false cancels
  // Threads (parallel.hpp) for the starting estimates' tanh, rank and
  // normal-score columns and OGK scales, the six starts' first subsets (side by side), and the C-steps:
  // the chains run in lockstep, their distances in one pass over row chunks
  // on the threads, their selections and refits side by side. The fit does
  // not depend on it.
  int threads = 1;
};

// Same input contract and errors as fast_mcd() (n > p, finite values, not all
// rows identical, alpha in [0.5, 1]); an exact fit is reported in the result.
// RobustFit::starts is the number of the six starts that gave a usable subset.
RobustFit det_mcd(DataView x, const DetMcdOptions& options = {});

namespace mcd_detail {
// The six starting scatter matrices of Hubert, Rousseeuw & Verdonck (2012) on
// standardised data z (p x p each, possibly singular): tanh correlation,
// Spearman correlation, normal-scores correlation, spatial-sign covariance,
// covariance of the ceil(n/2) rows nearest the origin, raw OGK (Maronna &
// Zamar 2002) with Qn. with_ogk = false leaves out the last (used by MRCD
// for large p, where p^2 Qn evaluations dominate).
// z must be standardised by column medians and Qn (mcd_detail::standardise
// with ColumnScale::Qn): the OGK start takes the column scales of z as 1.
std::vector<Eigen::MatrixXd> deterministic_starts(const Eigen::MatrixXd& z, bool with_ogk);
// Step 3 of DetMCD for a start given by the eigenvectors of its scatter
// (columns) and the robust scales of z projected on them (the square roots of
// the re-estimated eigenvalues).
struct StartBasis {
  Eigen::MatrixXd vectors;
  Eigen::VectorXd root;
};
// The same, with caller-provided Qn scratch memory; when with_ogk and
// ogk_basis is not null, it receives the OGK start's basis (so that step 3
// need not recompute it: start_distances(z, *ogk_basis)).
// `scale` is the robust scale z was standardised with (ColumnScale::Qn or
// ColumnScale::Tau; the short form above takes Qn).
// `threads`: the rank columns and the OGK scales run on that many threads
// (parallel.hpp; the result does not depend on it).
std::vector<Eigen::MatrixXd> deterministic_starts(const Eigen::MatrixXd& z, bool with_ogk, ScaleWorkspace& workspace,
                                                  StartBasis* ogk_basis, ColumnScale scale, int threads = 1);
// Scratch of step 3 for one start: one per thread, kept for the whole fit,
// so that the six starts do not allocate and fault in O(n p) memory each
// (with glibc's heap trimming that doubled the time of a start, measured).
struct StartScratch {
  ScaleWorkspace scale;        // for the robust scales of the projections
  Eigen::MatrixXd projected;   // z times the eigenvectors, then z Sigma^{-1/2}
  std::vector<double> select;  // order-statistic scratch of the medians
};
// Step 3 of DetMCD for one start: eigenvalues re-estimated as the squared
// robust scale (`scale`: the one z was standardised with) of the projections
// on the eigenvectors of s; d2 receives the squared distances of all rows to
// the centre Sigma^{1/2} med(z Sigma^{-1/2}). Returns false (d2 untouched)
// when a projection has zero scale.
bool start_distances(Eigen::VectorXd& d2, const Eigen::MatrixXd& z, const Eigen::MatrixXd& s, ColumnScale scale,
                     StartScratch& scratch);
// The same for a start whose basis is already known (false when a root is 0).
bool start_distances(Eigen::VectorXd& d2, const Eigen::MatrixXd& z, const StartBasis& basis, StartScratch& scratch);
}  // namespace mcd_detail

}  // namespace ellipsa::core
