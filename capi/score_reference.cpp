// Scoring references: which distribution a row's distance is compared with
// (chi-square, or Tracy, Young & Mason 1992 for a profile estimated from m
// rows), their names, the default a new model records, and the translation of
// a model and a requested reference into the core's ScoreReference.
#include "score_reference.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <string>

#include "boundary.hpp"
#include "name_table.hpp"
#include "core/error.hpp"
#include "core/mcd_common.hpp"
#include "core/mcd_small_sample.hpp"
#include "options.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
namespace core = ellipsa::core;

namespace ellipsa::capi {
namespace {

constexpr Named<int32_t> kReferenceNames[] = {{ELLIPSA_REFERENCE_MODEL, "model"},
                                              {ELLIPSA_REFERENCE_CHI2, "chi2"},
                                              {ELLIPSA_REFERENCE_NEW_ROWS, "new-rows"},
                                              {ELLIPSA_REFERENCE_FITTING_ROWS, "fitting-rows"}};

bool is_robust(const ellipsa_model& m) {
  return m.method == ELLIPSA_METHOD_MCD || m.method == ELLIPSA_METHOD_DETMCD || m.method == ELLIPSA_METHOD_MRCD;
}

// Which distribution a reference uses for a model: robust fits score their
// fitting rows against the phase II form too (with their own effective rows:
// the final estimate is not the plain covariance of the rows it scores, so the
// phase I bound does not hold), shrinkage fits against the chi-square (measured
// closest in docs/calibration.md).
core::ReferenceKind kind_for(const ellipsa_model& m, int32_t reference) {
  if (reference == ELLIPSA_REFERENCE_NEW_ROWS) return core::ReferenceKind::NewRows;
  if (reference != ELLIPSA_REFERENCE_FITTING_ROWS) return core::ReferenceKind::ChiSquare;
  if (is_robust(m)) return core::ReferenceKind::NewRows;
  if (m.method == ELLIPSA_METHOD_LEDOIT_WOLF || m.method == ELLIPSA_METHOD_OAS) return core::ReferenceKind::ChiSquare;
  return core::ReferenceKind::FittingRows;
}

// The rows m a reference needs for p coordinates (0 for the chi-square), and the rows it has.
double rows_needed(const ellipsa_model& m, int32_t reference) {
  const double p = static_cast<double>(m.dimension());
  switch (kind_for(m, reference)) {
    case core::ReferenceKind::NewRows: return p + 1.0;
    case core::ReferenceKind::FittingRows: return p + 2.0;
    default: return 0.0;
  }
}
// The rows the model offers a reference; none unless the fit itself had more
// rows than p + 1 (an effective count can exceed the rows, never stand in for them).
double rows_available(const ellipsa_model& m, int32_t reference) {
  if (m.rows_used < m.dimension() + 2) return static_cast<double>(m.rows_used);
  return reference == ELLIPSA_REFERENCE_FITTING_ROWS ? m.fitting_reference_rows : m.reference_rows;
}

}  // namespace

// The reference rows m of each distribution (docs/calibration.md):
// classical: the fitting rows for both; shrinkage, new rows:
// n / (1 - intensity)^(1/3) (shrinkage towards a one-number target has less
// estimation error than the sample covariance: at intensity 0 the estimate is
// the sample covariance and m = n is exact, towards intensity 1 the
// chi-square applies; the exponent 1/3 is our choice from the study, between
// m = n, too conservative, and n / (1 - intensity), too liberal: not a
// published result); MCD and
// DetMCD at alpha = 0.5: the simulation-calibrated effective rows
// (core/mcd_small_sample.hpp), other alpha: the rows kept by the reweighting;
// MRCD: h.
ReferenceRows reference_rows_of(const ellipsa_model& m) {
  const double n = static_cast<double>(m.rows_used);
  if (m.method == ELLIPSA_METHOD_LEDOIT_WOLF || m.method == ELLIPSA_METHOD_OAS) {
    const double keep = std::cbrt(1.0 - m.shrinkage_intensity.value_or(0.0));
    return {keep > 1e-3 ? n / keep : 1000.0 * n, n};
  }
  if (!m.robust) return {n, n};
  const auto& r = *m.robust;
  if (m.method == ELLIPSA_METHOD_MRCD) return {static_cast<double>(r.h), static_cast<double>(r.h)};
  const auto family = m.method == ELLIPSA_METHOD_MCD ? core::McdFamily::Fast : core::McdFamily::Deterministic;
  const int64_t p = m.dimension();
  if (r.h == core::mcd_subset_size(m.rows_used, p, 0.5)) {
    // At least p + 2 rows (where the F limit is already very large): with n
    // close to p, clean rows' robust distances are that large, and the
    // simulated m* can fall below p + 1, where no F exists.
    const double floor = static_cast<double>(p) + 2.0;
    const double fresh = core::effective_reference_rows(family, true, m.rows_used, p);
    const double fitting = core::effective_reference_rows(family, false, m.rows_used, p);
    if (fresh > 0.0 && fitting > 0.0) return {std::max(fresh, floor), std::max(fitting, floor)};
  }
  const double kept = n - static_cast<double>(r.outlier_rows.size());
  return {kept, kept};
}

const char* reference_name(int32_t reference) { return name_in(kReferenceNames, reference); }

bool reference_from_name(const char* name, int32_t* out) { return value_in(kReferenceNames, name, out); }

void record_reference(ellipsa_model& m, const ellipsa_fit_options& o) {
  const ReferenceRows rows = reference_rows_of(m);
  m.reference_rows = rows.new_rows;
  m.fitting_reference_rows = rows.fitting_rows;
  if (m.kind == ELLIPSA_KIND_MIXTURE) {
    m.reference = ELLIPSA_REFERENCE_CHI2;
    return;
  }
  if (o.reference != ELLIPSA_REFERENCE_MODEL) {
    const double needed = std::max(rows_needed(m, o.reference), static_cast<double>(m.dimension()) + 2.0);
    if (static_cast<double>(m.rows_used) < needed || rows_available(m, o.reference) < needed)
      throw core::Error(core::ErrorKind::Data,
                        std::string("the ") + reference_name(o.reference) + " reference needs at least " +
                            std::to_string(static_cast<int64_t>(needed)) + " reference rows for " +
                            std::to_string(m.dimension()) + " columns; the fit has " +
                            std::to_string(static_cast<int64_t>(rows_available(m, o.reference))));
    m.reference = o.reference;
    return;
  }
  // The default: new rows against the estimated profile, when there are rows
  // enough; MRCD (for p close to n) keeps its median-calibrated chi-square.
  // Evidence for this choice: docs/calibration.md.
  const bool enough = m.rows_used >= m.dimension() + 2 && m.reference_rows >= static_cast<double>(m.dimension()) + 2.0;
  m.reference = enough && m.method != ELLIPSA_METHOD_MRCD ? ELLIPSA_REFERENCE_NEW_ROWS : ELLIPSA_REFERENCE_CHI2;
}

core::ScoreReference score_reference(const ellipsa_model& m, int32_t requested) {
  if (requested != ELLIPSA_REFERENCE_MODEL && requested != ELLIPSA_REFERENCE_CHI2 &&
      requested != ELLIPSA_REFERENCE_NEW_ROWS && requested != ELLIPSA_REFERENCE_FITTING_ROWS)
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "unknown scoring reference " + std::to_string(requested)};
  const int32_t r = requested == ELLIPSA_REFERENCE_MODEL ? m.reference : requested;
  core::ScoreReference out;
  if (r == ELLIPSA_REFERENCE_CHI2) return out;
  if (m.kind == ELLIPSA_KIND_MIXTURE)
    throw Misuse{ELLIPSA_ERR_STATE, "mixture models are scored against the chi-square only"};
  if (rows_available(m, r) < rows_needed(m, r) ||
      (kind_for(m, r) != core::ReferenceKind::ChiSquare && m.rows_used < m.dimension() + 2))
    throw Misuse{ELLIPSA_ERR_STATE, std::string("the ") + reference_name(r) + " reference needs more reference rows (" +
                                        std::to_string(static_cast<int64_t>(rows_available(m, r))) + ") than columns" +
                                        (kind_for(m, r) == core::ReferenceKind::FittingRows ? " plus one" : "")};
  out.kind = kind_for(m, r);
  if (out.kind == core::ReferenceKind::ChiSquare) return out;
  out.rows = rows_available(m, r);
  // Tracy-Young-Mason use the divisor m - 1: scatter with divisor m (classical
  // by n, the shrinkage target's sample covariance) is scaled up to it. The
  // robust scatter carries its own consistency and small-sample factors, and
  // its effective rows were calibrated on its distances as they are.
  const double n = static_cast<double>(m.rows_used);
  const bool divisor_m = (m.method == ELLIPSA_METHOD_CLASSICAL && m.divisor == ELLIPSA_DIVISOR_N) ||
                         m.method == ELLIPSA_METHOD_LEDOIT_WOLF || m.method == ELLIPSA_METHOD_OAS;
  if (divisor_m) out.t2_scale = (n - 1.0) / n;
  return out;
}

}  // namespace ellipsa::capi

extern "C" {

ELLIPSA_API const char* ellipsa_reference_name(int32_t reference) { return ellipsa::capi::reference_name(reference); }

ELLIPSA_API ellipsa_status ellipsa_reference_from_name(int32_t* out, const char* name) {
  return guard("ellipsa_reference_from_name", [&] {
    require_not_null(out, "out");
    require_not_null(name, "name");
    int32_t r = 0;
    if (!ellipsa::capi::reference_from_name(name, &r))
      throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string("unknown scoring reference '") + name + "' (known: " +
                                             ellipsa::capi::known_names(ellipsa::capi::kReferenceNames) + ")"};
    *out = r;
    return ELLIPSA_OK;
  });
}

}  // extern "C"
