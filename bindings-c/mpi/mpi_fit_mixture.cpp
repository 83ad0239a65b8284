// ellipsa-mpi fit --method mixture: EM across ranks. The start is chosen on
// rank 0 (ellipsa_model_fit on an even sample gathered from every rank, with
// the given K, structure, restarts and seed; or --start MODEL) and sent to
// every rank as model text. Each iteration: every rank adds its rows to E-step
// statistics under the current parameters (ellipsa_em_statistics_add), the
// statistics travel as bytes up the fixed merge tree, rank 0 applies the
// stopping rule of ellipsa fit and makes the next parameters
// (ellipsa_em_statistics_m_step), which go back to every rank as model text.
#include <algorithm>
#include <cmath>
#include <memory>

#include "local_rows.hpp"
#include "mpi_fit_methods.hpp"

namespace ellipsa::mpi {

namespace {

struct StatsDeleter {
  void operator()(ellipsa_em_statistics* s) const { ellipsa_em_statistics_destroy(s); }
};
using StatsPtr = std::unique_ptr<ellipsa_em_statistics, StatsDeleter>;

cli::ModelPtr model_from_text(const std::string& text) {
  ellipsa_model* m = nullptr;
  cli::check(ellipsa_model_load(&m, text.data(), static_cast<int64_t>(text.size())), "reading the parameters");
  return cli::ModelPtr(m);
}

std::string save(const ellipsa_em_statistics* s) {
  char* b = nullptr;
  int64_t n = 0;
  cli::check(ellipsa_em_statistics_save(&b, &n, s), "writing EM statistics");
  std::string out(b, static_cast<std::size_t>(n));
  ellipsa_text_free(b);
  return out;
}

StatsPtr load(const std::string& bytes, const ellipsa_model* parameters) {
  ellipsa_em_statistics* s = nullptr;
  cli::check(ellipsa_em_statistics_load(&s, bytes.data(), static_cast<int64_t>(bytes.size()), parameters),
             "reading EM statistics");
  return StatsPtr(s);
}

}  // namespace

std::string start_text(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, const LocalRows& local,
                       int64_t total_rows) {
  // Every rank takes part in the gather (even with --start, so that the
  // exchange pattern does not depend on rank 0's options).
  const LocalRows sample = a.start.empty() ? gather_sample(comm, local, total_rows, a.sample_rows) : LocalRows{};
  std::string text;
  step(comm, [&] {
    if (comm.rank() != 0) return;
    if (!a.start.empty()) {
      text = cli::model_text(cli::load_model_file(a.start).get());
      return;
    }
    const auto options = cli::make_fit_options(a.fit, columns);
    ellipsa_model* m = nullptr;
    const ellipsa_matrix x = sample.view();
    cli::check(ellipsa_model_fit(&m, &x, options.get()), "choosing the starts on the gathered sample");
    text = cli::model_text(cli::ModelPtr(m).get());
  });
  return comm.broadcast(text, "sending the start");
}

void fit_mixture_mpi(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, FitReport& report) {
  auto t = std::chrono::steady_clock::now();
  LocalRows local;
  step(comm, [&] { local = read_local_rows(comm, a.common, columns); });
  report.rows_read = local.rows() + local.dropped;
  const int64_t total_rows = comm.sum(local.rows(), "counting rows");
  report.read_seconds = seconds_since(t);
  t = std::chrono::steady_clock::now();
  cli::OptionsPtr options;  // made inside a step: a bad option stops every rank with its message
  step(comm, [&] { options = cli::make_fit_options(a.fit, columns); });
  std::string parameters_text = start_text(comm, a, columns, local, total_rows);
  cli::ModelPtr parameters;
  step(comm, [&] {
    parameters = model_from_text(parameters_text);
    int32_t kind = 0;
    cli::check(ellipsa_model_describe(&kind, nullptr, nullptr, nullptr, parameters.get()), "reading the start");
    if (kind != ELLIPSA_KIND_MIXTURE) throw cli::CliError(cli::kExitUsage, "--start must be a mixture model");
    // The M-steps keep the start's structure (chosen on the sample when
    // --structure all, or that of --start).
    int32_t structure = 0;
    const std::string name = nlohmann::json::parse(parameters_text).at("structure").get<std::string>();
    cli::check(ellipsa_structure_from_name(&structure, name.c_str()), "reading the start's structure");
    cli::check(ellipsa_fit_options_set_structure(options.get(), structure), "setting the structure");
  });
  report.start_seconds = seconds_since(t);
  t = std::chrono::steady_clock::now();
  // The stopping rule of ellipsa fit from the same start: the first
  // comparison is between the log-likelihoods after the first two M-steps,
  // and at most max_iterations + 1 M-steps are made.
  const double tolerance = a.fit.tolerance;
  const int max_iterations = a.fit.max_iterations;
  int m_steps = 0;
  bool converged = false;
  double previous = 0.0;
  std::string merged;
  for (;;) {
    const int64_t before = comm.bytes_sent();
    std::string mine;
    step(comm, [&] {
      ellipsa_em_statistics* raw = nullptr;
      cli::check(ellipsa_em_statistics_create(&raw, parameters.get()), "E-step");
      StatsPtr stats(raw);
      const ellipsa_matrix x = local.view();
      cli::check(ellipsa_em_statistics_add(stats.get(), &x), "E-step");
      // The rows dropped for a missing value, so that the model counts them.
      const std::vector<double> gaps(static_cast<std::size_t>(local.dropped * local.p), std::nan(""));
      const ellipsa_matrix g = ellipsa_matrix_row_major(gaps.data(), local.dropped, local.p);
      cli::check(ellipsa_em_statistics_add(stats.get(), &g), "E-step");
      mine = save(stats.get());
    });
    step(comm, [&] {
      merged = comm.tree_reduce(
          std::move(mine),
          [&](std::string& into, const std::string& from) {
            StatsPtr u = load(into, parameters.get()), v = load(from, parameters.get());
            cli::check(ellipsa_em_statistics_merge(u.get(), v.get()), "merging EM statistics");
            into = save(u.get());
          },
          "merging EM statistics");
    });
    std::string next;
    step(comm, [&] {
      if (comm.rank() != 0) return;
      double ll = 0.0;
      cli::check(ellipsa_em_statistics_summary(&ll, nullptr, nullptr, load(merged, parameters.get()).get()), "E-step");
      if (m_steps >= 2 && std::abs(ll - previous) <= tolerance * std::abs(ll)) converged = true;
      previous = ll;
      if (converged || m_steps > max_iterations) return;  // empty text: stop
      ellipsa_model* m = nullptr;
      cli::check(ellipsa_em_statistics_m_step(&m, load(merged, parameters.get()).get(), options.get()), "M-step");
      next = cli::model_text(cli::ModelPtr(m).get());
    });
    next = comm.broadcast(next, "sending the parameters");
    ++report.reductions;
    report.bytes_per_reduction =
        std::max(report.bytes_per_reduction, comm.sum(comm.bytes_sent() - before, "counting bytes"));
    if (next.empty()) break;
    step(comm, [&] { parameters = model_from_text(next); });
    ++m_steps;
  }
  report.iterations = m_steps;
  report.reduce_seconds = seconds_since(t);
  t = std::chrono::steady_clock::now();
  // The log-density cutoff: the lower ELLIPSA_MIXTURE_CUTOFF_TAIL quantile
  // (definition 7 of Hyndman & Fan) of every row's log-density under the
  // final parameters, from two exact order statistics.
  std::vector<double> log_density(static_cast<std::size_t>(local.rows()));
  step(comm, [&] {
    ellipsa_scores s = ELLIPSA_SCORES_INIT;
    s.log_density = log_density.data();
    const ellipsa_matrix x = local.view();
    cli::check(ellipsa_model_score_v3(&s, parameters.get(), &x, 0.975, ELLIPSA_REFERENCE_MODEL, 0),
               "log-densities under the fitted mixture");
  });
  const double h = static_cast<double>(total_rows - 1) * ELLIPSA_MIXTURE_CUTOFF_TAIL;
  const auto lo = static_cast<int64_t>(std::floor(h));
  const int64_t hi = std::min(lo + 1, total_rows - 1);
  const double v_lo = select_kth(comm, log_density, lo + 1, "the log-density cutoff");
  const double v_hi = select_kth(comm, log_density, hi + 1, "the log-density cutoff");
  const double cutoff = v_lo + (h - static_cast<double>(lo)) * (v_hi - v_lo);
  step(comm, [&] {
    if (comm.rank() != 0) return;
    ellipsa_model* m = nullptr;
    cli::check(ellipsa_em_statistics_model(&m, load(merged, parameters.get()).get(), cutoff, converged ? 1 : 0, m_steps,
                                           options.get()),
               "making the model");
    report.model.reset(m);
  });
  report.fit_seconds = seconds_since(t);
}

}  // namespace ellipsa::mpi
