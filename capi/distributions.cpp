// Distribution functions and Hotelling limits at the C boundary.
#include "boundary.hpp"
#include "core/distributions.hpp"
#include "core/error.hpp"
#include "core/hotelling.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
namespace core = ellipsa::core;

namespace {
template <class F>
ellipsa_status scalar_call(const char* name, double* out, F&& f) {
  return guard(name, [&] {
    require_not_null(out, "out");
    *out = f();
    return ELLIPSA_OK;
  });
}
}  // namespace

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_chi2_quantile(double* out, double probability, double df) {
  return scalar_call("ellipsa_chi2_quantile", out, [&] { return core::chi2_quantile(probability, df); });
}

ELLIPSA_API ellipsa_status ellipsa_chi2_tail(double* out, double x, double df) {
  return scalar_call("ellipsa_chi2_tail", out, [&] { return core::chi2_sf(x, df); });
}

ELLIPSA_API ellipsa_status ellipsa_f_quantile(double* out, double probability, double df1, double df2) {
  return scalar_call("ellipsa_f_quantile", out, [&] { return core::f_quantile(probability, df1, df2); });
}

ELLIPSA_API ellipsa_status ellipsa_f_tail(double* out, double x, double df1, double df2) {
  return scalar_call("ellipsa_f_tail", out, [&] { return core::f_sf(x, df1, df2); });
}

ELLIPSA_API ellipsa_status ellipsa_beta_quantile(double* out, double probability, double a, double b) {
  return scalar_call("ellipsa_beta_quantile", out, [&] { return core::beta_quantile(probability, a, b); });
}

ELLIPSA_API ellipsa_status ellipsa_beta_tail(double* out, double x, double a, double b) {
  return scalar_call("ellipsa_beta_tail", out, [&] { return core::beta_sf(x, a, b); });
}

ELLIPSA_API ellipsa_status ellipsa_hotelling_limit(double* out, int32_t phase, int64_t m, int64_t p, double alpha) {
  return scalar_call("ellipsa_hotelling_limit", out, [&]() -> double {
    // Tracy, Young & Mason (1992), computed once in the core (core/hotelling.*).
    if (phase == ELLIPSA_PHASE_ONE) return core::t2_phase1_limit(m, p, alpha);
    if (phase == ELLIPSA_PHASE_TWO) return core::t2_phase2_limit(m, p, alpha);
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "phase must be ELLIPSA_PHASE_ONE or ELLIPSA_PHASE_TWO"};
  });
}

}  // extern "C"
