// ellipsa_model_score: Gaussian and mixture scoring into caller buffers. The
// arithmetic is the core's (MahalanobisScorer, score_mixture); this file only
// routes rows and copies results.
#include <cmath>
#include <cstring>
#include <vector>

#include "boundary.hpp"
#include "cell_names.hpp"
#include "core/error.hpp"
#include "core/missing.hpp"
#include "core/mixture_score.hpp"
#include "core/scoring.hpp"
#include "matrix_view.hpp"
#include "mixture_convert.hpp"
#include "model.hpp"
#include "score_reference.hpp"
#include "threads.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
namespace core = ellipsa::core;

namespace {

// The fields a caller compiled against an older, shorter struct does not have
// are treated as NULL. The first published version (0.1.0, abi/) already ends
// with low_density: nothing shorter ever shipped.
ellipsa_scores effective_buffers(const ellipsa_scores& in) {
  constexpr int64_t kFirstVersion = static_cast<int64_t>(sizeof(ellipsa_scores));
  if (in.struct_size < kFirstVersion)
    throw Misuse{ELLIPSA_ERR_SHAPE, "ellipsa_scores.struct_size too small: initialise with ELLIPSA_SCORES_INIT"};
  ellipsa_scores out;
  std::memset(&out, 0, sizeof(out));
  std::memcpy(&out, &in, static_cast<size_t>(std::min<int64_t>(in.struct_size, sizeof(out))));
  return out;
}

core::ScoringOptions scoring_options(const ellipsa_scores& b, double level, const core::ScoreReference& ref,
                                     int threads) {
  core::ScoringOptions o;
  o.threads = threads;
  o.level = level;
  o.reference = ref;
  o.p_values = b.p_value != nullptr;
  o.contributions = b.contribution != nullptr;
  o.conditional_drops = b.conditional_drop != nullptr;
  return o;
}

// Writes one block of Gaussian scores for rows `rows` (positions in the output).
void write_gaussian(const ellipsa_scores& b, const core::RowScores& s, const std::vector<int64_t>& rows, int64_t p) {
  for (size_t r = 0; r < rows.size(); ++r) {
    const int64_t i = rows[r];
    const auto k = static_cast<Eigen::Index>(r);
    const bool scorable = s.df(k) > 0;
    if (b.squared_distance) b.squared_distance[i] = s.d2(k);
    if (b.p_value) b.p_value[i] = s.p_value(k);
    if (b.flag) b.flag[i] = scorable ? (s.flagged(k) ? 1 : 0) : -1;
    if (b.observed) b.observed[i] = static_cast<int32_t>(s.df(k));
    if (b.contribution)
      for (int64_t j = 0; j < p; ++j) b.contribution[i * p + j] = s.contributions(k, j);
    if (b.conditional_drop)
      for (int64_t j = 0; j < p; ++j) b.conditional_drop[i * p + j] = s.conditional_drops(k, j);
  }
}

void score_gaussian(const ellipsa_scores& b, const ellipsa_model& m, core::DataView x, double level,
                    const core::ScoreReference& ref, int threads) {
  const auto& c = m.components.front();
  const core::MahalanobisScorer scorer(c.location, c.factor);
  core::ScoringOptions options = scoring_options(b, level, ref, threads);
  options.log_densities = b.log_density != nullptr;  // the marginal log-density, from the scorer's own factors
  // A table with no missing or infinite value is scored straight into the
  // caller's arrays (the same numbers; nothing is written unless the whole
  // table is accepted, so a refused call still leaves the buffers as they were).
  core::FiniteRowOutputs direct;
  direct.d2 = b.squared_distance;
  direct.p_value = b.p_value;
  direct.flag = b.flag ? b.flag : b.low_density;
  direct.log_density = b.log_density;
  if (scorer.score_finite(x, options, direct)) {
    for (int64_t i = 0; i < x.rows(); ++i) {
      if (b.observed) b.observed[i] = static_cast<int32_t>(x.cols());
      if (b.component) b.component[i] = 0;
      if (b.membership) b.membership[i] = 1.0;
      if (b.low_density && b.flag) b.low_density[i] = b.flag[i];  // the flag itself
    }
    return;
  }
  const auto s = scorer.score(x, options);
  std::vector<int64_t> rows(static_cast<size_t>(x.rows()));
  for (int64_t i = 0; i < x.rows(); ++i) rows[static_cast<size_t>(i)] = i;
  write_gaussian(b, s, rows, x.cols());
  for (int64_t i = 0; i < x.rows(); ++i) {
    if (b.component) b.component[i] = 0;
    if (b.membership) b.membership[i] = 1.0;
    if (b.low_density) b.low_density[i] = s.df(i) > 0 ? (s.flagged(i) ? 1 : 0) : -1;  // the flag itself
  }
  if (b.log_density)
    for (int64_t i = 0; i < x.rows(); ++i) b.log_density[i] = s.log_density(i);
}

void score_mixture_model(const ellipsa_scores& b, const ellipsa_model& m, core::DataView x, double level, int threads) {
  const auto model = ellipsa::capi::to_core_mixture(m);
  const auto ms = core::score_mixture(model, x);
  const int64_t n = x.rows(), p = x.cols();
  const auto K = static_cast<int64_t>(m.components.size());
  // The outlier rule is the core's (flag_outliers); -1 marks a row that could
  // not be scored.
  Eigen::VectorXi low;
  if (b.low_density) {
    core::OutlierCutoff cut;
    cut.level = 1.0 - m.mixture->cutoff_level;  // the tail calibrated on the fitting rows
    cut.log_density_cutoff = m.mixture->log_density_cutoff;
    low = core::flag_outliers(ms.log_density, cut);
  }
  for (int64_t i = 0; i < n; ++i) {
    const int label = ms.labels(i);
    if (b.component) b.component[i] = label;
    if (b.membership)
      for (int64_t k = 0; k < K; ++k) b.membership[i * K + k] = ms.responsibilities(i, k);
    if (b.log_density) b.log_density[i] = ms.log_density(i);
    if (b.low_density) b.low_density[i] = label < 0 ? -1 : low(i);
  }
  // Distances, p-values and contributions against each row's most probable
  // component: rows are grouped by label and scored in blocks.
  const bool want_distance =
      b.squared_distance || b.p_value || b.flag || b.observed || b.contribution || b.conditional_drop;
  if (!want_distance) return;
  std::vector<int64_t> unscorable;
  for (int64_t k = -1; k < K; ++k) {
    std::vector<Eigen::Index> rows;
    for (int64_t i = 0; i < n; ++i)
      if (ms.labels(i) == k) rows.push_back(i);
    if (rows.empty()) continue;
    std::vector<int64_t> out_rows(rows.begin(), rows.end());
    const Eigen::MatrixXd block = core::gather(x, rows);
    const auto& c = m.components[static_cast<size_t>(k < 0 ? 0 : k)];
    const core::MahalanobisScorer scorer(c.location, c.factor);
    write_gaussian(b, scorer.score(core::make_view(block), scoring_options(b, level, {}, threads)), out_rows, p);
  }
}

}  // namespace

namespace {

ellipsa_status score_with(const char* fn, ellipsa_scores* out, const ellipsa_model* model, const ellipsa_matrix* data,
                          double level, int32_t reference, int32_t threads) {
  return guard(fn, [&] {
    require_not_null(out, "out");
    require_not_null(model, "model");
    const ellipsa_scores b = effective_buffers(*out);
    const core::DataView x = ellipsa::capi::checked_view(data, "data");
    if (x.cols() != model->dimension())
      throw Misuse{ELLIPSA_ERR_SHAPE, "data has " + std::to_string(x.cols()) + " columns, the model " +
                                          std::to_string(model->dimension())};
    if (!(level > 0.0 && level < 1.0)) throw Misuse{ELLIPSA_ERR_ARGUMENT, "level must lie in (0, 1)"};
    const core::ScoreReference ref = ellipsa::capi::score_reference(*model, reference);
    if (threads < 0 || threads > 256)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "threads must lie in [0, 256] (0 = ELLIPSA_THREADS or the available cores)"};
    const int workers = ellipsa::capi::resolve_threads(threads);
    if (x.rows() == 0) return ELLIPSA_OK;
    ellipsa::capi::naming_places("data", model->columns, [&] {
      if (model->kind == ELLIPSA_KIND_MIXTURE) score_mixture_model(b, *model, x, level, workers);
      else score_gaussian(b, *model, x, level, ref, workers);
    });
    return ELLIPSA_OK;
  });
}

}  // namespace

extern "C" ELLIPSA_API ellipsa_status ellipsa_model_score(ellipsa_scores* out, const ellipsa_model* model,
                                                          const ellipsa_matrix* data, double level) {
  return score_with("ellipsa_model_score", out, model, data, level, ELLIPSA_REFERENCE_MODEL, 0);
}

extern "C" ELLIPSA_API ellipsa_status ellipsa_model_score_v2(ellipsa_scores* out, const ellipsa_model* model,
                                                             const ellipsa_matrix* data, double level,
                                                             int32_t reference) {
  return score_with("ellipsa_model_score_v2", out, model, data, level, reference, 0);
}

extern "C" ELLIPSA_API ellipsa_status ellipsa_model_score_v3(ellipsa_scores* out, const ellipsa_model* model,
                                                             const ellipsa_matrix* data, double level,
                                                             int32_t reference, int32_t threads) {
  return score_with("ellipsa_model_score_v3", out, model, data, level, reference, threads);
}
