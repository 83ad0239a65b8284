// The sufficient statistics of one EM iteration over a piece of the data,
// under given parameters: per component the responsibility-weighted count,
// mean and centred cross-products (MomentAccumulator, merged by the exact
// update of Chan, Golub & LeVeque), the plain moments of the rows (for the
// column variances that scale the regularisation), the log-likelihood and
// sum t log t. Pieces merge exactly, so a driver that splits the rows over
// processes, merges the statistics and runs the M-step gets one EM iteration
// of all rows. The E- and M-steps are those of fit_mixture()
// (mixture_em_steps.hpp). Complete rows only.
#pragma once
#include <Eigen/Core>
#include <vector>

#include "cholesky.hpp"
#include "data_view.hpp"
#include "mixture_em.hpp"
#include "moments.hpp"

namespace ellipsa::core {

class EmStatistics {
 public:
  // Throws Error(Singular) when a component's covariance is not positive
  // definite, Error(Argument) for inconsistent sizes.
  explicit EmStatistics(MixtureModel parameters);

  // Adds complete, finite rows (the caller screens missing values).
  void add(DataView x, int threads);
  // Adds another piece's statistics (same K and p; the caller checks that
  // they were computed under the same parameters).
  void merge(const EmStatistics& other);

  const MixtureModel& parameters() const { return parameters_; }
  Index rows() const { return overall_.rows(); }
  double log_likelihood() const { return log_likelihood_; }
  double sum_t_log_t() const { return sum_t_log_t_; }
  const std::vector<MomentAccumulator>& components() const { return components_; }
  const MomentAccumulator& overall() const { return overall_; }

  // Rebuilds statistics from their parts (the byte form of the C interface).
  static EmStatistics from_parts(MixtureModel parameters, std::vector<MomentAccumulator> components,
                                 MomentAccumulator overall, double log_likelihood, double sum_t_log_t);

  // The M-step of fit_mixture() on the merged statistics: the next parameters
  // with options.structure and the ridge of ridge(). Throws Error(Data) for
  // fewer rows than free parameters or columns without spread, and
  // Error(Singular) naming the first collapsed component (weight below
  // mixture_min_component_rows() rows or a covariance not positive definite):
  // fit_mixture() would re-seed or drop it, which needs the rows themselves.
  MixtureModel m_step(const MixtureOptions& options) const;
  // The ridge the M-step adds to the diagonals (absolute, one entry per
  // column): mixture_ridge() of the column variances of the rows added.
  Eigen::VectorXd ridge(const MixtureOptions& options) const;

 private:
  MixtureModel parameters_;
  std::vector<CholeskyFactor> factors_;
  std::vector<MomentAccumulator> components_;
  MomentAccumulator overall_;
  double log_likelihood_ = 0.0;
  double sum_t_log_t_ = 0.0;
};

}  // namespace ellipsa::core
