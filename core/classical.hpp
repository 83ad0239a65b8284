// Classical (sample) mean and covariance with the input checks a caller needs:
// the estimate is only computed when it exists and can be factored in principle.
// The arithmetic is MomentAccumulator's (centred chunks, or the raw product only
// where the offset is small; pairwise merges), so data with a large offset keep
// their digits. The unweighted input checks share the accumulator's pass.
#pragma once
#include <Eigen/Core>

#include "data_view.hpp"
#include "moments.hpp"

namespace ellipsa::core {

struct ClassicalEstimate {
  Eigen::VectorXd mean;
  // Divisor: sum of weights (ByCount, the maximum-likelihood estimate) or
  // sum of weights - 1 (ByCountMinusOne, unbiased; for weights: frequency weights).
  Eigen::MatrixXd covariance;
  Normalisation normalisation = Normalisation::ByCountMinusOne;
  double weight_sum = 0.0;  // n when unweighted
  Index rows = 0;           // rows that entered (weight > 0)
};

// Throws Error(Data) when: fewer than 2 rows; any entry NaN or +-Inf (select
// complete rows first, see missing.hpp); n <= p (the covariance is singular: the
// message points to shrinkage); a column is constant (zero variance, named).
// `threads`: see MomentAccumulator::set_threads (the result does not depend on it).
ClassicalEstimate classical_estimate(DataView x, Normalisation norm, int threads = 1);

// Weighted version: w(i) >= 0 and finite (else Error(Argument) naming the row),
// one weight per row (else Error(Shape)); the weight sum must be positive, and
// above 1 for ByCountMinusOne (Error(Data)). Rows with weight 0 do not count
// towards n in the n <= p check.
ClassicalEstimate classical_estimate(DataView x, const Eigen::Ref<const Eigen::VectorXd>& w, Normalisation norm);

}  // namespace ellipsa::core
