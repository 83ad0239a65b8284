// Screening and profile functions of the sheet catalog: fit (through the
// cache) on the reference or on the rows themselves, score the rows through
// ellipsa_model_score(), and lay the numbers out as cells. No arithmetic of
// its own beyond choosing the largest contribution.
#include <cmath>
#include <string>
#include <vector>

#include "boundary.hpp"
#include "sheet_args.hpp"
#include "sheet_catalog.hpp"
#include "sheet_fit.hpp"

namespace ellipsa::capi::sheet {
namespace {

const std::initializer_list<ellipsa_method> kGaussianMethods = {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF,
                                                                ELLIPSA_METHOD_OAS,       ELLIPSA_METHOD_MCD,
                                                                ELLIPSA_METHOD_DETMCD,    ELLIPSA_METHOD_MRCD};

// Everything ellipsa_model_score() gives for the rows, in plain vectors.
struct Scored {
  std::vector<double> d2, p_value, contribution, conditional_drop;
  std::vector<int32_t> flag;
};

// The distribution p-values and flags come from: the `limit` argument, else
// the rows' role, as the batch tool does: rows screened against their own fit
// are fitting rows (`ellipsa screen`), rows scored against a reference range
// are new rows (`ellipsa score`).
// Functions without p-values or flags (distances, drivers, contributions) do
// not depend on it and use the chi-square, which every model accepts.
int32_t reference_of(const Arguments& a) {
  bool has_limit = false;
  for (const auto& spec : a.function().arguments) has_limit = has_limit || std::string(spec.name) == "limit";
  if (!has_limit) return ELLIPSA_REFERENCE_CHI2;
  int32_t reference = a.given("reference") ? ELLIPSA_REFERENCE_NEW_ROWS : ELLIPSA_REFERENCE_FITTING_ROWS;
  {
    if (const auto name = a.text("limit")) {
      if (ellipsa_reference_from_name(&reference, name->c_str()) != ELLIPSA_OK || reference == ELLIPSA_REFERENCE_MODEL)
        throw Misuse{ELLIPSA_ERR_ARGUMENT, "limit: unknown limit '" + *name + "' (new-rows, fitting-rows or chi2)"};
    }
  }
  return reference;
}

enum Want : unsigned { kDistance = 1, kPValue = 2, kFlag = 4, kContribution = 8, kConditional = 16 };

Scored score(const Arguments& a, ellipsa_sheet_cache* cache, unsigned want, double level) {
  const SheetRange& rows = a.range("rows");
  const SheetRange& fit_on = a.fitting_range();
  const FitRequest request = gaussian_request(a, ELLIPSA_METHOD_MCD, kGaussianMethods);
  const ModelPtr model = fitted(cache, fit_on, request, a.given("reference") ? "reference" : "rows");
  const auto n = static_cast<size_t>(rows.row_count());
  const auto np = n * static_cast<size_t>(rows.col_count());
  Scored s;
  ellipsa_scores buffers = ELLIPSA_SCORES_INIT;
  s.d2.resize(n);
  buffers.squared_distance = s.d2.data();
  s.flag.resize(n);
  buffers.flag = s.flag.data();
  if (want & kPValue) buffers.p_value = (s.p_value.resize(n), s.p_value.data());
  if (want & kContribution) buffers.contribution = (s.contribution.resize(np), s.contribution.data());
  if (want & kConditional) buffers.conditional_drop = (s.conditional_drop.resize(np), s.conditional_drop.data());
  const ellipsa_matrix view = rows.view();
  const ellipsa_status scored = ellipsa_model_score_v2(&buffers, model.get(), &view, level, reference_of(a));
  // A reference range with too few rows for the requested limit is a
  // condition of the sheet's data, not of a handle: ELLIPSA_ERR_DATA, as the
  // header lists for ellipsa_sheet_evaluate (found by fuzzing: it came out as
  // ELLIPSA_ERR_STATE).
  check(scored == ELLIPSA_ERR_STATE ? ELLIPSA_ERR_DATA : scored, "rows");
  return s;
}

double level_of(const Arguments& a) {
  const double level = a.number_or("level", 0.975);
  if (!(level > 0.0 && level < 1.0)) throw Misuse{ELLIPSA_ERR_ARGUMENT, "level: must be between 0 and 1"};
  return level;
}

// Writes one value per row; blank rows stay empty, rows with text are #VALUE!,
// rows that could not be scored (flag -1) stay empty.
template <class ValueOf>
void per_row(const Arguments& a, const Scored& s, Grid& g, ValueOf value_of) {
  const SheetRange& rows = a.range("rows");
  for (int64_t i = 0; i < rows.row_count(); ++i) {
    const auto k = static_cast<size_t>(i);
    if (rows.rows[k] == RowState::Bad) g.error(i, 0, ELLIPSA_SHEET_ERROR_VALUE);
    else if (rows.rows[k] == RowState::Usable && s.flag[k] >= 0) g.number(i, 0, value_of(k));
  }
}

ModelPtr profile(const Arguments& a, ellipsa_sheet_cache* cache, ellipsa_method default_method,
                 std::initializer_list<ellipsa_method> allowed) {
  return fitted(cache, a.range("rows"), gaussian_request(a, default_method, allowed), "rows");
}

}  // namespace

void shape_per_row(const Arguments& a, int64_t* rows, int64_t* cols) {
  if (a.function().arguments.size() > 1 && std::string(a.function().arguments[1].name) == "reference")
    (void)a.fitting_range();  // columns must agree
  *rows = a.range("rows").row_count();
  *cols = 1;
}
void shape_row_block_p(const Arguments& a, int64_t* rows, int64_t* cols) {
  (void)a.fitting_range();
  *rows = a.range("rows").row_count();
  *cols = a.range("rows").col_count();
}
void shape_per_column(const Arguments& a, int64_t* rows, int64_t* cols) {
  *rows = 1;
  *cols = a.range("rows").col_count();
}
void shape_square(const Arguments& a, int64_t* rows, int64_t* cols) { *rows = *cols = a.range("rows").col_count(); }
void shape_scalar(const Arguments&, int64_t* rows, int64_t* cols) { *rows = *cols = 1; }

void eval_distance(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const Scored s = score(a, cache, kDistance, 0.975);
  per_row(a, s, g, [&](size_t i) { return s.d2[i]; });
}

void eval_p_value(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const Scored s = score(a, cache, kPValue, 0.975);
  per_row(a, s, g, [&](size_t i) { return s.p_value[i]; });
}

void eval_flag(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const Scored s = score(a, cache, kFlag, level_of(a));
  per_row(a, s, g, [&](size_t i) { return static_cast<double>(s.flag[i]); });
}

void eval_driver(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const Scored s = score(a, cache, kContribution, 0.975);
  const auto p = static_cast<size_t>(a.range("rows").col_count());
  per_row(a, s, g, [&](size_t i) {
    // The first column with the largest contribution (NaN = not observed).
    size_t best = p;
    for (size_t j = 0; j < p; ++j) {
      const double c = s.contribution[i * p + j];
      if (!std::isnan(c) && (best == p || c > s.contribution[i * p + best])) best = j;
    }
    return best == p ? std::nan("") : static_cast<double>(best + 1);
  });
}

void eval_contributions(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const bool conditional = a.flag_or("conditional", false);
  const Scored s = score(a, cache, conditional ? kConditional : kContribution, 0.975);
  const std::vector<double>& values = conditional ? s.conditional_drop : s.contribution;
  const SheetRange& rows = a.range("rows");
  const int64_t p = rows.col_count();
  for (int64_t i = 0; i < rows.row_count(); ++i) {
    const auto k = static_cast<size_t>(i);
    for (int64_t j = 0; j < p; ++j) {
      if (rows.rows[k] == RowState::Bad) g.error(i, j, ELLIPSA_SHEET_ERROR_VALUE);
      else if (rows.rows[k] == RowState::Usable && s.flag[k] >= 0 && !std::isnan(rows.values(i, j)))
        g.number(i, j, values[k * static_cast<size_t>(p) + static_cast<size_t>(j)]);
    }
  }
}

void eval_center(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const ModelPtr m = profile(a, cache, ELLIPSA_METHOD_MCD, kGaussianMethods);
  const int64_t p = a.range("rows").col_count();
  std::vector<double> location(static_cast<size_t>(p));
  check(ellipsa_model_component(location.data(), p, nullptr, 0, nullptr, m.get(), 0), "rows");
  for (int64_t j = 0; j < p; ++j) g.number(0, j, location[static_cast<size_t>(j)]);
}

void eval_scatter(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const ModelPtr m = profile(a, cache, ELLIPSA_METHOD_MCD, kGaussianMethods);
  const int64_t p = a.range("rows").col_count();
  std::vector<double> scatter(static_cast<size_t>(p * p));
  check(ellipsa_model_component(nullptr, 0, scatter.data(), p * p, nullptr, m.get(), 0), "rows");
  for (int64_t i = 0; i < p; ++i)
    for (int64_t j = 0; j < p; ++j) g.number(i, j, scatter[static_cast<size_t>(i * p + j)]);
}

void eval_shrinkage(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const ModelPtr m = profile(a, cache, ELLIPSA_METHOD_LEDOIT_WOLF,
                             {ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS, ELLIPSA_METHOD_MRCD});
  double intensity = 0.0;
  check(ellipsa_model_diagnostic(&intensity, m.get(), "shrinkage_intensity"), "rows");
  g.number(0, 0, intensity);
}

}  // namespace ellipsa::capi::sheet
