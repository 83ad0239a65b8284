// Distribution functions and Hotelling limits at the C boundary.
#include <cmath>

#include "boundary.hpp"
#include "core/distributions.hpp"
#include "core/error.hpp"

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

ELLIPSA_API ellipsa_status ellipsa_hotelling_limit(double* out, int32_t phase, int64_t m, int64_t p,
                                                   double alpha) {
  return scalar_call("ellipsa_hotelling_limit", out, [&]() -> double {
    if (!(alpha > 0.0 && alpha < 1.0))
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "alpha must lie in (0, 1)"};
    if (p < 1) throw Misuse{ELLIPSA_ERR_ARGUMENT, "p must be at least 1"};
    const double md = static_cast<double>(m), pd = static_cast<double>(p);
    if (phase == ELLIPSA_PHASE_ONE) {
      if (m <= p + 1) throw Misuse{ELLIPSA_ERR_ARGUMENT, "phase I needs m > p + 1 reference rows"};
      // Tracy, Young & Mason (1992), phase I (Beta form).
      return ((md - 1.0) * (md - 1.0) / md) *
             core::beta_quantile(1.0 - alpha, pd / 2.0, (md - pd - 1.0) / 2.0);
    }
    if (phase == ELLIPSA_PHASE_TWO) {
      if (m <= p) throw Misuse{ELLIPSA_ERR_ARGUMENT, "phase II needs m > p reference rows"};
      // Tracy, Young & Mason (1992), phase II (F form).
      return pd * (md + 1.0) * (md - 1.0) / (md * (md - pd)) *
             core::f_quantile(1.0 - alpha, pd, md - pd);
    }
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "phase must be ELLIPSA_PHASE_ONE or ELLIPSA_PHASE_TWO"};
  });
}

}  // extern "C"
