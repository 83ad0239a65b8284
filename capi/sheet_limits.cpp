// Control limits and distribution functions of the sheet catalog: each one a
// call of the C interface function of the same meaning.
#include <cstdint>
#include <string>

#include "boundary.hpp"
#include "sheet_args.hpp"
#include "sheet_catalog.hpp"

namespace ellipsa::capi::sheet {
namespace {

// Runs `call` (a C function writing its result through the pointer it gets)
// and puts the result in the one cell.
template <class Call>
void put(Grid& g, Call call) {
  double out = 0.0;
  const ellipsa_status s = call(&out);
  if (s != ELLIPSA_OK) {
    // The message names the argument after the C function's name: keep that part.
    const std::string m = ellipsa_last_error();
    const size_t cut = m.find(": ");
    throw Misuse{s, cut == std::string::npos ? m : m.substr(cut + 2)};
  }
  g.number(0, 0, out);
}

double need(const Arguments& a, const char* name) { return *a.number(name); }

}  // namespace

void eval_t2_limit(const Arguments& a, ellipsa_sheet_cache*, Grid& g) {
  const int64_t m = *a.whole_number("m", 1, int64_t{1} << 53);
  const int64_t p = *a.whole_number("p", 1, int64_t{1} << 53);
  const int64_t phase = a.whole_number("phase", 1, 2).value_or(2);
  const double level = a.number_or("level", 0.975);
  if (!(level > 0.0 && level < 1.0)) throw Misuse{ELLIPSA_ERR_ARGUMENT, "level: must be between 0 and 1"};
  put(g, [&](double* out) {
    return ellipsa_hotelling_limit(out, phase == 1 ? ELLIPSA_PHASE_ONE : ELLIPSA_PHASE_TWO, m, p, 1.0 - level);
  });
}

void eval_chi2_quantile(const Arguments& a, ellipsa_sheet_cache*, Grid& g) {
  put(g, [&](double* out) { return ellipsa_chi2_quantile(out, need(a, "probability"), need(a, "df")); });
}
void eval_chi2_tail(const Arguments& a, ellipsa_sheet_cache*, Grid& g) {
  put(g, [&](double* out) { return ellipsa_chi2_tail(out, need(a, "x"), need(a, "df")); });
}
void eval_f_quantile(const Arguments& a, ellipsa_sheet_cache*, Grid& g) {
  put(g, [&](double* out) { return ellipsa_f_quantile(out, need(a, "probability"), need(a, "df1"), need(a, "df2")); });
}
void eval_f_tail(const Arguments& a, ellipsa_sheet_cache*, Grid& g) {
  put(g, [&](double* out) { return ellipsa_f_tail(out, need(a, "x"), need(a, "df1"), need(a, "df2")); });
}
void eval_beta_quantile(const Arguments& a, ellipsa_sheet_cache*, Grid& g) {
  put(g, [&](double* out) { return ellipsa_beta_quantile(out, need(a, "probability"), need(a, "a"), need(a, "b")); });
}
void eval_beta_tail(const Arguments& a, ellipsa_sheet_cache*, Grid& g) {
  put(g, [&](double* out) { return ellipsa_beta_tail(out, need(a, "x"), need(a, "a"), need(a, "b")); });
}

void eval_version(const Arguments&, ellipsa_sheet_cache*, Grid& g) { g.text(0, 0, ellipsa_version()); }

}  // namespace ellipsa::capi::sheet
