// Scoring rows under a fitted Gaussian mixture: responsibilities, hard labels,
// the log-density of each row under the mixture, and an outlier rule built on
// that log-density. Also the E-step pieces the EM fit shares with scoring.
#pragma once
#include <Eigen/Core>
#include <vector>

#include "cholesky.hpp"
#include "data_view.hpp"
#include "mixture_em.hpp"

namespace ellipsa::core {

struct MixtureScores {
  Eigen::MatrixXd responsibilities;  // n x K, rows sum to 1
  Eigen::VectorXi labels;            // n, argmax of the responsibilities (ties: lower index)
  Eigen::VectorXd log_density;       // n, log sum_k pi_k phi(x_i; mu_k, Sigma_k)
};

// Scores every row of x (n x p, p = model dimension). A row with missing values
// (NaN) is scored under the marginal mixture of its observed coordinates (the
// sub-vectors of the means, sub-matrices of the covariances): nothing is imputed,
// and its log-density is a density over fewer coordinates, so it is not directly
// comparable with the log-density of a complete row. A row with no observed value
// gets NaN responsibilities, label -1 and NaN log-density.
// Throws Error(Shape) for a column count that differs from the model, Error(Data)
// for an infinite value, Error(Singular) for a covariance that is not positive
// definite.
MixtureScores score_mixture(const MixtureModel& model, DataView x);

// Outlier rule on the mixture log-density. The cutoff is calibrated on the rows
// that fitted the model: it is the empirical lower `level`-quantile of their
// log-densities (linear interpolation between order statistics, the definition
// numbered 7 by Hyndman & Fan 1996; NaN entries, i.e. dropped rows, are ignored).
// A row is flagged when its log-density is strictly below the cutoff, so about a
// fraction `level` of the fitting rows is flagged by construction. level in (0, 1).
struct OutlierCutoff {
  double level = 0.01;
  double log_density_cutoff = 0.0;
};
OutlierCutoff calibrate_outlier_cutoff(const Eigen::VectorXd& fitting_log_density, double level);
// 1 where log_density < cutoff, 0 otherwise (also 0 for NaN: a row that could not
// be scored is not called an outlier).
Eigen::VectorXi flag_outliers(const Eigen::VectorXd& log_density, const OutlierCutoff& cutoff);

// --- E-step pieces shared with the EM fit -------------------------------------

// Cholesky factor of every component covariance. Throws Error(Singular) naming the
// first component that is not positive definite.
std::vector<CholeskyFactor> factor_components(const MixtureModel& model);

// log pi_k + log phi(x_i; mu_k, Sigma_k) for every (finite) row and component: n x K.
Eigen::MatrixXd weighted_log_densities(const MixtureModel& model, const std::vector<CholeskyFactor>& factors,
                                       DataView x);

// log w_k - (p log(2 pi) + log det Sigma_k) / 2 for each component k: the part
// of the log of w_k N(x; mu_k, Sigma_k) that does not depend on x.
Eigen::VectorXd component_log_offsets(const MixtureModel& model, const std::vector<CholeskyFactor>& factors, Index p);

// Turns log_joint (n x K, as above) into responsibilities in place by a row-wise
// log-sum-exp. Returns each row's log-density and sum_ik t_ik log t_ik (for ICL),
// computed in log space so that tiny responsibilities keep their digits.
struct Posterior {
  Eigen::VectorXd log_density;
  double sum_t_log_t = 0.0;
};
Posterior normalise_posterior(Eigen::MatrixXd& log_joint);

// The whole E-step for complete rows, chunk by chunk so that the n x K
// intermediate stays in cache: on return `responsibilities` is n x K.
Posterior e_step(const MixtureModel& model, const std::vector<CholeskyFactor>& factors, DataView x,
                 Eigen::MatrixXd& responsibilities);

Eigen::VectorXi hard_labels(const Eigen::MatrixXd& responsibilities);

}  // namespace ellipsa::core
