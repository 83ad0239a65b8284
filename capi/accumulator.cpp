// Streaming fits: an accumulator handle over core::MomentAccumulator (mean and
// cross-products) and core::NormPowerSums (the fourth power sum of the row
// norms that the Ledoit-Wolf intensity needs), and a classical or shrinkage
// model made from it with the same checks as ellipsa_model_fit.
#include <memory>
#include <string>

#include "boundary.hpp"
#include "cell_names.hpp"
#include "core/error.hpp"
#include "core/missing.hpp"
#include "core/moments.hpp"
#include "core/norm_power_sums.hpp"
#include "core/shrinkage.hpp"
#include "accumulator.hpp"
#include "fit_common.hpp"
#include "matrix_view.hpp"

namespace {

namespace core = ellipsa::core;

// The stream's arithmetic is the core's (core/norm_power_sums.hpp).
void merge_into(ellipsa_accumulator& a, const core::MomentAccumulator& b_moments, const core::NormPowerSums& b_norms) {
  core::merge_state(a.moments, a.norms, b_moments, b_norms);
}

void add_rows(ellipsa_accumulator& a, core::DataView x) { core::add_rows(a.moments, a.norms, x); }

}  // namespace

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
extern "C" {

ELLIPSA_API ellipsa_status ellipsa_accumulator_create(ellipsa_accumulator** out, int64_t p) {
  return guard("ellipsa_accumulator_create", [&] {
    require_not_null(out, "out");
    if (p < 1 || p > 100000) throw Misuse{ELLIPSA_ERR_ARGUMENT, "p must lie in [1, 100000]"};
    *out = new ellipsa_accumulator{core::MomentAccumulator(p), {}, 0};
    return ELLIPSA_OK;
  });
}

ELLIPSA_API void ellipsa_accumulator_destroy(ellipsa_accumulator* accumulator) { delete accumulator; }

ELLIPSA_API ellipsa_status ellipsa_accumulator_add(ellipsa_accumulator* accumulator, const ellipsa_matrix* rows) {
  return guard("ellipsa_accumulator_add", [&] {
    require_not_null(accumulator, "accumulator");
    const core::DataView x = ellipsa::capi::checked_view(rows, "rows");
    if (x.cols() != accumulator->moments.dimension())
      throw Misuse{ELLIPSA_ERR_SHAPE, "rows have " + std::to_string(x.cols()) + " columns, the accumulator " +
                                          std::to_string(accumulator->moments.dimension())};
    if (x.rows() == 0) return ELLIPSA_OK;
    // Checks first (an infinite value throws here), so a refused call adds nothing.
    const auto complete =
        ellipsa::capi::naming_places("chunk", x.cols(), [&] { return core::select_complete_rows(x); });
    if (complete.dropped == 0) {
      add_rows(*accumulator, x);
    } else if (!complete.rows.empty()) {
      const Eigen::MatrixXd kept = core::gather(x, complete.rows);
      add_rows(*accumulator, core::make_view(kept));
    }
    accumulator->skipped += complete.dropped;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_accumulator_merge(ellipsa_accumulator* into, const ellipsa_accumulator* from) {
  return guard("ellipsa_accumulator_merge", [&] {
    require_not_null(into, "into");
    require_not_null(from, "from");
    if (into == from) throw Misuse{ELLIPSA_ERR_ARGUMENT, "into and from are the same accumulator"};
    if (into->moments.dimension() != from->moments.dimension())
      throw Misuse{ELLIPSA_ERR_SHAPE, "the accumulators have different column counts"};
    merge_into(*into, from->moments, from->norms);
    into->skipped += from->skipped;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_accumulator_rows(int64_t* added, int64_t* skipped,
                                                    const ellipsa_accumulator* accumulator) {
  return guard("ellipsa_accumulator_rows", [&] {
    require_not_null(accumulator, "accumulator");
    if (added) *added = accumulator->moments.rows();
    if (skipped) *skipped = accumulator->skipped;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_from_accumulator(ellipsa_model** out, const ellipsa_accumulator* accumulator,
                                                          const ellipsa_fit_options* options) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_model_from_accumulator", [&] {
    require_not_null(out, "out");
    require_not_null(accumulator, "accumulator");
    require_not_null(options, "options");
    const int32_t method = options->method;
    if (method != ELLIPSA_METHOD_CLASSICAL && method != ELLIPSA_METHOD_LEDOIT_WOLF && method != ELLIPSA_METHOD_OAS)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "an accumulator makes classical, ledoit-wolf and oas models only"};
    if (options->missing == ELLIPSA_MISSING_REFUSE && accumulator->skipped > 0)
      throw core::Error(core::ErrorKind::Data, std::to_string(accumulator->skipped) +
                                                   " rows had a missing value and the options refuse missing values");
    const auto& acc = accumulator->moments;
    const int64_t p = acc.dimension(), n = acc.rows();
    auto m = std::make_unique<ellipsa_model>();
    m->method = method;
    m->columns = ellipsa::capi::column_names_or_default(options->column_names, p);
    if (method == ELLIPSA_METHOD_CLASSICAL) {
      if (n <= p)
        throw core::Error(core::ErrorKind::Data, "the classical fit needs more complete rows than columns (" +
                                                     std::to_string(n) + " rows, " + std::to_string(p) +
                                                     " columns); use a shrinkage method (ledoit-wolf, oas)");
      const auto norm =
          options->divisor == ELLIPSA_DIVISOR_N ? core::Normalisation::ByCount : core::Normalisation::ByCountMinusOne;
      Eigen::MatrixXd s = acc.covariance(norm);
      for (int64_t j = 0; j < p; ++j)
        if (!(s(j, j) > 0.0))
          throw core::Error(core::ErrorKind::Data, "column \"" + m->columns[static_cast<size_t>(j)] + "\" is constant");
      m->divisor = options->divisor;
      m->components.push_back({1.0, acc.mean(), std::move(s), {}});
    } else {
      if (n < 2)
        throw core::Error(core::ErrorKind::Data,
                          "a shrinkage fit needs at least 2 complete rows; " + std::to_string(n) + " available (" +
                              std::to_string(accumulator->skipped) + " skipped for missing values)");
      const auto kind =
          method == ELLIPSA_METHOD_OAS ? core::ShrinkageMethod::OracleApproximating : core::ShrinkageMethod::LedoitWolf;
      const auto est =
          core::shrinkage_from_moments(n, acc.mean(), acc.cross_products(), accumulator->norms.fourth, kind);
      m->components.push_back({1.0, est.mean, est.covariance, {}});
      m->shrinkage_intensity = est.intensity;
    }
    m->rows_used = n;
    m->rows_dropped = accumulator->skipped;  // which rows is not known here
    ellipsa::capi::finalise_or_explain(*m);
    ellipsa::capi::record_reference(*m, *options);
    *out = m.release();
    return ELLIPSA_OK;
  });
}

}  // extern "C"
