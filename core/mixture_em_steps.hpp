// The steps of the mixture EM (mixture_em.cpp) as separate pieces, so that a
// caller holding only merged statistics (a distributed driver through the C
// interface, mixture_em_statistics.hpp) runs the very code fit_mixture() runs:
// the E-step of complete rows, the M-step from per-component moments, the
// collapse test and the column check that sets the regularisation.
#pragma once
#include <Eigen/Core>
#include <cmath>
#include <vector>

#include "cholesky.hpp"
#include "data_view.hpp"
#include "mixture_em.hpp"
#include "mixture_missing.hpp"
#include "mixture_score.hpp"

namespace ellipsa::core {

// E-step for complete rows (Dempster, Laird & Rubin 1977): responsibilities
// into t (n x K) and the posterior summary, on `threads` threads (the result
// does not depend on it). factors: factor_components(model).
Posterior mixture_e_step_complete(const MixtureModel& model, const std::vector<CholeskyFactor>& factors, DataView x,
                                  Eigen::MatrixXd& t, int threads);

// M-step: the parameters from the responsibility-weighted moments of each
// component (weight, mean, centred cross-products) over `rows` rows, for the
// structure, with ridge(j) added to diagonal entry j (ridge: mixture_ridge(),
// length p; a spherical covariance adds their mean, which mixture_ridge() makes
// equal to each entry). A component of weight 0 gets a NaN covariance
// (collapsed_components() finds it).
MixtureModel mixture_m_step(const std::vector<ComponentMoments>& moments, double rows, CovarianceStructure structure,
                            Index p, const Eigen::VectorXd& ridge);

// The effective row count below which a component has collapsed
// (MixtureOptions::min_component_rows, or its default for the structure).
double mixture_min_component_rows(const MixtureOptions& options, Index p);

// The collapsed components of a model fitted to `rows` rows: weight * rows
// below min_rows, or a covariance that is not positive definite (start and
// iteration of the events are 0).
std::vector<CollapseEvent> collapsed_components(const MixtureModel& model, double rows, double min_rows);

// Refuses columns without spread (variance: column variances, divisor the
// count) where the regularisation cannot stand in for them (Error(Data) naming
// them); returns the mean of the column variances.
double mixture_check_columns(const Eigen::VectorXd& variance, const MixtureOptions& options);

// The ridge of the M-step, one entry per column (the one place it is computed,
// for fit_mixture() and the statistics path alike): options.regularisation
// times the variance of column j (variance: column variances over the data,
// divisor the count), so that a change of the units of one column changes its
// ridge alike and full, diagonal and tied fits are equivariant under column
// scaling. A constant column (after mixture_check_columns() accepted it) gets
// the regularisation times the mean column variance, and so does every column
// under the spherical structure. Throws as mixture_check_columns().
Eigen::VectorXd mixture_ridge(const Eigen::VectorXd& variance, const MixtureOptions& options);

// BIC (Schwarz 1978): -2 logL + parameters log(rows).
inline double mixture_bic(double log_likelihood, Index parameters, Index rows) {
  return -2.0 * log_likelihood + static_cast<double>(parameters) * std::log(static_cast<double>(rows));
}
// ICL (Biernacki, Celeux & Govaert 2000): BIC - 2 sum_ik t_ik log t_ik.
inline double mixture_icl(double bic, double sum_t_log_t) { return bic - 2.0 * sum_t_log_t; }

}  // namespace ellipsa::core
