// Gaussian mixtures fitted by EM (Dempster, Laird & Rubin 1977): the model, the
// fitting options and the fit result. Model choice over K and structure is in
// mixture_select.hpp, scoring of rows under a fitted model in mixture_score.hpp,
// the E- and M-steps over missing coordinates in mixture_missing.hpp.
#pragma once
#include <Eigen/Core>
#include <cstdint>
#include <functional>
#include <vector>

#include "data_view.hpp"

namespace ellipsa::core {

// Shape of the component covariance matrices.
enum class CovarianceStructure {
  Full,       // one unrestricted matrix per component
  Diagonal,   // one diagonal matrix per component
  Tied,       // one unrestricted matrix shared by all components
  Spherical,  // one variance per component, times the identity
};

// What the fit does with rows that hold missing values (NaN).
enum class MissingHandling {
  CompleteRows,   // drop them (the count is reported); default
  EmOverMissing,  // keep them; EM over the missing coordinates (Little & Rubin)
};

// What the fit does with a collapsing component.
enum class CollapseAction {
  Reseed,  // restart it at the worst-explained row (falls back to Remove after
           // 2K re-seeds within one start, so the fit always ends)
  Remove,  // drop it; the fit continues with one component fewer
};

// Progress of a long call: stage name and fraction of the whole call in [0, 1],
// non-decreasing. Returning false cancels: the call throws Error(Cancelled).
using MixtureProgress = std::function<bool(const char* stage, double fraction)>;

// A fitted mixture. Covariances are stored once per component for every
// structure (K matrices, p x p); for Tied they are K copies of one matrix, for
// Diagonal and Spherical the off-diagonal entries are zero. The regularisation is
// already included.
struct MixtureModel {
  CovarianceStructure structure = CovarianceStructure::Full;
  Eigen::VectorXd weights;                   // K, positive, summing to 1
  Eigen::MatrixXd means;                     // K x p, row k is the mean of component k
  std::vector<Eigen::MatrixXd> covariances;  // K matrices p x p
  Index components() const { return weights.size(); }
  Index dimension() const { return means.cols(); }
};

struct MixtureOptions {
  Index components = 2;  // K >= 1
  CovarianceStructure structure = CovarianceStructure::Full;
  // Independent k-means++ starts. With more than one, each runs short EM
  // (short_run_tolerance) and the one of highest log-likelihood goes on to the
  // tolerance: the em-EM strategy of Biernacki, Celeux & Govaert (2003).
  int restarts = 3;
  int max_iterations = 500;  // EM iterations per start
  // Stop when |L_t - L_(t-1)| <= tolerance * |L_t|, L_(t-1) being the
  // log-likelihood of the model iteration t started from: the previous
  // iteration's, or an accepted acceleration jump's (which is not in the trace).
  double tolerance = 1e-8;
  // A short run stops when |L_t - L_(t-1)| <= short_run_tolerance * |L_t - L_0|
  // (L_0: after the run's first iteration), or at the tolerance above.
  double short_run_tolerance = 3e-3;
  // SQUAREM (Varadhan & Roland 2008) between EM iterations: the same kind of
  // optimum in far fewer iterations when EM crawls (a component more than the
  // data hold); a jump is kept only when its log-likelihood is no lower than
  // the iteration before it (mixture_acceleration.hpp).
  // false: plain EM.
  bool accelerate = true;
  // reg: after each M-step, reg * (the variance of column j over the data) is
  // added to diagonal entry j of every covariance, so the ridge follows each
  // column's units; a constant column, and every entry of a spherical
  // covariance, get reg * (the mean column variance). See mixture_ridge()
  // (mixture_em_steps.hpp). >= 0.
  double regularisation = 1e-6;
  std::uint64_t seed = 0;  // same seed and data -> bit-identical result
  int lloyd_steps = 5;     // Lloyd iterations after k-means++ seeding
  MissingHandling missing = MissingHandling::CompleteRows;
  CollapseAction on_collapse = CollapseAction::Reseed;
  // A component whose summed responsibility (effective row count) falls below this
  // has collapsed. A value < 0 selects the default: p + 1 rows for Full (fewer
  // cannot span the space), 2 for Diagonal and Spherical, 1 for Tied.
  double min_component_rows = -1.0;
  // Optional start, replacing the k-means++ seeding of the first start (the other
  // restarts - 1 starts are still seeded at random). Give at most one of them.
  // initial_labels: one entry per input row in [0, K) (entries of dropped rows are
  // ignored). initial_responsibilities: input rows x K, non-negative, each used row
  // with a positive sum (rows are normalised to sum 1).
  Eigen::VectorXi initial_labels;
  Eigen::MatrixXd initial_responsibilities;
  MixtureProgress progress;  // may be empty
  // Threads for the E-step and the weighted moments of complete rows
  // (parallel.hpp); the fit does not depend on it.
  int threads = 1;
};

enum class CollapseReason { SmallWeight, NotPositiveDefinite };

struct CollapseEvent {
  int start = 0;        // which start (0-based) it happened in
  int iteration = 0;    // EM iteration (0 = the initial M-step)
  Index component = 0;  // index of the component at that moment
  CollapseReason reason = CollapseReason::SmallWeight;
  CollapseAction action = CollapseAction::Reseed;
  Index seed_row = -1;  // Reseed: the input row the component restarted from
};

struct MixtureResult {
  MixtureModel model;  // K may be below the requested K after removals
  // Per input row (n rows, including dropped ones): responsibilities (n x K),
  // hard label (argmax, ties to the lower index), log-density under the mixture.
  // Dropped rows hold NaN / -1; score them with score_mixture().
  Eigen::MatrixXd responsibilities;
  Eigen::VectorXi labels;
  Eigen::VectorXd log_density;
  double log_likelihood = 0.0;  // sum of log_density over the used rows
  Index n_parameters = 0;       // free parameters, see mixture_parameter_count
  double bic = 0.0;             // -2 logL + n_parameters log(rows_used)
  double icl = 0.0;             // bic - 2 sum_i sum_k t_ik log t_ik
  bool converged = false;       // the relative-change test was met before the cap
  int iterations = 0;           // EM iterations of the kept start
  std::vector<double>
      loglik_trace;  // logL after each EM iteration, from iteration 0 (kept start; an accepted acceleration jump between two is not listed)
  std::vector<CollapseEvent> collapses;  // of every start, in order
  int best_start = 0;                    // which start was kept
  Index rows_used = 0;
  Index rows_dropped = 0;                // rows with a missing value (CompleteRows only)
  Eigen::VectorXd regularisation_added;  // p: the absolute amount added to each diagonal entry (mixture_ridge())
};

// Free parameters of a K-component mixture in p dimensions:
// Full K-1+Kp+Kp(p+1)/2; Diagonal K-1+2Kp; Tied K-1+Kp+p(p+1)/2; Spherical K-1+Kp+K.
Index mixture_parameter_count(Index k, Index p, CovarianceStructure structure);

// Fits the mixture by EM. Data: rows are observations, NaN marks a missing value.
// Throws Error(Argument) for bad options (K < 1, negative tolerance or
// regularisation, bad initial labels), Error(Data) for data the fit cannot use
// (K above the number of input rows, an infinite value, an all-missing row under EmOverMissing, fewer usable rows
// than free parameters, constant columns under Full/Tied or with no
// regularisation, fewer distinct rows than K), Error(Singular) when no component
// remains positive definite, Error(Cancelled) when the progress callback says so.
// Not converging within max_iterations is reported in the result, not thrown.
MixtureResult fit_mixture(DataView x, const MixtureOptions& options);

}  // namespace ellipsa::core
