// Minimum Regularised Covariance Determinant (Boudt, Rousseeuw, Vanduffel &
// Verdonck 2020, Statistics and Computing 30, 113-128): the MCD idea for
// p >= n (and any n), with C-steps on K(H) = rho T + (1 - rho) c S(H) so that
// every scatter matrix met is well conditioned.
//
// What this implementation does (and guarantees):
// - Data standardised by column median and Qn; target T = identity on that
//   scale (diag(Qn_j^2) in original units); RobustFit::target says so. Qn is
//   qn_scale(), with its finite-sample factor d_n (robust_scale.hpp), so that
//   the target's diagonal estimates the column variances without the upward
//   bias of the asymptotic Qn at small n (about 41% in Qn^2 at n = 20).
// - h = ceil(alpha n) clamped to [ceil(n/2), n] (the MCD formula
//   floor((n+p+1)/2) can exceed n when p >= n); c = Croux & Haesbroeck factor
//   for (h, n, p).
// - Starts: the deterministic starts of DetMCD (the raw OGK start only for
//   p <= 20), each regularised to condition number <= max_condition, h rows
//   nearest its centre.
// - rho: for each start's h-subset, the smallest rho in [0, 1) with
//   cond(rho I + (1-rho) c S(H)) <= max_condition (0 when already below);
//   the largest of these is fixed for the C-steps (the det of K cannot rise
//   in a C-step at fixed rho). If the final subset would need more, rho is
//   raised to that value at the end, so condition_number <= max_condition is
//   guaranteed (standardised units; it is reported as RobustFit::condition_number).
// - No reweighting: location = raw_location (mean of H), raw_scatter = K(H)
//   in original units, raw_d2 = distances under K(H). The regularised
//   distances are not chi-square calibrated when p >= n, so the final scatter
//   is reweight_factor * K(H) with reweight_factor = med(raw_d2) / chi2q(p, 0.5)
//   (the median calibration, common practice), and robust_d2 = raw_d2 /
//   reweight_factor.
// - outlier[i]: robust_d2[i] > chi2q(p, level), the rows that scoring against
//   the chi-square flags at that level.
#pragma once
#include "mcd_common.hpp"

namespace ellipsa::core {

struct MrcdOptions {
  double alpha = 0.75;          // h = ceil(alpha n), alpha in [0.5, 1]
  double max_condition = 50.0;  // condition-number bound of K (the paper's 50)
  int max_csteps = 200;
  double flag_level = 0.975;  // outlier cutoff level, see above
  ProgressCallback progress;
};

// x: n x p complete rows, n >= 2. Throws Error(Data) for non-finite values or
// all rows identical, Error(Argument) for alpha outside [0.5, 1] or
// max_condition <= 1, Error(Cancelled) on cancel.
RobustFit mrcd(DataView x, const MrcdOptions& options = {});

}  // namespace ellipsa::core
