// ellipsa_model_fit: checks, missing-value policy, dispatch to one estimator
// family, and the factorisation every model carries.
#include <algorithm>
#include <cmath>
#include <memory>

#include "boundary.hpp"
#include "core/classical.hpp"
#include "core/error.hpp"
#include "core/missing.hpp"
#include "core/shrinkage.hpp"
#include "core/singularity.hpp"
#include "fit_common.hpp"
#include "matrix_view.hpp"

namespace ellipsa::capi {

core::DataView PreparedData::used() const {
  return copied ? core::make_view(complete_copy) : all;
}

PreparedData prepare(const ellipsa_matrix* data, const ellipsa_fit_options& o) {
  PreparedData d{checked_view(data, "data"), {}, false, {}, {}, {}};
  if (d.all.cols() < 1) throw Misuse{ELLIPSA_ERR_SHAPE, "data must have at least one column"};
  d.columns = column_names_or_default(o.column_names, d.all.cols());
  const auto empty_columns = core::all_missing_columns(d.all);
  if (!empty_columns.empty() && d.all.rows() > 0)
    throw core::Error(core::ErrorKind::Data,
                      "column \"" + d.columns[static_cast<size_t>(empty_columns.front())] +
                          "\" has no value in any row");
  if (o.missing == ELLIPSA_MISSING_REFUSE) {
    core::require_finite(d.all, "data");
    for (int64_t i = 0; i < d.all.rows(); ++i) d.kept_rows.push_back(i);
    return d;
  }
  if (o.missing == ELLIPSA_MISSING_EM) {
    // Every row takes part; the mixture's EM handles the missing coordinates.
    for (int64_t i = 0; i < d.all.rows(); ++i) {
      const bool any = (d.all.row(i).array() == d.all.row(i).array()).any();
      if (any) d.kept_rows.push_back(i);
      else d.dropped_rows.push_back(i);  // nothing observed: nothing to learn from
    }
    for (int64_t j = 0; j < d.all.cols(); ++j)
      for (int64_t i = 0; i < d.all.rows(); ++i)
        if (std::isinf(d.all(i, j)))
          throw core::Error(core::ErrorKind::Data, "data row " + std::to_string(i + 1) + ", column \"" +
                                                       d.columns[static_cast<size_t>(j)] +
                                                       "\" is infinite");
    if (!d.dropped_rows.empty()) {
      d.complete_copy = core::gather(d.all, std::vector<core::Index>(d.kept_rows.begin(), d.kept_rows.end()));
      d.copied = true;
    }
    return d;
  }
  auto complete = core::select_complete_rows(d.all);
  d.kept_rows.assign(complete.rows.begin(), complete.rows.end());
  if (complete.dropped > 0) {
    std::vector<int64_t> kept(d.kept_rows);
    size_t k = 0;
    for (int64_t i = 0; i < d.all.rows(); ++i) {
      if (k < kept.size() && kept[k] == i) ++k;
      else d.dropped_rows.push_back(i);
    }
    d.complete_copy = core::gather(d.all, complete.rows);
    d.copied = true;
  }
  return d;
}

namespace {
// Pivot ratio (min L_ii / max L_ii)^2 below which the scatter is examined for
// constant and collinear columns: an exactly collinear set of columns usually
// factors "successfully" with a pivot at rounding level, and distances computed
// with it would be noise.
constexpr double kExaminePivotRatio = 1e-9;

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
  if (m.kind == ELLIPSA_KIND_GAUSSIAN && m.components.front().factor.pivot_ratio() < kExaminePivotRatio) {
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
    throw core::Error(core::ErrorKind::Data,
                      std::string(method) + " needs at least " + std::to_string(needed) +
                          " complete rows; " + std::to_string(n) + " available (" +
                          std::to_string(d.dropped_rows.size()) + " dropped for missing values)");
}
}  // namespace

void fit_gaussian_classical(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o) {
  require_rows(d, 2, "the classical fit");
  const auto norm = o.divisor == ELLIPSA_DIVISOR_N ? core::Normalisation::ByCount
                                                   : core::Normalisation::ByCountMinusOne;
  const auto est = core::classical_estimate(d.used(), norm);
  m.components.push_back({1.0, est.mean, est.covariance, {}});
  m.divisor = o.divisor;
}

void fit_gaussian_shrinkage(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o) {
  require_rows(d, 2, "a shrinkage fit");
  const auto method = o.method == ELLIPSA_METHOD_OAS ? core::ShrinkageMethod::OracleApproximating
                                                     : core::ShrinkageMethod::LedoitWolf;
  const auto est = core::shrinkage_estimate(d.used(), method);
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
    const PreparedData d = prepare(data, o);
    auto m = std::make_unique<ellipsa_model>();
    m->method = o.method;
    m->columns = d.columns;
    m->dropped_rows = d.dropped_rows;
    m->rows_dropped = static_cast<int64_t>(d.dropped_rows.size());
    m->rows_used = d.used().rows();
    switch (o.method) {
      case ELLIPSA_METHOD_CLASSICAL: fit_gaussian_classical(*m, d, o); break;
      case ELLIPSA_METHOD_LEDOIT_WOLF:
      case ELLIPSA_METHOD_OAS: fit_gaussian_shrinkage(*m, d, o); break;
      case ELLIPSA_METHOD_MCD:
      case ELLIPSA_METHOD_DETMCD:
      case ELLIPSA_METHOD_MRCD: fit_robust(*m, d, o); break;
      case ELLIPSA_METHOD_MIXTURE:
        m->kind = ELLIPSA_KIND_MIXTURE;
        fit_mixture(*m, d, o);
        break;
      default: throw Misuse{ELLIPSA_ERR_ARGUMENT, "unknown method"};
    }
    finalise_or_explain(*m);
    record_reference(*m, o);
    *out = m.release();
    return ELLIPSA_OK;
  });
}
