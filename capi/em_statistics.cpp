// Mixture EM across processes: the E-step statistics of a chunk under given
// parameters (core::EmStatistics), their merge and byte form (byte_codec.hpp
// frame, magic "ELLEMSTA"), the M-step from merged statistics, and the
// finished model. Payload of version 1, for K components and p columns:
//   K, p, skipped rows (i64) | parameters fingerprint (i64 bits) |
//   log-likelihood, sum t log t (f64) | plain moments of the rows |
//   K responsibility-weighted moments
// where each moments block is weight (f64), rows, direct rows (i64),
// shifted (u32), 0 (u32), shift (p), relative mean (p), cross-products
// (lower triangle by columns, p (p + 1) / 2): MomentAccumulator::State.
#include <cmath>
#include <cstring>
#include <memory>
#include <string>

#include "boundary.hpp"
#include "byte_codec.hpp"
#include "cell_names.hpp"
#include "core/error.hpp"
#include "core/missing.hpp"
#include "core/mixture_em_statistics.hpp"
#include "core/mixture_em_steps.hpp"
#include "matrix_view.hpp"
#include "mixture_convert.hpp"
#include "model.hpp"
#include "options.hpp"
#include "threads.hpp"

struct ellipsa_em_statistics {
  ellipsa::core::EmStatistics stats;
  std::vector<std::string> columns;  // of the parameters
  std::uint64_t fingerprint = 0;     // of the parameters, to refuse merging across parameters
  int64_t skipped = 0;
};

namespace {

namespace core = ellipsa::core;
using ellipsa::capi::ByteReader;
using ellipsa::capi::ByteWriter;
using ellipsa::capi::Misuse;

constexpr char kMagic[] = "ELLEMSTA";
constexpr std::uint32_t kVersion = 1;
constexpr int64_t kMaxColumns = 100000;
constexpr int64_t kMaxComponents = 10000;

// FNV-1a over the bits of every parameter: statistics merge only under the same parameters.
std::uint64_t fingerprint_of(const core::MixtureModel& m) {
  std::string bits;
  auto put = [&](const double* d, Eigen::Index n) {
    bits.append(reinterpret_cast<const char*>(d), static_cast<std::size_t>(n) * sizeof(double));
  };
  put(m.weights.data(), m.weights.size());
  const Eigen::MatrixXd means = m.means;
  put(means.data(), means.size());
  for (const auto& c : m.covariances) put(c.data(), c.size());
  bits.push_back(static_cast<char>(m.structure));
  return ellipsa::capi::fnv1a64(reinterpret_cast<const unsigned char*>(bits.data()), bits.size());
}

const ellipsa_model& mixture_parameters(const ellipsa_model* m) {
  ellipsa::capi::require_not_null(m, "parameters");
  if (m->kind != ELLIPSA_KIND_MIXTURE || !m->mixture)
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "the parameters must be a mixture model"};
  return *m;
}

std::unique_ptr<ellipsa_em_statistics> make_statistics(const ellipsa_model& m) {
  core::MixtureModel parameters = ellipsa::capi::to_core_mixture(m);
  const std::uint64_t fp = fingerprint_of(parameters);
  return std::unique_ptr<ellipsa_em_statistics>(
      new ellipsa_em_statistics{core::EmStatistics(std::move(parameters)), m.columns, fp, 0});
}

void write_moments(ByteWriter& w, const core::MomentAccumulator& a) {
  const auto s = a.state();
  const Eigen::Index p = s.shift.size();
  w.f64(s.weight);
  w.i64(s.rows);
  w.i64(s.direct_rows);
  w.u32(s.shifted ? 1u : 0u);
  w.u32(0);
  w.vector(s.shift);
  w.vector(s.relative_mean);
  for (Eigen::Index j = 0; j < p; ++j)
    for (Eigen::Index i = j; i < p; ++i) w.f64(s.lower(i, j));
}

core::MomentAccumulator read_moments(ByteReader& r, int64_t p) {
  core::MomentAccumulator::State s;
  s.weight = r.f64("weight");
  s.rows = r.i64("rows");
  s.direct_rows = r.i64("direct rows");
  const std::uint32_t shifted = r.u32("shifted");
  if (shifted > 1) r.fail("the shifted flag is neither 0 nor 1");
  s.shifted = shifted == 1;
  if (r.u32("reserved") != 0) r.fail("a reserved field is not 0");
  s.shift = r.vector(p, "shift");
  s.relative_mean = r.vector(p, "relative mean");
  s.lower = Eigen::MatrixXd::Zero(p, p);
  for (int64_t j = 0; j < p; ++j)
    for (int64_t i = j; i < p; ++i) s.lower(i, j) = r.f64("cross-products");
  return core::MomentAccumulator::from_state(s);  // checks counts, flags, diagonal
}

std::uint64_t moments_bytes(std::uint64_t p) { return 8 * (3 + 1 + 2 * p + p * (p + 1) / 2); }

std::string to_bytes(const ellipsa_em_statistics& e) {
  const auto k = static_cast<std::uint64_t>(e.stats.components().size());
  const auto p = static_cast<std::uint64_t>(e.stats.overall().dimension());
  ByteWriter w(kMagic, kVersion, 8 * 6 + (k + 1) * moments_bytes(p));
  w.i64(static_cast<int64_t>(k));
  w.i64(static_cast<int64_t>(p));
  w.i64(e.skipped);
  int64_t fp = 0;
  std::memcpy(&fp, &e.fingerprint, sizeof fp);
  w.i64(fp);
  w.f64(e.stats.log_likelihood());
  w.f64(e.stats.sum_t_log_t());
  write_moments(w, e.stats.overall());
  for (const auto& c : e.stats.components()) write_moments(w, c);
  return w.finish();
}

std::unique_ptr<ellipsa_em_statistics> from_bytes(const char* bytes, int64_t length, const ellipsa_model& m) {
  ByteReader r(bytes, length, kMagic, kVersion, "EM statistics bytes");
  const int64_t k = r.i64("K");
  const int64_t p = r.i64("p");
  if (k < 1 || k > kMaxComponents) r.fail("K = " + std::to_string(k) + " lies outside [1, 10000]");
  if (p < 1 || p > kMaxColumns) r.fail("p = " + std::to_string(p) + " lies outside [1, 100000]");
  const auto ku = static_cast<std::uint64_t>(k), pu = static_cast<std::uint64_t>(p);
  const std::uint64_t expected = 8 * 4 + (ku + 1) * moments_bytes(pu);
  if (r.remaining() != expected)
    r.fail("the payload after K and p holds " + std::to_string(r.remaining()) + " bytes, K = " + std::to_string(k) +
           " and p = " + std::to_string(p) + " need " + std::to_string(expected));
  if (k != static_cast<int64_t>(m.components.size()) || p != m.dimension())
    r.fail("the bytes hold K = " + std::to_string(k) + ", p = " + std::to_string(p) + "; the parameters have K = " +
           std::to_string(m.components.size()) + ", p = " + std::to_string(m.dimension()));
  const int64_t skipped = r.i64("skipped rows");
  if (skipped < 0) r.fail("a negative count of skipped rows");
  const int64_t fp_bits = r.i64("fingerprint");
  std::uint64_t fp = 0;
  std::memcpy(&fp, &fp_bits, sizeof fp);
  const double ll = r.f64("log-likelihood");
  const double stl = r.f64("sum t log t");
  core::MomentAccumulator overall = read_moments(r, p);
  std::vector<core::MomentAccumulator> comps;
  for (int64_t c = 0; c < k; ++c) comps.push_back(read_moments(r, p));
  r.expect_end();
  if (overall.weight_sum() != static_cast<double>(overall.rows()))
    r.fail("the plain moments' weight is not their row count");
  double total = 0.0;
  for (const auto& c : comps) total += c.weight_sum();
  if (std::abs(total - overall.weight_sum()) > 1e-9 * (1.0 + overall.weight_sum()))
    r.fail("the responsibilities do not sum to the row count");
  auto e = make_statistics(m);
  if (e->fingerprint != fp) r.fail("the statistics were computed under other parameters");
  e->stats =
      core::EmStatistics::from_parts(ellipsa::capi::to_core_mixture(m), std::move(comps), std::move(overall), ll, stl);
  e->skipped = skipped;
  return e;
}

core::MixtureOptions mixture_options(const ellipsa_em_statistics& e, const ellipsa_fit_options& o) {
  if (o.method != ELLIPSA_METHOD_MIXTURE) throw Misuse{ELLIPSA_ERR_ARGUMENT, "the options must be of method mixture"};
  const int32_t structure = ellipsa::capi::from_core_structure(e.stats.parameters().structure);
  if (o.structure != structure)
    throw Misuse{ELLIPSA_ERR_ARGUMENT,
                 std::string("the options' structure (") + ellipsa::capi::structure_name(o.structure) +
                     ") differs from the parameters' (" + ellipsa::capi::structure_name(structure) + ")"};
  if (o.missing == ELLIPSA_MISSING_EM)
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "EM over missing values is not available from statistics (complete rows only)"};
  core::MixtureOptions m;
  m.components = e.stats.parameters().components();
  m.structure = e.stats.parameters().structure;
  m.regularisation = o.regularisation;
  m.tolerance = o.tolerance;
  return m;
}

// A mixture model with these parameters; diagnostics from the statistics.
std::unique_ptr<ellipsa_model> model_of(const core::MixtureModel& x, const ellipsa_em_statistics& e,
                                        const ellipsa_fit_options& o) {
  auto m = std::make_unique<ellipsa_model>();
  m->kind = ELLIPSA_KIND_MIXTURE;
  m->method = ELLIPSA_METHOD_MIXTURE;
  m->columns = e.columns;
  const Eigen::Index p = x.dimension(), k = x.components();
  if (!o.column_names.empty()) {
    if (static_cast<Eigen::Index>(o.column_names.size()) != p)
      throw Misuse{ELLIPSA_ERR_SHAPE, "the options name " + std::to_string(o.column_names.size()) +
                                          " columns, the statistics have " + std::to_string(p)};
    m->columns = o.column_names;
  }
  const int64_t n = e.stats.rows();
  m->rows_used = n;
  m->rows_dropped = e.skipped;
  for (Eigen::Index c = 0; c < k; ++c)
    m->components.push_back({x.weights(c), x.means.row(c).transpose(), x.covariances[static_cast<size_t>(c)], {}});
  ellipsa::capi::MixturePart part;
  part.structure = ellipsa::capi::from_core_structure(x.structure);
  part.log_likelihood = e.stats.log_likelihood();
  part.parameters = core::mixture_parameter_count(k, p, x.structure);
  part.bic = core::mixture_bic(part.log_likelihood, part.parameters, n);
  part.icl = core::mixture_icl(part.bic, e.stats.sum_t_log_t());
  ellipsa::capi::Candidate c;
  c.components = static_cast<int32_t>(k);
  c.structure = part.structure;
  c.log_likelihood = part.log_likelihood;
  c.parameters = part.parameters;
  c.bic = part.bic;
  c.icl = part.icl;
  c.chosen = true;
  part.selection.push_back(c);
  m->mixture = std::move(part);
  return m;
}

}  // namespace

using ellipsa::capi::guard;
using ellipsa::capi::require_not_null;
extern "C" {

ELLIPSA_API ellipsa_status ellipsa_em_statistics_create(ellipsa_em_statistics** out, const ellipsa_model* parameters) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_em_statistics_create", [&] {
    require_not_null(out, "out");
    *out = make_statistics(mixture_parameters(parameters)).release();
    return ELLIPSA_OK;
  });
}

ELLIPSA_API void ellipsa_em_statistics_destroy(ellipsa_em_statistics* statistics) { delete statistics; }

ELLIPSA_API ellipsa_status ellipsa_em_statistics_add(ellipsa_em_statistics* statistics, const ellipsa_matrix* rows) {
  return guard("ellipsa_em_statistics_add", [&] {
    require_not_null(statistics, "statistics");
    const core::DataView x = ellipsa::capi::checked_view(rows, "rows");
    const Eigen::Index p = statistics->stats.overall().dimension();
    if (x.cols() != p)
      throw Misuse{ELLIPSA_ERR_SHAPE,
                   "rows have " + std::to_string(x.cols()) + " columns, the parameters " + std::to_string(p)};
    if (x.rows() == 0) return ELLIPSA_OK;
    const auto complete =
        ellipsa::capi::naming_places("chunk", x.cols(), [&] { return core::select_complete_rows(x); });
    const int threads = ellipsa::capi::resolve_threads(0);
    if (complete.dropped == 0) {
      statistics->stats.add(x, threads);
    } else if (!complete.rows.empty()) {
      const Eigen::MatrixXd kept = core::gather(x, complete.rows);
      statistics->stats.add(core::make_view(kept), threads);
    }
    statistics->skipped += complete.dropped;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_em_statistics_merge(ellipsa_em_statistics* into, const ellipsa_em_statistics* from) {
  return guard("ellipsa_em_statistics_merge", [&] {
    require_not_null(into, "into");
    require_not_null(from, "from");
    if (into == from) throw Misuse{ELLIPSA_ERR_ARGUMENT, "into and from are the same statistics"};
    if (into->fingerprint != from->fingerprint)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "the statistics were computed under different parameters"};
    into->stats.merge(from->stats);
    into->skipped += from->skipped;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_em_statistics_summary(double* log_likelihood, int64_t* rows, int64_t* skipped,
                                                         const ellipsa_em_statistics* statistics) {
  return guard("ellipsa_em_statistics_summary", [&] {
    require_not_null(statistics, "statistics");
    if (log_likelihood) *log_likelihood = statistics->stats.log_likelihood();
    if (rows) *rows = statistics->stats.rows();
    if (skipped) *skipped = statistics->skipped;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_em_statistics_save(char** bytes, int64_t* length,
                                                      const ellipsa_em_statistics* statistics) {
  return guard("ellipsa_em_statistics_save", [&] {
    require_not_null(bytes, "bytes");
    require_not_null(length, "length");
    require_not_null(statistics, "statistics");
    const std::string s = to_bytes(*statistics);
    char* buffer = new char[s.size()];
    std::memcpy(buffer, s.data(), s.size());
    *bytes = buffer;
    *length = static_cast<int64_t>(s.size());
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_em_statistics_load(ellipsa_em_statistics** out, const char* bytes, int64_t length,
                                                      const ellipsa_model* parameters) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_em_statistics_load", [&] {
    require_not_null(out, "out");
    require_not_null(bytes, "bytes");
    const ellipsa_model& m = mixture_parameters(parameters);
    if (length <= 0) throw Misuse{ELLIPSA_ERR_ARGUMENT, "length must be positive"};
    *out = from_bytes(bytes, length, m).release();
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_em_statistics_m_step(ellipsa_model** next, const ellipsa_em_statistics* statistics,
                                                        const ellipsa_fit_options* options) {
  if (next != nullptr) *next = nullptr;
  return guard("ellipsa_em_statistics_m_step", [&] {
    require_not_null(next, "next");
    require_not_null(statistics, "statistics");
    require_not_null(options, "options");
    const core::MixtureOptions mo = mixture_options(*statistics, *options);
    auto m = model_of(statistics->stats.m_step(mo), *statistics, *options);
    ellipsa::capi::finalise(*m);
    ellipsa::capi::record_reference(*m, *options);
    *next = m.release();
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_em_statistics_model(ellipsa_model** out, const ellipsa_em_statistics* statistics,
                                                       double log_density_cutoff, int32_t converged, int64_t iterations,
                                                       const ellipsa_fit_options* options) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_em_statistics_model", [&] {
    require_not_null(out, "out");
    require_not_null(statistics, "statistics");
    require_not_null(options, "options");
    mixture_options(*statistics, *options);  // the same checks as the M-step
    if (!std::isfinite(log_density_cutoff)) throw Misuse{ELLIPSA_ERR_ARGUMENT, "the log-density cutoff must be finite"};
    if (converged != 0 && converged != 1) throw Misuse{ELLIPSA_ERR_ARGUMENT, "converged must be 0 or 1"};
    if (iterations < 0) throw Misuse{ELLIPSA_ERR_ARGUMENT, "iterations must be >= 0"};
    if (statistics->stats.rows() < 1) throw core::Error(core::ErrorKind::Data, "the statistics hold no rows");
    auto m = model_of(statistics->stats.parameters(), *statistics, *options);
    m->mixture->converged = converged == 1;
    m->mixture->selection.front().converged = converged == 1;
    m->mixture->iterations = iterations;
    m->mixture->log_density_cutoff = log_density_cutoff;
    m->mixture->cutoff_level = 1.0 - ELLIPSA_MIXTURE_CUTOFF_TAIL;
    ellipsa::capi::finalise(*m);
    ellipsa::capi::record_reference(*m, *options);
    *out = m.release();
    return ELLIPSA_OK;
  });
}

}  // extern "C"
