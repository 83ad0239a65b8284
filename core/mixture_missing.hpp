// Missing coordinates in Gaussian mixtures: rows grouped by which coordinates are
// missing, the log-density of each row's observed part, and the M-step moments of
// EM over the missing coordinates (conditional-Gaussian E-step, Little & Rubin).
#pragma once
#include <Eigen/Core>
#include <vector>

#include "data_view.hpp"
#include "missing.hpp"
#include "mixture_em.hpp"

namespace ellipsa::core {

// log pi_k + log phi(x_O; mu_O, Sigma_OO) for every row and component, from the
// marginal Gaussian of each row's observed coordinates O: n x K. Rows without an
// observed value hold NaN. Throws Error(Singular) if a sub-matrix is not positive
// definite.
Eigen::MatrixXd observed_weighted_log_densities(const MixtureModel& model, const MissingLayout& layout, DataView x);

// Memberships (K, summing to 1) of row `row` of x when its weighted
// log-density is -inf under every component: the row lies so far beyond the
// model's scale that every density underflows (a mean of 1e308 against rows
// near 0). The posterior's limit is taken in one scaled unit s = 2^e shared by
// the components (whiten_scaled, core/cholesky.hpp): with d2_k = s^2 u_k,
// log t_k = c + log pi_k - log phi-normaliser_k - s^2 u_k / 2, so the
// component with the smallest u takes the row unless another is within
// reach in double precision. Uses the row's observed coordinates.
Eigen::VectorXd far_row_memberships(const MixtureModel& model, DataView x, Index row);

// Sufficient statistics of one component for the M-step: the summed
// responsibility, the weighted mean and the weighted centred scatter
// sum_i t_ik E[(x_i - mean)(x_i - mean)' | x_O, component k].
struct ComponentMoments {
  double weight = 0.0;
  Eigen::VectorXd mean;
  Eigen::MatrixXd scatter;
};

// EM over missing coordinates (Little & Rubin 2002, "Statistical Analysis with
// Missing Data", ch. 11; the mixture case as in Dempster, Laird & Rubin 1977):
// under the current parameters of component k, a row's missing part given its
// observed part is Gaussian with mean mu_M + Sigma_MO Sigma_OO^-1 (x_O - mu_O) and
// covariance Sigma_MM - Sigma_MO Sigma_OO^-1 Sigma_OM. The weighted moments are
// taken of the rows completed with those conditional means (through
// MomentAccumulator), and the scatter gains sum_i t_ik times the conditional
// covariance on the missing block, which is what the expected complete-data
// cross-products require. Every row must have an observed value.
ComponentMoments missing_component_moments(const MixtureModel& current, Index k, const MissingLayout& layout,
                                           DataView x, const Eigen::VectorXd& responsibility);

// A model to take the first conditional expectations from, when EM over missing
// coordinates starts from responsibilities rather than parameters: component
// means are the responsibility-weighted means of the observed values of each
// column, covariances the diagonal matrix of the observed column variances.
MixtureModel provisional_missing_model(DataView x, const Eigen::MatrixXd& responsibilities,
                                       CovarianceStructure structure);

}  // namespace ellipsa::core
