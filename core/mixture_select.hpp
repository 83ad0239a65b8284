// Choosing a Gaussian mixture over a range of K and covariance structures by an
// information criterion, with the whole table of candidates reported.
#pragma once
#include <Eigen/Core>
#include <string>
#include <vector>

#include "data_view.hpp"
#include "mixture_em.hpp"

namespace ellipsa::core {

enum class SelectionCriterion {
  Bic,  // -2 logL + k log n (Schwarz 1978), lower is better
  Icl,  // BIC - 2 sum_ik t_ik log t_ik (Biernacki, Celeux & Govaert 2000), lower is better
};

struct MixtureSelectionOptions {
  Index k_min = 1;
  Index k_max = 5;
  std::vector<CovarianceStructure> structures{CovarianceStructure::Full, CovarianceStructure::Diagonal,
                                              CovarianceStructure::Tied, CovarianceStructure::Spherical};
  SelectionCriterion criterion = SelectionCriterion::Bic;
  // Every other fitting choice (restarts, seed, tolerance, regularisation, missing
  // handling, progress ...). Its components, structure and initial start are
  // ignored. Every candidate is fitted with this same seed.
  MixtureOptions fit;
};

// One row of the table. A candidate that cannot be fitted (K above the number
// of rows, too few rows for its parameters, every component collapsed ...)
// stays in the table with fitted = false, the reason in `message`, and NaN
// criteria; the others still compete. A fitted candidate that stopped at
// max_iterations has converged = false and competes like the others.
struct MixtureCandidate {
  Index k = 0;        // requested K
  Index k_final = 0;  // K after collapse removals
  CovarianceStructure structure = CovarianceStructure::Full;
  bool fitted = false;
  std::string message;
  double log_likelihood = 0.0;
  Index n_parameters = 0;
  double bic = 0.0;
  double icl = 0.0;
  bool converged = false;
};

struct MixtureSelection {
  std::vector<MixtureCandidate> table;  // K ascending within structures in the given order
  Index winner = -1;                    // index into table: lowest criterion among fitted
  MixtureResult best;                   // the winner's full fit
};

// Fits every (K, structure) candidate and keeps the one with the lowest criterion
// (ties: the earlier row of the table). Throws Error(Argument) for an empty
// range or structure list, Error(Cancelled) when the callback says so, and
// Error(Data) when no candidate can be fitted (the message of the first failure).
MixtureSelection select_mixture(DataView x, const MixtureSelectionOptions& options);

}  // namespace ellipsa::core
