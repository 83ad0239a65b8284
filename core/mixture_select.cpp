#include "mixture_select.hpp"

#include <cmath>
#include <limits>

#include "error.hpp"

namespace ellipsa::core {

MixtureSelection select_mixture(DataView x, const MixtureSelectionOptions& o) {
  if (o.k_min < 1 || o.k_max < o.k_min) throw Error(ErrorKind::Argument, "mixture selection: need 1 <= k_min <= k_max");
  if (o.structures.empty()) throw Error(ErrorKind::Argument, "mixture selection: no covariance structure given");
  const double total = static_cast<double>((o.k_max - o.k_min + 1) * static_cast<Index>(o.structures.size()));
  const double nan = std::numeric_limits<double>::quiet_NaN();
  MixtureSelection out;
  double best_score = std::numeric_limits<double>::infinity();
  std::string first_failure;
  Index done = 0;
  for (CovarianceStructure s : o.structures) {
    for (Index k = o.k_min; k <= o.k_max; ++k, ++done) {
      MixtureOptions fo = o.fit;
      fo.components = k;
      fo.structure = s;
      fo.initial_labels.resize(0);
      fo.initial_responsibilities.resize(0, 0);
      if (o.fit.progress) {
        // Each candidate's own [0, 1] maps onto its share of the whole selection.
        fo.progress = [&o, done, total](const char* stage, double f) {
          return o.fit.progress(stage, (static_cast<double>(done) + f) / total);
        };
      }
      MixtureCandidate c;
      c.k = k;
      c.structure = s;
      try {
        MixtureResult r = fit_mixture(x, fo);
        c.fitted = true;
        c.k_final = r.model.components();
        c.log_likelihood = r.log_likelihood;
        c.n_parameters = r.n_parameters;
        c.bic = r.bic;
        c.icl = r.icl;
        c.converged = r.converged;
        const double score = o.criterion == SelectionCriterion::Bic ? r.bic : r.icl;
        if (score < best_score) {
          best_score = score;
          out.winner = static_cast<Index>(out.table.size());
          out.best = std::move(r);
        }
      } catch (const Error& e) {
        // Only outcomes of this candidate are recorded; a cancel or a bad option
        // applies to the whole selection.
        if (e.kind() != ErrorKind::Data && e.kind() != ErrorKind::Singular) throw;
        c.message = e.what();
        c.log_likelihood = c.bic = c.icl = nan;
        if (first_failure.empty()) first_failure = c.message;
      }
      out.table.push_back(std::move(c));
    }
  }
  if (out.winner < 0)
    throw Error(ErrorKind::Data, "mixture selection: no candidate could be fitted (" + first_failure + ")");
  return out;
}

}  // namespace ellipsa::core
