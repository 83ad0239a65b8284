// ellipsa-mpi fit, classical and shrinkage: every rank adds its rows to an
// accumulator; the accumulators travel as bytes (ellipsa_accumulator_save)
// up the fixed merge tree of Comm::tree_reduce; rank 0 makes the model
// (ellipsa_model_from_accumulator) and writes the model file atomically.
#include <memory>
#include <sstream>

#include "driver.hpp"
#include "mpi_fit_methods.hpp"

namespace ellipsa::mpi {

namespace {

struct AccumulatorDeleter {
  void operator()(ellipsa_accumulator* a) const { ellipsa_accumulator_destroy(a); }
};
using AccPtr = std::unique_ptr<ellipsa_accumulator, AccumulatorDeleter>;

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

}  // namespace

void fit_streaming(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, FitReport& report) {
  const auto p = static_cast<int64_t>(columns.size());
  AccPtr acc;
  Part part = part_of_rank(a.common.files, a.common.split_rows, comm.rank(), comm.size());
  auto t = std::chrono::steady_clock::now();
  step(comm, [&] {
    ellipsa_accumulator* raw = nullptr;
    cli::check(ellipsa_accumulator_create(&raw, p), "streaming fit");
    acc.reset(raw);
    read_part(part, part_options(a.common, columns), comm.rank(), comm.size(),
              [&](const cli::CsvChunk& chunk, std::size_t first, std::size_t count, const std::string& file,
                  cli::CsvReader&) {
                const auto x =
                    ellipsa_matrix_row_major(chunk.data() + first * chunk.cols(), static_cast<int64_t>(count), p);
                cli::check(ellipsa_accumulator_add(acc.get(), &x), file);
                report.rows_read += static_cast<int64_t>(count);
              });
  });
  report.read_seconds = seconds_since(t);
  t = std::chrono::steady_clock::now();
  const int64_t before = comm.bytes_sent();
  std::string merged;
  step(comm, [&] {
    merged = comm.tree_reduce(
        save(acc.get()),
        [](std::string& into, const std::string& from) {
          AccPtr x = load(into), y = load(from);
          cli::check(ellipsa_accumulator_merge(x.get(), y.get()), "merging accumulators");
          into = save(x.get());
        },
        "merging accumulators");
  });
  report.reduce_seconds = seconds_since(t);
  report.bytes_per_reduction = comm.sum(comm.bytes_sent() - before, "counting bytes");
  report.reductions = 1;
  t = std::chrono::steady_clock::now();
  step(comm, [&] {
    if (comm.rank() != 0) return;
    const auto options = cli::make_fit_options(a.fit, columns);
    ellipsa_model* m = nullptr;
    cli::check(ellipsa_model_from_accumulator(&m, load(merged).get(), options.get()), "fitting");
    report.model.reset(m);
  });
  report.fit_seconds = seconds_since(t);
}

int run_fit(Comm& comm, const FitArgs& a) {
  const auto start = std::chrono::steady_clock::now();
  const std::vector<std::string> columns = agreed_columns(comm, a.common);
  const std::string& method = a.fit.method;
  FitReport report;
  if (method == "classical" || method == "ledoit-wolf" || method == "oas") {
    fit_streaming(comm, a, columns, report);
  } else if (method == "mixture") {
    fit_mixture_mpi(comm, a, columns, report);
  } else if (method == "mcd") {
    fit_mcd_mpi(comm, a, columns, report);
  } else {
    step(comm, [&] {  // said once, by rank 0
      if (comm.rank() == 0)
        throw cli::CliError(cli::kExitUsage, "--method " + method +
                                                 " is not distributed (classical, ledoit-wolf, oas, mixture, mcd; "
                                                 "fit it with ellipsa fit)");
    });
  }
  report.rows_read = comm.sum(report.rows_read, "counting rows");
  int code = cli::kExitOk;
  step(comm, [&] {
    if (comm.rank() != 0) return;
    if (report.rows_read == 0) throw cli::CliError(cli::kExitData, "the files have no data rows");
    cli::write_text_file(a.output, cli::model_text(report.model.get()));
    if (cli::warn_not_converged(report.model.get(), "ellipsa-mpi fit", "the data")) code = cli::kExitNumerical;
  });
  report.total_seconds = seconds_since(start);
  if (comm.rank() == 0) emit_fit_summary(comm, a, columns, report);
  return code;
}

}  // namespace ellipsa::mpi
