// Small-sample correction factors of the MCD scatter, by the method of Pison,
// Van Aelst & Willems (2002, Metrika 55): simulate clean normal samples,
// measure how far the consistency-corrected raw and reweighted MCD scatter
// fall below the truth as a function of n for each p and subset fraction, fit
// a smooth curve in n, and multiply by it. The coefficients are OUR OWN, fitted
// by scripts/calibration (mcd_bias mode, seeds and residuals in
// docs/calibration.md); they are not the paper's printed coefficients, which
// were not available to us.
#pragma once
#include "data_view.hpp"

namespace ellipsa::core {

// Which factors a fit applies. RawOnly exists for the simulation that fits
// the reweighted factors (it needs the raw factors in place); users choose
// between Off and Both.
enum class SmallSample { Off, RawOnly, Both };

// The two MCD algorithms reach different subsets on small samples (FAST-MCD
// the best of many random starts, DetMCD the best of six deterministic ones),
// so each has its own factors.
enum class McdFamily { Fast, Deterministic };

struct SmallSampleFactors {
  double raw = 1.0;         // multiplies the raw scatter (after Croux-Haesbroeck)
  double reweighted = 1.0;  // multiplies the reweighted scatter (after its consistency factor)
};

// The factors for n rows, p columns and subset fraction alpha in [0.5, 1]
// (Error(Argument) outside). Raw: 1 + g / (n - p)^b with (g, b) fitted per p;
// reweighted: the simulated factors, interpolated linearly in 1 / (n - p)
// (to 1 as n grows). Both are tabulated at alpha = 0.5 and 0.75 for p = 1..6,
// 8, 10, 15, 20; between tabulated p values the factor is interpolated
// linearly in p, beyond p = 20 the p = 20 values are used (an extrapolation,
// said in docs/calibration.md); between alpha = 0.75 and 1 it is
// interpolated linearly to 1 at alpha = 1 (h = n: no subset is chosen).
// `mode` Off gives 1 and 1, RawOnly a reweighted factor of 1.
SmallSampleFactors small_sample_factors(McdFamily family, SmallSample mode, Index n, Index p, double alpha);

// Simulation-calibrated reference of robust distances at alpha = 0.5: the
// effective number of reference rows m* for which the Tracy, Young & Mason
// (1992) phase II distribution, p(m+1)(m-1)/(m(m-p)) F(p, m-p), matches the
// 0.975 quantile of the squared distances of clean normal rows, either new
// rows (new_rows) or the rows that made the fit. An F with degrees of freedom
// fitted to robust distances follows Hardin & Rocke (2005); here the degrees
// of freedom come from our simulation (calibration_flag_rates
// --effective-rows), tabulated as n/m* by p and n and interpolated as the
// reweighted factors are (linear in 1/(n - p) and in p; constant beyond the
// largest n and p simulated). 0 when n <= p.
double effective_reference_rows(McdFamily family, bool new_rows, Index n, Index p);

}  // namespace ellipsa::core
