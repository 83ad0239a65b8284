// Mixture (regime) functions of the sheet catalog: labels, memberships and the
// model-choice table, through ellipsa_model_fit(), ellipsa_model_score() and
// ellipsa_model_selection().
#include <vector>

#include "boundary.hpp"
#include "options.hpp"
#include "sheet_args.hpp"
#include "sheet_catalog.hpp"
#include "sheet_fit.hpp"

namespace ellipsa::capi::sheet {
namespace {

struct Regimes {
  int32_t k = 0;  // components of the chosen mixture
  std::vector<int32_t> component, flag;
  std::vector<double> membership;  // n x k, row-major
};

Regimes classify(const Arguments& a, ellipsa_sheet_cache* cache) {
  const SheetRange& rows = a.range("rows");
  const SheetRange& fit_on = a.fitting_range();
  const ModelPtr m =
      fitted(cache, fit_on, mixture_request(a, ELLIPSA_STRUCTURE_FULL), a.given("reference") ? "reference" : "rows");
  Regimes r;
  check(ellipsa_model_describe(nullptr, nullptr, nullptr, &r.k, m.get()), "rows");
  const auto n = static_cast<size_t>(rows.row_count());
  r.component.resize(n);
  r.flag.resize(n);
  r.membership.resize(n * static_cast<size_t>(r.k));
  ellipsa_scores b = ELLIPSA_SCORES_INIT;
  b.component = r.component.data();
  b.flag = r.flag.data();
  b.membership = r.membership.data();
  const ellipsa_matrix view = rows.view();
  check(ellipsa_model_score(&b, m.get(), &view, 0.975), "rows");
  return r;
}

const char* const kTableTitles[] = {"components", "structure", "log_likelihood", "parameters",
                                    "bic",        "icl",       "converged",      "chosen"};
constexpr int64_t kTableColumns = 8;

}  // namespace

void shape_memberships(const Arguments& a, int64_t* rows, int64_t* cols) {
  (void)a.fitting_range();
  *rows = a.range("rows").row_count();
  *cols = mixture_request(a, ELLIPSA_STRUCTURE_FULL).k_max;
}

void shape_selection_table(const Arguments& a, int64_t* rows, int64_t* cols) {
  const FitRequest r = mixture_request(a, ELLIPSA_STRUCTURE_ALL);
  const int64_t structures = r.structure == ELLIPSA_STRUCTURE_ALL ? 4 : 1;
  *rows = 1 + (r.k_max - r.k_min + 1) * structures;
  *cols = kTableColumns;
  (void)a.range("rows");
}

void eval_regime(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const Regimes r = classify(a, cache);
  const SheetRange& rows = a.range("rows");
  for (int64_t i = 0; i < rows.row_count(); ++i) {
    const auto k = static_cast<size_t>(i);
    if (rows.rows[k] == RowState::Bad) g.error(i, 0, ELLIPSA_SHEET_ERROR_VALUE);
    else if (rows.rows[k] == RowState::Usable && r.flag[k] >= 0) g.number(i, 0, r.component[k] + 1.0);
  }
}

void eval_membership(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const Regimes r = classify(a, cache);
  const SheetRange& rows = a.range("rows");
  for (int64_t i = 0; i < rows.row_count(); ++i) {
    const auto k = static_cast<size_t>(i);
    for (int32_t c = 0; c < r.k; ++c) {
      if (rows.rows[k] == RowState::Bad) g.error(i, c, ELLIPSA_SHEET_ERROR_VALUE);
      else if (rows.rows[k] == RowState::Usable && r.flag[k] >= 0)
        g.number(i, c, r.membership[k * static_cast<size_t>(r.k) + static_cast<size_t>(c)]);
    }
  }
}

void eval_selection_table(const Arguments& a, ellipsa_sheet_cache* cache, Grid& g) {
  const FitRequest request = mixture_request(a, ELLIPSA_STRUCTURE_ALL);
  const ModelPtr m = fitted(cache, a.range("rows"), request, "rows");
  for (int64_t j = 0; j < kTableColumns; ++j) g.text(0, j, kTableTitles[j]);
  int64_t count = 0;
  check(ellipsa_model_selection(nullptr, 0, &count, m.get()), "rows");
  std::vector<ellipsa_candidate> table(static_cast<size_t>(count));
  for (auto& c : table) c.struct_size = sizeof(ellipsa_candidate);
  if (count > 0) check(ellipsa_model_selection(table.data(), count, &count, m.get()), "rows");
  if (count == 0) {
    // One candidate only: the model itself is the whole table.
    ellipsa_candidate c{};
    int32_t k = 0;
    check(ellipsa_model_describe(nullptr, nullptr, nullptr, &k, m.get()), "rows");
    double v = 0.0;
    c.components = k;
    c.structure = request.structure;
    check(ellipsa_model_diagnostic(&c.log_likelihood, m.get(), "log_likelihood"), "rows");
    check(ellipsa_model_diagnostic(&v, m.get(), "parameters"), "rows");
    c.parameters = static_cast<int64_t>(v);
    check(ellipsa_model_diagnostic(&c.bic, m.get(), "bic"), "rows");
    check(ellipsa_model_diagnostic(&c.icl, m.get(), "icl"), "rows");
    check(ellipsa_model_diagnostic(&v, m.get(), "converged"), "rows");
    c.converged = v != 0.0;
    c.chosen = 1;
    table.assign(1, c);
  }
  int64_t shape_rows = 0, shape_cols = 0;
  shape_selection_table(a, &shape_rows, &shape_cols);
  for (size_t t = 0; t < table.size() && static_cast<int64_t>(t) + 1 < shape_rows; ++t) {
    const ellipsa_candidate& c = table[t];
    const auto i = static_cast<int64_t>(t) + 1;
    g.number(i, 0, c.components);
    g.text(i, 1, structure_name(c.structure));
    g.number(i, 2, c.log_likelihood);
    g.number(i, 3, static_cast<double>(c.parameters));
    g.number(i, 4, c.bic);
    g.number(i, 5, c.icl);
    g.number(i, 6, c.converged);
    g.number(i, 7, c.chosen);
  }
}

}  // namespace ellipsa::capi::sheet
