#include "score_reference.hpp"

#include <cmath>
#include <cstdint>
#include <string>

#include "distributions.hpp"
#include "error.hpp"
#include "hotelling.hpp"

namespace ellipsa::core {
namespace {

void check_df(const ScoreReference& r, Index df) {
  if (df < 1 || df > reference_max_df(r))
    throw Error(ErrorKind::Argument, "score reference: " + std::to_string(df) + " coordinates need more than the " +
                                         std::to_string(r.rows) + " reference rows of the profile");
}

}  // namespace

Index reference_max_df(const ScoreReference& r) {
  // m > df (phase II) or m > df + 1 (phase I), with m possibly fractional.
  const double room = r.kind == ReferenceKind::NewRows ? r.rows : r.rows - 1.0;
  switch (r.kind) {
    case ReferenceKind::ChiSquare: return INT64_MAX / 2;
    default: return static_cast<Index>(std::ceil(room) - 1.0);
  }
}

double reference_limit(const ScoreReference& r, Index df, double level) {
  if (r.kind == ReferenceKind::ChiSquare) return chi2_quantile(level, static_cast<double>(df));
  check_df(r, df);
  const double t2 = r.kind == ReferenceKind::NewRows ? t2_phase2_limit_real(r.rows, df, 1.0 - level)
                                                     : t2_phase1_limit_real(r.rows, df, 1.0 - level);
  return t2 / r.t2_scale;
}

double reference_sf(const ScoreReference& r, Index df, double d2) {
  if (r.kind == ReferenceKind::ChiSquare) return chi2_sf(d2, static_cast<double>(df));
  check_df(r, df);
  return r.kind == ReferenceKind::NewRows ? t2_phase2_sf(r.t2_scale * d2, r.rows, df)
                                          : t2_phase1_sf(r.t2_scale * d2, r.rows, df);
}

}  // namespace ellipsa::core
