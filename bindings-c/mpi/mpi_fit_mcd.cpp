// ellipsa-mpi fit --method mcd: FAST-MCD with its C-steps on all rows across
// ranks. The start is the h-subset of ellipsa_model_fit (method mcd) on an
// even sample gathered on rank 0 (or --start MODEL: its location and scatter).
// A C-step (Rousseeuw & Van Driessen 1999): every rank computes the squared
// distances of its rows under the current estimate (ellipsa_model_score_v3);
// the h-th smallest over all ranks is selected exactly (select_kth); each
// rank adds its rows strictly below it to an accumulator
// (ellipsa_accumulator_add_within); rows tied at it, if more than needed, are
// gathered on rank 0, which takes the needed number in lexicographic order of
// their values (the tie rule of the single-process C-step); the accumulators
// merge up the fixed tree and rank 0 makes the next estimate (mean and
// covariance of the subset). The C-steps stop when no row changes side, the
// determinant would rise, or after max_csteps. Then the consistency and
// small-sample factors and the reweighting step (ellipsa_model_from_mcd_statistics).
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <memory>

#include "local_rows.hpp"
#include "mpi_fit_methods.hpp"

namespace ellipsa::mpi {

namespace {

// The cap on C-steps on all rows (core FastMcdOptions::max_csteps).
constexpr int kMaxCSteps = 200;

struct AccumulatorDeleter {
  void operator()(ellipsa_accumulator* a) const { ellipsa_accumulator_destroy(a); }
};
using AccPtr = std::unique_ptr<ellipsa_accumulator, AccumulatorDeleter>;

AccPtr new_accumulator(int64_t p) {
  ellipsa_accumulator* a = nullptr;
  cli::check(ellipsa_accumulator_create(&a, p), "C-step");
  return AccPtr(a);
}

AccPtr load(const std::string& bytes) {
  ellipsa_accumulator* a = nullptr;
  cli::check(ellipsa_accumulator_load(&a, bytes.data(), static_cast<int64_t>(bytes.size())),
             "reading accumulator bytes");
  return AccPtr(a);
}

std::string save(const ellipsa_accumulator* a) {
  char* b = nullptr;
  int64_t n = 0;
  cli::check(ellipsa_accumulator_save(&b, &n, a), "writing accumulator bytes");
  std::string s(b, static_cast<std::size_t>(n));
  ellipsa_text_free(b);
  return s;
}

std::string reduce(Comm& comm, const ellipsa_accumulator* a, const char* what) {
  return comm.tree_reduce(
      save(a),
      [](std::string& into, const std::string& from) {
        AccPtr x = load(into), y = load(from);
        cli::check(ellipsa_accumulator_merge(x.get(), y.get()), "merging accumulators");
        into = save(x.get());
      },
      what);
}

cli::ModelPtr model_from_text(const std::string& text) {
  ellipsa_model* m = nullptr;
  cli::check(ellipsa_model_load(&m, text.data(), static_cast<int64_t>(text.size())), "reading the estimate");
  return cli::ModelPtr(m);
}

// The Gaussian model of a subset: its mean and covariance (divisor h).
cli::ModelPtr subset_model(const ellipsa_accumulator* subset, const std::vector<std::string>& columns) {
  cli::FitFlags f;
  f.method = "classical";
  f.divisor = "n";
  const auto options = cli::make_fit_options(f, columns);
  ellipsa_model* m = nullptr;
  cli::check(ellipsa_model_from_accumulator(&m, subset, options.get()), "the subset's mean and covariance");
  return cli::ModelPtr(m);
}

double log_det(const ellipsa_model* m) {
  double v = 0.0;
  cli::check(ellipsa_model_diagnostic(&v, m, "log_det"), "log-determinant");
  return v;
}

std::vector<double> distances(const ellipsa_model* m, const LocalRows& local) {
  std::vector<double> d2(static_cast<std::size_t>(local.rows()));
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = d2.data();
  const ellipsa_matrix x = local.view();
  cli::check(ellipsa_model_score_v3(&s, m, &x, 0.975, ELLIPSA_REFERENCE_CHI2, 0), "distances");
  return d2;
}

}  // namespace

// The start: the h-subset of ellipsa_model_fit (method mcd) on the gathered
// sample, or the location and scatter of --start; they give the distances of
// the first C-step (only their order matters, not the scale of the scatter).
std::string mcd_start_text(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns,
                           const LocalRows& local, int64_t total_rows) {
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
    cli::check(ellipsa_model_fit(&m, &x, options.get()), "choosing the start on the gathered sample");
    const cli::ModelPtr fit(m);
    // The start is the sample's h-subset (its mean and covariance), the
    // candidate FAST-MCD itself carries to the next stage: on a sample of all
    // rows it is already the fixed point of the single-process fit.
    int64_t count = 0;
    cli::check(ellipsa_model_row_set(nullptr, 0, &count, fit.get(), ELLIPSA_ROWS_H_SUBSET), "the sample's subset");
    std::vector<int64_t> rows(static_cast<std::size_t>(count));
    cli::check(ellipsa_model_row_set(rows.data(), count, &count, fit.get(), ELLIPSA_ROWS_H_SUBSET),
               "the sample's subset");
    AccPtr acc = new_accumulator(sample.p);
    for (int64_t r : rows) {
      const ellipsa_matrix one = ellipsa_matrix_row_major(sample.values.data() + r * sample.p, 1, sample.p);
      cli::check(ellipsa_accumulator_add(acc.get(), &one), "the sample's subset");
    }
    text = cli::model_text(subset_model(acc.get(), columns).get());
  });
  return comm.broadcast(text, "sending the start");
}

void fit_mcd_mpi(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, FitReport& report) {
  auto t = std::chrono::steady_clock::now();
  const auto p = static_cast<int64_t>(columns.size());
  LocalRows local;
  step(comm, [&] { local = read_local_rows(comm, a.common, columns); });
  report.rows_read = local.rows() + local.dropped;
  const int64_t n = comm.sum(local.rows(), "counting rows");
  report.read_seconds = seconds_since(t);
  t = std::chrono::steady_clock::now();
  cli::OptionsPtr options;  // made inside a step: a bad option stops every rank with its message
  step(comm, [&] { options = cli::make_fit_options(a.fit, columns); });
  int64_t h = 0;
  step(comm, [&] {
    // The refusals of ellipsa_model_from_mcd_statistics, before any work.
    if (a.fit.consistency != "normal")
      throw cli::CliError(cli::kExitUsage, "--consistency median is not distributed (it needs the median distance)");
    if (a.fit.alpha != 0.5) throw cli::CliError(cli::kExitUsage, "--alpha must be 0.5 for the distributed MCD");
    if (n <= p) throw cli::CliError(cli::kExitData, "the MCD needs more rows than columns");
    h = (n + p + 1) / 2;  // mcd_subset_size at alpha 0.5, checked by the library at the end
  });
  cli::ModelPtr estimate;
  std::string text = mcd_start_text(comm, a, columns, local, n);
  step(comm, [&] { estimate = model_from_text(text); });
  report.start_seconds = seconds_since(t);
  t = std::chrono::steady_clock::now();
  std::vector<char> inside(static_cast<std::size_t>(local.rows()), 0), was(inside);
  std::string subset_bytes;
  double current_log_det = std::numeric_limits<double>::infinity();
  int steps = 0;
  for (; steps < kMaxCSteps; ++steps) {
    const int64_t before = comm.bytes_sent();
    std::vector<double> d2;
    step(comm, [&] { d2 = distances(estimate.get(), local); });
    const double cut = select_kth(comm, d2, h, "selecting the h-th smallest distance");
    // Strictly below the cut on every rank; the rest of the h among the rows at the cut.
    AccPtr acc;
    int64_t below = 0, at = 0;
    std::string tied;
    step(comm, [&] {
      acc = new_accumulator(p);
      const ellipsa_matrix x = local.view();
      cli::check(ellipsa_accumulator_add_within(acc.get(), &x, d2.data(), std::nextafter(cut, -1.0), &below), "C-step");
      for (int64_t i = 0; i < local.rows(); ++i) {
        inside[static_cast<std::size_t>(i)] = d2[static_cast<std::size_t>(i)] <= cut;
        if (d2[static_cast<std::size_t>(i)] == cut) {
          ++at;
          tied.append(reinterpret_cast<const char*>(local.values.data() + i * p), static_cast<std::size_t>(p) * 8);
        }
      }
    });
    const int64_t total_below = comm.sum(below, "counting the subset");
    const int64_t total_at = comm.sum(at, "counting ties");
    const int64_t need = h - total_below;
    if (need == total_at) {
      // Every row at the cut belongs to the subset (the usual case: one row there).
      step(comm, [&] {
        acc = new_accumulator(p);
        const ellipsa_matrix x = local.view();
        cli::check(ellipsa_accumulator_add_within(acc.get(), &x, d2.data(), cut, nullptr), "C-step");
      });
    } else {
      // More rows at the cut than needed: rank 0 takes `need` of them in
      // lexicographic order of their values (identical rows are interchangeable).
      const std::vector<std::string> all = comm.gather(tied, "gathering tied rows");
      step(comm, [&] {
        if (comm.rank() != 0) return;
        std::vector<std::vector<double>> rows;
        for (const auto& part : all)
          for (std::size_t o = 0; o < part.size(); o += static_cast<std::size_t>(p) * 8) {
            std::vector<double> r(static_cast<std::size_t>(p));
            std::memcpy(r.data(), part.data() + o, static_cast<std::size_t>(p) * 8);
            rows.push_back(std::move(r));
          }
        std::sort(rows.begin(), rows.end());
        std::vector<double> take;
        for (int64_t i = 0; i < need; ++i)
          take.insert(take.end(), rows[static_cast<std::size_t>(i)].begin(), rows[static_cast<std::size_t>(i)].end());
        const ellipsa_matrix x = ellipsa_matrix_row_major(take.data(), need, p);
        cli::check(ellipsa_accumulator_add(acc.get(), &x), "C-step ties");
      });
    }
    step(comm, [&] {
      // The rows dropped for a missing value, so that the model counts them.
      const std::vector<double> gaps(static_cast<std::size_t>(local.dropped * p), std::nan(""));
      const ellipsa_matrix g = ellipsa_matrix_row_major(gaps.data(), local.dropped, p);
      cli::check(ellipsa_accumulator_add(acc.get(), &g), "C-step");
    });
    int64_t changed = 0;
    for (std::size_t i = 0; i < inside.size(); ++i) changed += inside[i] != was[i];
    was = inside;
    changed = comm.sum(changed, "comparing subsets");
    std::string merged;
    step(comm, [&] { merged = reduce(comm, acc.get(), "merging the subset"); });
    // Rank 0: the subset's estimate; stop when nothing changed or the determinant would rise.
    std::string next;
    step(comm, [&] {
      if (comm.rank() != 0) return;
      cli::ModelPtr m = subset_model(load(merged).get(), columns);
      const double ld = log_det(m.get());
      if ((steps > 0 && changed == 0) || ld > current_log_det) return;  // empty: stop
      current_log_det = ld;
      subset_bytes = merged;
      next = cli::model_text(m.get());
    });
    next = comm.broadcast(next, "sending the estimate");
    ++report.reductions;
    report.bytes_per_reduction =
        std::max(report.bytes_per_reduction, comm.sum(comm.bytes_sent() - before, "counting bytes"));
    if (next.empty()) break;
    step(comm, [&] { estimate = model_from_text(next); });
  }
  report.iterations = steps;
  report.reduce_seconds = seconds_since(t);
  t = std::chrono::steady_clock::now();
  // Consistency, small-sample factors and the reweighting step.
  std::string raw_text;
  step(comm, [&] {
    if (comm.rank() != 0) return;
    ellipsa_model* m = nullptr;
    cli::check(ellipsa_model_from_mcd_statistics(&m, load(subset_bytes).get(), nullptr, n, options.get()),
               "the raw MCD estimate");
    raw_text = cli::model_text(cli::ModelPtr(m).get());
  });
  raw_text = comm.broadcast(raw_text, "sending the raw estimate");
  std::string kept;
  AccPtr kept_here;
  step(comm, [&] {
    const cli::ModelPtr raw = model_from_text(raw_text);
    const std::vector<double> d2 = distances(raw.get(), local);
    double limit = 0.0;
    cli::check(ellipsa_chi2_quantile(&limit, ELLIPSA_MCD_REWEIGHT_LEVEL, static_cast<double>(p)), "reweighting");
    kept_here = new_accumulator(p);
    const ellipsa_matrix x = local.view();
    cli::check(ellipsa_accumulator_add_within(kept_here.get(), &x, d2.data(), limit, nullptr), "reweighting");
  });
  step(comm, [&] { kept = reduce(comm, kept_here.get(), "merging the kept rows"); });
  step(comm, [&] {
    if (comm.rank() != 0) return;
    ellipsa_model* m = nullptr;
    cli::check(ellipsa_model_from_mcd_statistics(&m, load(subset_bytes).get(), load(kept).get(), n, options.get()),
               "the reweighted MCD estimate");
    report.model.reset(m);
  });
  report.fit_seconds = seconds_since(t);
}

}  // namespace ellipsa::mpi
