// The mixture fit path: options -> core::select_mixture -> model, with the
// whole candidate table and the calibrated log-density cutoff.
#include <cmath>

#include "boundary.hpp"
#include "core/error.hpp"
#include "core/mixture_score.hpp"
#include "core/mixture_select.hpp"
#include "fit_common.hpp"
#include "mixture_convert.hpp"
#include "threads.hpp"

namespace ellipsa::capi {

core::CovarianceStructure to_core_structure(int32_t s) {
  switch (s) {
    case ELLIPSA_STRUCTURE_DIAGONAL: return core::CovarianceStructure::Diagonal;
    case ELLIPSA_STRUCTURE_TIED: return core::CovarianceStructure::Tied;
    case ELLIPSA_STRUCTURE_SPHERICAL: return core::CovarianceStructure::Spherical;
    default: return core::CovarianceStructure::Full;
  }
}

int32_t from_core_structure(core::CovarianceStructure s) {
  switch (s) {
    case core::CovarianceStructure::Diagonal: return ELLIPSA_STRUCTURE_DIAGONAL;
    case core::CovarianceStructure::Tied: return ELLIPSA_STRUCTURE_TIED;
    case core::CovarianceStructure::Spherical: return ELLIPSA_STRUCTURE_SPHERICAL;
    case core::CovarianceStructure::Full: break;
  }
  return ELLIPSA_STRUCTURE_FULL;
}

core::MixtureModel to_core_mixture(const ellipsa_model& m) {
  core::MixtureModel x;
  x.structure = to_core_structure(m.mixture->structure);
  const auto K = static_cast<Eigen::Index>(m.components.size());
  const auto p = static_cast<Eigen::Index>(m.dimension());
  x.weights.resize(K);
  x.means.resize(K, p);
  for (Eigen::Index k = 0; k < K; ++k) {
    const auto& c = m.components[static_cast<size_t>(k)];
    x.weights(k) = c.weight;
    x.means.row(k) = c.location.transpose();
    x.covariances.push_back(c.scatter);
  }
  return x;
}

// The level at which the log-density cutoff is calibrated on the fitting rows:
// the lower 2.5% of their log-densities (the mirror of the usual 0.975 screen).
constexpr double kCutoffTail = ELLIPSA_MIXTURE_CUTOFF_TAIL;

void fit_mixture(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o) {
  core::MixtureSelectionOptions s;
  s.k_min = o.k_min;
  s.k_max = o.k_max;
  if (o.structure == ELLIPSA_STRUCTURE_ALL)
    s.structures = {core::CovarianceStructure::Full, core::CovarianceStructure::Diagonal,
                    core::CovarianceStructure::Tied, core::CovarianceStructure::Spherical};
  else s.structures = {to_core_structure(o.structure)};
  s.fit.restarts = o.restarts;
  s.fit.max_iterations = o.max_iterations;
  s.fit.tolerance = o.tolerance;
  s.fit.regularisation = o.regularisation;
  s.fit.seed = o.seed;
  s.fit.missing =
      o.missing == ELLIPSA_MISSING_EM ? core::MissingHandling::EmOverMissing : core::MissingHandling::CompleteRows;
  s.fit.progress = progress_of(o);
  s.fit.threads = resolve_threads(o.threads);
  const core::DataView x = d.used();
  if (x.rows() < 1) throw core::Error(core::ErrorKind::Data, "no rows left to fit");
  auto sel = core::select_mixture(x, s);
  const auto& best = sel.best;

  MixturePart part;
  part.structure = from_core_structure(best.model.structure);
  part.log_likelihood = best.log_likelihood;
  part.parameters = best.n_parameters;
  part.bic = best.bic;
  part.icl = best.icl;
  part.converged = best.converged;
  part.iterations = best.iterations;
  // Calibrate on complete rows only: a row with missing coordinates has a
  // density over fewer coordinates and is not comparable.
  Eigen::VectorXd calib = best.log_density;
  for (Eigen::Index i = 0; i < x.rows(); ++i)
    if (x.row(i).hasNaN()) calib(i) = std::nan("");
  const auto cut = core::calibrate_outlier_cutoff(calib, kCutoffTail);
  part.log_density_cutoff = cut.log_density_cutoff;
  part.cutoff_level = 1.0 - kCutoffTail;
  for (size_t i = 0; i < sel.table.size(); ++i) {
    const auto& c = sel.table[i];
    Candidate e;
    e.components = static_cast<int32_t>(c.k);
    e.structure = from_core_structure(c.structure);
    e.log_likelihood = c.fitted ? c.log_likelihood : std::nan("");
    e.parameters = c.n_parameters > 0 ? c.n_parameters : core::mixture_parameter_count(c.k, x.cols(), c.structure);
    e.bic = c.fitted ? c.bic : std::nan("");
    e.icl = c.fitted ? c.icl : std::nan("");
    e.converged = c.fitted && c.converged;
    e.chosen = static_cast<core::Index>(i) == sel.winner;
    if (!c.fitted) e.reason = c.message;
    part.selection.push_back(e);
  }
  for (Eigen::Index k = 0; k < best.model.components(); ++k)
    m.components.push_back({best.model.weights(k),
                            best.model.means.row(k).transpose(),
                            best.model.covariances[static_cast<size_t>(k)],
                            {}});
  m.rows_used = best.rows_used;
  m.mixture = std::move(part);
}

}  // namespace ellipsa::capi
