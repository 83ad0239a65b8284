// The MCD-family fit path: options -> FAST-MCD / DetMCD / MRCD -> model. An
// exact fit cannot become a usable model (its scatter is singular), so it is
// returned as ELLIPSA_NUM_EXACT_FIT with the hyperplane spelled out.
#include <algorithm>
#include <cmath>
#include <cstdio>

#include "boundary.hpp"
#include "core/cholesky.hpp"
#include "core/distributions.hpp"
#include "core/error.hpp"
#include "core/mcd_deterministic.hpp"
#include "core/mcd_fast.hpp"
#include "core/mcd_regularised.hpp"
#include "fit_common.hpp"
#include "threads.hpp"

namespace ellipsa::capi {
namespace {

std::string hyperplane_text(const core::RobustFit& r, const std::vector<std::string>& names, int64_t n) {
  std::string s = std::to_string(r.hyperplane.rows_on) + " of " + std::to_string(n) + " rows lie on the hyperplane";
  char buf[64];
  bool first = true;
  for (Eigen::Index j = 0; j < r.hyperplane.normal.size(); ++j) {
    const double a = r.hyperplane.normal(j);
    if (std::abs(a) < 1e-12) continue;
    std::snprintf(buf, sizeof buf, "%s%.6g*", first ? " " : (a < 0 ? " - " : " + "), first ? a : std::abs(a));
    s += buf;
    s += "\"" + names[static_cast<size_t>(j)] + "\"";
    first = false;
  }
  std::snprintf(buf, sizeof buf, " = %.6g", r.hyperplane.offset);
  s += buf;
  return s + " (at least h = " + std::to_string(r.h) +
         "): the MCD scatter is singular there. Inspect or remove those rows, or use method mrcd.";
}

std::vector<int64_t> original_rows(const std::vector<core::Index>& rows, const PreparedData& d) {
  std::vector<int64_t> out;
  out.reserve(rows.size());
  for (auto r : rows) out.push_back(d.kept_row(r));
  std::sort(out.begin(), out.end());
  return out;
}

core::RawConsistency raw_consistency_of(const ellipsa_fit_options& o) {
  return o.consistency == ELLIPSA_CONSISTENCY_MEDIAN ? core::RawConsistency::Median
                                                     : core::RawConsistency::NormalFactor;
}

core::RobustFit run(const PreparedData& d, const ellipsa_fit_options& o) {
  const core::DataView x = d.used();
  if (o.method == ELLIPSA_METHOD_MCD) {
    core::FastMcdOptions f;
    f.alpha = o.alpha;
    f.seed = o.seed;
    f.starts = o.starts;
    f.small_sample = o.small_sample ? core::SmallSample::Both : core::SmallSample::Off;
    f.raw_consistency = raw_consistency_of(o);
    f.progress = progress_of(o);
    f.threads = resolve_threads(o.threads);
    return core::fast_mcd(x, f);
  }
  if (o.method == ELLIPSA_METHOD_DETMCD) {
    core::DetMcdOptions f;
    f.alpha = o.alpha;
    f.small_sample = o.small_sample ? core::SmallSample::Both : core::SmallSample::Off;
    f.raw_consistency = raw_consistency_of(o);
    f.progress = progress_of(o);
    f.threads = resolve_threads(o.threads);
    return core::det_mcd(x, f);
  }
  core::MrcdOptions f;
  if (o.alpha_set) f.alpha = o.alpha;
  f.progress = progress_of(o);
  return core::mrcd(x, f);
}

}  // namespace

void fit_robust(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o) {
  const core::RobustFit r = run(d, o);
  if (r.exact_fit) throw core::Error(core::ErrorKind::ExactFit, hyperplane_text(r, m.columns, d.used().rows()));
  RobustPart part;
  part.h = r.h;
  part.raw_location = r.raw_location;
  part.raw_scatter = r.raw_scatter;
  part.h_subset_rows = original_rows(r.h_subset, d);
  std::vector<core::Index> flagged;
  for (size_t i = 0; i < r.outlier.size(); ++i)
    if (r.outlier[i]) flagged.push_back(static_cast<core::Index>(i));
  part.outlier_rows = original_rows(flagged, d);
  part.consistency_factor = r.consistency_factor;
  part.consistency_rule = o.consistency;
  part.reweight_factor = r.reweight_factor;
  part.small_sample_raw = r.small_sample.raw;
  part.small_sample_reweighted = r.small_sample.reweighted;
  part.raw_log_det = r.raw_log_det;
  Eigen::MatrixXd scatter = r.scatter;
  if (o.method == ELLIPSA_METHOD_MRCD) {
    part.regularisation = r.rho;
    part.regularisation_target = r.target;
    m.shrinkage_intensity = r.rho;
    // The median calibration of the scatter is the core's
    // (core/mcd_regularised.cpp), reported as the reweighting factor.
  }
  // The core's scatter matrices are symmetric to rounding; the model stores
  // them exactly symmetric so that files and every consumer see one matrix.
  part.raw_scatter = 0.5 * (part.raw_scatter + part.raw_scatter.transpose()).eval();
  // The model file's reader requires every stored scatter to factor in the
  // data's units (model_json.cpp read_scatter); the core judged the subset in
  // standardised units. They disagree only when the h-subset holds values of
  // wildly different magnitudes (found by fuzzing: raw entries from 1e6 to
  // 1e298), so such a fit is refused rather than saved unreadable.
  for (Eigen::Index j = 0; j < part.raw_scatter.rows(); ++j)
    if (!std::isfinite(part.raw_scatter(j, j)))
      throw core::LocatedError(core::ErrorKind::Data, "scatter", -1, j,
                               "has a variance that overflows double precision; rescale the data");
  if (!core::CholeskyFactor().compute(part.raw_scatter))
    throw core::Error(core::ErrorKind::Singular,
                      "the raw MCD scatter (before reweighting) is not positive definite in the data's units: its "
                      "h-subset holds values of very different magnitudes, a sign of more gross outliers than the "
                      "fit can leave out; lower alpha toward 0.5 or inspect the data");
  m.components.push_back({1.0, r.location, 0.5 * (scatter + scatter.transpose()), {}});
  m.robust = std::move(part);
}

}  // namespace ellipsa::capi
