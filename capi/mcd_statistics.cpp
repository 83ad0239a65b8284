// FAST-MCD across processes, from statistics: an accumulator of the rows whose
// squared distance is within a limit (the C-step's subset and the reweighting
// step's kept rows), and the MCD model from the subset's and the kept rows'
// accumulators, with the consistency, small-sample and reweighting factors of
// core::mcd_detail::finish_fit (core/mcd_common.hpp). The distances of a chunk
// come from ellipsa_model_score_v3() under a model of the current estimate.
#include <cmath>
#include <memory>
#include <string>

#include "accumulator.hpp"
#include "boundary.hpp"
#include "cell_names.hpp"
#include "core/cholesky.hpp"
#include "core/error.hpp"
#include "core/mcd_common.hpp"
#include "core/mcd_small_sample.hpp"
#include "core/missing.hpp"
#include "core/moments.hpp"
#include "core/norm_power_sums.hpp"
#include "fit_common.hpp"
#include "matrix_view.hpp"
#include "model.hpp"
#include "options.hpp"

namespace {
namespace core = ellipsa::core;
using ellipsa::capi::Misuse;
}  // namespace

using ellipsa::capi::guard;
using ellipsa::capi::require_not_null;
extern "C" {

ELLIPSA_API ellipsa_status ellipsa_accumulator_add_within(ellipsa_accumulator* accumulator, const ellipsa_matrix* rows,
                                                          const double* d2, double limit, int64_t* added) {
  return guard("ellipsa_accumulator_add_within", [&] {
    require_not_null(accumulator, "accumulator");
    const core::DataView x = ellipsa::capi::checked_view(rows, "rows");
    if (x.cols() != accumulator->moments.dimension())
      throw Misuse{ELLIPSA_ERR_SHAPE, "rows have " + std::to_string(x.cols()) + " columns, the accumulator " +
                                          std::to_string(accumulator->moments.dimension())};
    if (x.rows() > 0) require_not_null(d2, "d2");
    if (std::isnan(limit)) throw Misuse{ELLIPSA_ERR_ARGUMENT, "the limit is NaN"};
    // Checks first (an infinite value throws here), so a refused call adds nothing.
    const auto complete =
        ellipsa::capi::naming_places("chunk", x.cols(), [&] { return core::select_complete_rows(x); });
    std::vector<core::Index> chosen;
    int64_t skipped = 0;
    std::size_t next_complete = 0;
    for (core::Index i = 0; i < x.rows(); ++i) {
      const bool is_complete = next_complete < complete.rows.size() && complete.rows[next_complete] == i;
      if (is_complete) ++next_complete;
      if (!(d2[i] <= limit)) continue;  // NaN distances are never within
      if (is_complete) chosen.push_back(i);
      else ++skipped;
    }
    if (!chosen.empty()) {
      const Eigen::MatrixXd kept = core::gather(x, chosen);
      core::add_rows(accumulator->moments, accumulator->norms, core::make_view(kept));
    }
    accumulator->skipped += skipped;
    if (added) *added = static_cast<int64_t>(chosen.size());
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_from_mcd_statistics(ellipsa_model** out, const ellipsa_accumulator* subset,
                                                             const ellipsa_accumulator* kept, int64_t rows,
                                                             const ellipsa_fit_options* options) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_model_from_mcd_statistics", [&] {
    require_not_null(out, "out");
    require_not_null(subset, "subset");
    require_not_null(options, "options");
    const ellipsa_fit_options& o = *options;
    if (o.method != ELLIPSA_METHOD_MCD) throw Misuse{ELLIPSA_ERR_ARGUMENT, "the options must be of method mcd"};
    if (o.consistency != ELLIPSA_CONSISTENCY_NORMAL)
      throw Misuse{ELLIPSA_ERR_ARGUMENT,
                   "the median consistency rule needs the median distance of all rows; from statistics only the "
                   "normal rule is available"};
    if (o.alpha != 0.5)
      throw Misuse{ELLIPSA_ERR_ARGUMENT,
                   "alpha must be 0.5: for other alpha the scoring reference counts the flagged rows, which "
                   "statistics do not list"};
    const int64_t p = subset->moments.dimension();
    if (kept != nullptr && kept->moments.dimension() != p)
      throw Misuse{ELLIPSA_ERR_SHAPE, "the subset and kept accumulators have different column counts"};
    if (rows <= p)
      throw core::Error(core::ErrorKind::Data, "the MCD needs more rows than columns (" + std::to_string(rows) +
                                                   " rows, " + std::to_string(p) + " columns)");
    const int64_t h = core::mcd_subset_size(rows, p, o.alpha);
    if (subset->moments.rows() != h)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "the subset holds " + std::to_string(subset->moments.rows()) +
                                             " rows; h for " + std::to_string(rows) + " rows is " + std::to_string(h)};
    if (kept != nullptr && kept->moments.rows() > rows)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "the kept accumulator holds more rows than the data"};
    auto m = std::make_unique<ellipsa_model>();
    m->method = ELLIPSA_METHOD_MCD;
    m->columns = ellipsa::capi::column_names_or_default(o.column_names, p);
    m->rows_used = rows;
    m->rows_dropped = subset->skipped;
    const core::SmallSampleFactors ss = core::small_sample_factors(
        core::McdFamily::Fast, o.small_sample ? core::SmallSample::Both : core::SmallSample::Off, rows, p, o.alpha);
    const Eigen::MatrixXd cov_h = subset->moments.covariance(core::Normalisation::ByCount);
    core::CholeskyFactor chol;
    if (!chol.compute(cov_h))
      throw core::Error(core::ErrorKind::Singular,
                        "the covariance of the h-subset is not positive definite (rows on a hyperplane?); "
                        "fit with ellipsa_model_fit to see the exact fit");
    ellipsa::capi::RobustPart part;
    part.h = h;
    part.consistency_factor = core::mcd_consistency_factor(h, rows, p);
    part.consistency_rule = ELLIPSA_CONSISTENCY_NORMAL;
    part.reweight_factor = core::reweight_consistency_factor(ELLIPSA_MCD_REWEIGHT_LEVEL, p);
    part.small_sample_raw = ss.raw;
    part.small_sample_reweighted = ss.reweighted;
    part.raw_log_det = chol.log_determinant();
    part.raw_location = subset->moments.mean();
    const Eigen::MatrixXd raw = part.consistency_factor * ss.raw * cov_h;
    part.raw_scatter = 0.5 * (raw + raw.transpose());
    Eigen::VectorXd location = part.raw_location;
    Eigen::MatrixXd scatter = part.raw_scatter;
    if (kept != nullptr) {
      if (auto est = core::reweighted_estimate(kept->moments, part.reweight_factor * ss.reweighted)) {
        location = est->mean;
        scatter = 0.5 * (est->scatter + est->scatter.transpose());
      }
    }
    m->components.push_back({1.0, std::move(location), std::move(scatter), {}});
    m->robust = std::move(part);
    ellipsa::capi::finalise_or_explain(*m);
    ellipsa::capi::record_reference(*m, o);
    *out = m.release();
    return ELLIPSA_OK;
  });
}

}  // extern "C"
