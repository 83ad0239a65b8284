// Hotelling T^2: control limits for individual observations.
#pragma once
#include <Eigen/Core>

#include "data_view.hpp"

namespace ellipsa::core {

// Tracy, Young & Mason (1992), J. Quality Technology 24, 88-95: upper control
// limits for T^2 = (x - xbar)' S^-1 (x - xbar) of individual observations, with
// xbar, S (divisor m-1) from m reference rows of p variables, false-alarm
// probability alpha in (0, 1).
// Phase I (a row that was one of the m): UCL = ((m-1)^2/m) BetaQ(1-alpha; p/2, (m-p-1)/2);
// needs m > p + 1. Phase II (a new row): UCL = p(m+1)(m-1)/(m(m-p)) FQ(1-alpha; p, m-p);
// needs m > p. Throws Error(Argument) otherwise.
double t2_phase1_limit(Index m, Index p, double alpha);
double t2_phase2_limit(Index m, Index p, double alpha);
// The same limits and their upper-tail probabilities P(T^2 > t2) for a
// possibly non-integer number of reference rows m (an effective count), with
// the same conditions on m. Phase I: 0 at and beyond the bound (m-1)^2/m.
double t2_phase1_limit_real(double m, Index p, double alpha);
double t2_phase2_limit_real(double m, Index p, double alpha);
double t2_phase1_sf(double t2, double m, Index p);
double t2_phase2_sf(double t2, double m, Index p);

}  // namespace ellipsa::core
