// ellipsa_model_fit: checks, missing-value policy, dispatch to one estimator
// family, and the factorisation every model carries.
#include <algorithm>
#include <cmath>
#include <memory>

#include "boundary.hpp"
#include "cell_names.hpp"
#include "core/classical.hpp"
#include "core/error.hpp"
#include "core/missing.hpp"
#include "core/shrinkage.hpp"
#include "core/singularity.hpp"
#include "fit_common.hpp"
#include "matrix_view.hpp"
#include "memory_ceiling.hpp"
#include "threads.hpp"

namespace ellipsa::capi {

core::DataView PreparedData::used() const { return copied ? core::make_view(complete_copy) : all; }

namespace {
// The rows a fit uses under the options' missing-value policy; the core's
// located errors index d.all, the caller's data.
void select_rows(PreparedData& d, const ellipsa_fit_options& o) {
  const auto empty_columns = core::all_missing_columns(d.all);
  if (!empty_columns.empty() && d.all.rows() > 0)
    throw core::LocatedError(core::ErrorKind::Data, "data", -1, empty_columns.front(), "has no value in any row");
  // Every row is used (kept_rows stays empty: no list of n rows to build).
  if (o.missing == ELLIPSA_MISSING_REFUSE) {
    core::require_finite(d.all, "data");
    return;
  }
  if (core::all_finite_in_memory_order(d.all)) return;
  // Infinite values are refused under every policy (found here, before any row is left out).
  auto complete = core::select_complete_rows(d.all);
  if (o.missing == ELLIPSA_MISSING_EM) {
    // Every row with an observed value takes part; the mixture's EM handles
    // the missing coordinates. A row with nothing observed teaches nothing.
    for (int64_t i = 0; i < d.all.rows(); ++i) {
      const bool any = (d.all.row(i).array() == d.all.row(i).array()).any();
      (any ? d.kept_rows : d.dropped_rows).push_back(i);
    }
  } else {
    d.kept_rows.assign(complete.rows.begin(), complete.rows.end());
    size_t k = 0;
    for (int64_t i = 0; i < d.all.rows(); ++i) {
      if (k < d.kept_rows.size() && d.kept_rows[k] == i) ++k;
      else d.dropped_rows.push_back(i);
    }
  }
  if (d.dropped_rows.empty()) {
    d.kept_rows.clear();
  } else {
    d.complete_copy = core::gather(d.all, std::vector<core::Index>(d.kept_rows.begin(), d.kept_rows.end()));
    d.copied = true;
  }
}
}  // namespace

PreparedData prepare(const ellipsa_matrix* data, const ellipsa_fit_options& o) {
  PreparedData d{checked_view(data, "data"), {}, false, {}, {}, {}};
  if (d.all.cols() < 1) throw Misuse{ELLIPSA_ERR_SHAPE, "data must have at least one column"};
  d.columns = column_names_or_default(o.column_names, d.all.cols());
  naming_places("data", d.columns, [&] { select_rows(d, o); });
  return d;
}

namespace {
// When the scatter is examined for constant and collinear columns: an exactly
// collinear set of columns usually factors "successfully" with a pivot at
// rounding level, and distances computed with it would be noise. Two cheap
// indicators choose when to run the eigenvalue test of diagnose_scatter (which
// decides): the pivot ratio (min L_ii / max L_ii)^2, and the smallest residual
// fraction L_jj^2 / S_jj = 1 - R^2 of a column on the columns before it. The
// first depends on the columns' units and missed a rank-3 scatter of p = 5 whose
// variances ran from 5 to 1.3e7 (ratio 8e-8; fuzz regression input
// tests/fuzz/corpus/accumulator/regression-rank-deficient-scales); the second is unit-free.
// Units: both are dimensionless ratios of variances.
constexpr double kExaminePivotRatio = 1e-9;
constexpr double kExamineResidualFraction = 1e-6;

[[noreturn]] void explain_singular(const ellipsa_model& m, const core::SingularityReport& report) {
  std::string msg = "the scatter matrix is singular or nearly so";
  auto name = [&](core::Index j) { return "\"" + m.columns[static_cast<size_t>(j)] + "\""; };
  if (!report.constant_columns.empty()) {
    msg += "; constant columns:";
    for (auto j : report.constant_columns) msg += " " + name(j);
  }
  for (const auto& g : report.collinear_groups) {
    msg += "; collinear columns:";
    for (auto j : g.columns) msg += " " + name(j);
  }
  msg += ". Remove those columns, or fit with method ledoit-wolf or oas (shrinkage).";
  throw core::Error(core::ErrorKind::Singular, msg);
}
}  // namespace

void finalise_or_explain(ellipsa_model& m) {
  try {
    finalise(m);
  } catch (const core::Error& e) {
    if (e.kind() != core::ErrorKind::Singular || m.components.size() != 1) throw;
    explain_singular(m, core::diagnose_scatter(m.components.front().scatter));
  }
  const auto& factor = m.components.front().factor;
  if (m.kind == ELLIPSA_KIND_GAUSSIAN &&
      (factor.pivot_ratio() < kExaminePivotRatio || factor.smallest_residual_fraction() < kExamineResidualFraction)) {
    const auto report = core::diagnose_scatter(m.components.front().scatter);
    if (report.singular) explain_singular(m, report);
  }
}

std::function<bool(const char*, double)> progress_of(const ellipsa_fit_options& o) {
  if (o.progress == nullptr) return {};
  ellipsa_progress_fn fn = o.progress;
  void* user = o.progress_user;
  return [fn, user](const char* stage, double fraction) { return fn(stage, fraction, user) == 0; };
}

namespace {
// Explains "too few rows" with the names the user knows.
void require_rows(const PreparedData& d, int64_t needed, const char* method) {
  const int64_t n = d.used().rows();
  if (n < needed)
    throw core::Error(core::ErrorKind::Data, std::string(method) + " needs at least " + std::to_string(needed) +
                                                 " complete rows; " + std::to_string(n) + " available (" +
                                                 std::to_string(d.dropped_rows.size()) +
                                                 " dropped for missing values)");
}
}  // namespace

void fit_gaussian_classical(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o) {
  require_rows(d, 2, "the classical fit");
  const auto norm =
      o.divisor == ELLIPSA_DIVISOR_N ? core::Normalisation::ByCount : core::Normalisation::ByCountMinusOne;
  const auto est = core::classical_estimate(d.used(), norm, resolve_threads(o.threads));
  m.components.push_back({1.0, est.mean, est.covariance, {}});
  m.divisor = o.divisor;
}

void fit_gaussian_shrinkage(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o) {
  require_rows(d, 2, "a shrinkage fit");
  const auto method =
      o.method == ELLIPSA_METHOD_OAS ? core::ShrinkageMethod::OracleApproximating : core::ShrinkageMethod::LedoitWolf;
  const auto est = core::shrinkage_estimate(d.used(), method, resolve_threads(o.threads));
  m.components.push_back({1.0, est.mean, est.covariance, {}});
  m.shrinkage_intensity = est.intensity;
}

}  // namespace ellipsa::capi

extern "C" ELLIPSA_API ellipsa_status ellipsa_model_fit(ellipsa_model** out, const ellipsa_matrix* data,
                                                        const ellipsa_fit_options* options) {
  using namespace ellipsa::capi;
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_model_fit", [&] {
    require_not_null(out, "out");
    require_not_null(options, "options");
    const ellipsa_fit_options& o = *options;
    resolve_threads(o.threads);  // a bad ELLIPSA_THREADS fails before any work
    {
      // The ceiling is checked before anything that grows with n or p is allocated.
      const auto view = checked_view(data, "data");
      require_within_ceiling(o, view.rows(), view.cols());
    }
    const PreparedData d = prepare(data, o);
    auto m = std::make_unique<ellipsa_model>();
    m->method = o.method;
    m->columns = d.columns;
    m->dropped_rows = d.dropped_rows;
    m->rows_dropped = static_cast<int64_t>(d.dropped_rows.size());
    m->rows_used = d.used().rows();
    naming_places(
        "data", d.columns,
        [&] {
          switch (o.method) {
            case ELLIPSA_METHOD_CLASSICAL: fit_gaussian_classical(*m, d, o); break;
            case ELLIPSA_METHOD_LEDOIT_WOLF:
            case ELLIPSA_METHOD_OAS: fit_gaussian_shrinkage(*m, d, o); break;
            case ELLIPSA_METHOD_MCD:
            case ELLIPSA_METHOD_DETMCD:
            case ELLIPSA_METHOD_MRCD: fit_robust(*m, d, o); break;
            case ELLIPSA_METHOD_MIXTURE:
            default:  // ellipsa_fit_options_create() admits no other method
              m->kind = ELLIPSA_KIND_MIXTURE;
              fit_mixture(*m, d, o);
              break;
          }
        },
        &d.kept_rows);
    naming_places("data", d.columns, [&] { finalise_or_explain(*m); });
    record_reference(*m, o);
    *out = m.release();
    return ELLIPSA_OK;
  });
}
