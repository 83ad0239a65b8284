// Order statistics of a sample without reordering it: the k-th smallest value
// together with the (k-1)-th, and the median built on them. Used by the MCD
// algorithms for the column medians and MADs of the standardisation and for
// the h-th smallest distance of every C-step, where n is large and the sample
// is needed again unchanged afterwards.
#pragma once
#include <vector>

#include "data_view.hpp"

namespace ellipsa::core {

// Values of order statistics k-1 and k (0-based ranks in the ascending order
// of v[0..n)). For k = 0, below equals at (there is no smaller rank).
struct OrderPair {
  double below = 0.0;
  double at = 0.0;
};

// Order statistics k-1 and k of v[0..n), 0 <= k < n, values finite or +-inf
// (no NaN). v is not modified; buf is scratch memory (its contents on entry
// do not matter; keeping it between calls saves the allocation). The values
// equal those std::nth_element finds on a copy; only the work differs.
// Throws Error(Argument) for k outside [0, n).
OrderPair order_statistics(const double* v, Index n, Index k, std::vector<double>& buf);

// Median of v[0..n), n >= 1: the middle order statistic, or for even n the
// midpoint of the two middle ones, as (a + b)/2 for opposite signs and
// a + (b - a)/2 otherwise, so that it cannot overflow; median() of
// robust_scale.hpp is this function. Throws
// Error(Data) for n < 1.
double median_of(const double* v, Index n, std::vector<double>& buf);

// Median absolute deviation of v[0..n) about `centre` (normally its median),
// divided by Phi^-1(3/4) (about 0.6745) so that it estimates sigma at the
// normal; no small-sample correction. dev and buf are scratch memory. The one
// MAD of the core: the MCD standardisation uses it.
double mad_about(const double* v, Index n, double centre, std::vector<double>& dev, std::vector<double>& buf);

}  // namespace ellipsa::core
