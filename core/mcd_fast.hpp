// FAST-MCD (Rousseeuw & Van Driessen 1999, Technometrics 41, 212-223): the
// Minimum Covariance Determinant estimator by random starts and C-steps, with
// the nested subsampling scheme for large n and the exact algorithm for p = 1.
//
// Reproducibility: all randomness comes from std::mt19937_64 seeded with
// options.seed and an unbiased rejection sampler of our own (no
// std::uniform_int_distribution, whose output differs between standard
// libraries); ties at the h-th distance are broken by the values of the rows.
// The same data and seed give bit-identical results on one platform and BLAS.
#pragma once
#include <cstddef>
#include <cstdint>

#include "mcd_common.hpp"

namespace ellipsa::core {

// Random starts handed to each thread at once when a fit has more than one
// thread (on one thread every start is its own round). The progress callback
// is asked between rounds, so this bounds the work between two calls. One
// start on a group (p + 1 rows, then two C-steps on 300 rows, p = 10) takes
// about 25 microseconds here, starting a thread about 50 (measured): rounds of
// 16 starts per thread left FAST-MCD's start stage 20% slower than one round
// per group (100 starts at the defaults, 50 per thread on two).
constexpr int kFastMcdStartsPerThread = 50;
// Bytes the finished starts of one round may hold (each keeps its fit: about
// 3 p^2 + h words) before the round is cut shorter: at most
// kFastMcdStartsPerThread per thread, at least one per thread. At p = 10 a
// round of 100 starts holds under 1 MiB; at p = 200 a start holds about 1 MiB,
// and 100 of them would outgrow the fit's memory estimate (capi/memory_ceiling.cpp
// adds this budget per fit).
constexpr std::size_t kFastMcdRoundBytes = std::size_t{16} << 20;

struct FastMcdOptions {
  double alpha = 0.5;  // h = mcd_subset_size(n, p, alpha), alpha in [0.5, 1]
  std::uint64_t seed = 0;
  int starts = 500;              // random (p+1)-subsets in total
  int best_kept = 10;            // candidates carried to the next stage
  int initial_csteps = 2;        // C-steps per start (and on the pooled set)
  int max_csteps = 200;          // cap for "to convergence" on the full data
  Index nested_threshold = 600;  // n above this: nested scheme
  Index group_size = 300;        // rows per group in the nested scheme
  int max_groups = 5;            // at most max_groups * group_size rows pooled
  // Nested scheme, last stage: Rousseeuw & Van Driessen (1999) iterate "the
  // m_full best results" on the full data and leave m_full to the data size.
  // Here m_full = clamp(full_data_rows / n, 1, best_kept): all best_kept
  // candidates up to n = full_data_rows / best_kept (20000 by default), fewer
  // beyond, so that the full-data C-steps grow like n, not like n * best_kept.
  Index full_data_rows = 200000;
  double reweight_level = 0.975;  // reweighting cutoff chi2q(p, level)
  // Small-sample factors of the raw and reweighted scatter (mcd_small_sample.hpp).
  SmallSample small_sample = SmallSample::Both;
  // Scaling of the raw scatter (mcd_common.hpp): the normal-consistency factor or the median rule.
  RawConsistency raw_consistency = RawConsistency::NormalFactor;
  ProgressCallback progress;  // optional; false cancels
  // Threads (parallel.hpp): the random starts of a round and the candidates
  // of a round of C-steps side by side, the distances of all rows, the
  // standardisation and the reweighting's distances. The fit does not depend on it: the
  // subsets are drawn in start order beforehand, a subset that must grow
  // draws from a stream of its own (seeded by the seed and the start's
  // index), and outcomes are taken in order.
  int threads = 1;
};

// x: n x p complete rows (no NaN/inf), n > p.
// Throws Error(Data) for n <= p (use mrcd()), non-finite values, all rows
// identical; Error(Argument) for alpha outside [0.5, 1] or a bad option;
// Error(Cancelled) when the progress callback returns false.
// An exact fit is a result (RobustFit::exact_fit), not an error.
RobustFit fast_mcd(DataView x, const FastMcdOptions& options = {});

// The exact univariate MCD (p = 1): sort, then the h-window of consecutive
// order statistics with the smallest variance, O(n log n). fast_mcd() and
// det_mcd() call it for p = 1; exposed for tests.
RobustFit univariate_mcd(DataView x, double alpha, const mcd_detail::FinishRule& rule = {});

}  // namespace ellipsa::core
