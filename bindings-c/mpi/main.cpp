// ellipsa-mpi: fitting and scoring across the ranks of an MPI job, from
// statistics that merge exactly (docs/distributed.md). Every rank runs this
// program on its own rows; rank 0 writes the model and the summaries.
#include <mpi.h>

#include <CLI/CLI.hpp>
#include <cstdio>
#include <string>

#include "driver.hpp"

namespace {

constexpr const char* kFooter =
    "Run under mpirun, e.g.  mpirun -np 4 ellipsa-mpi fit --method ledoit-wolf -o model.json part-*.csv\n"
    "Exit codes: 0 success; 2 usage; 3 bad data or file (the rank, file and line are named);\n"
    "  4 numerical failure, or a mixture at its iteration cap; 70 internal error.\n"
    "A rank that gives no answer within --timeout seconds ends the job (MPI_Abort).\n";

void add_common(CLI::App& app, ellipsa::mpi::Common& c) {
  app.add_option("files", c.files, "CSV files; rank r of P reads the r-th contiguous block of them")->required();
  app.add_flag("--split-rows", c.split_rows, "One file, split by data rows: rank r reads rows [r n/P, (r+1) n/P)");
  ellipsa::cli::add_dialect_flags(app, c.dialect);
  ellipsa::cli::add_output_flags(app, c.out);
}

}  // namespace

int main(int argc, char** argv) {
  using namespace ellipsa;
  MPI_Init(&argc, &argv);
  int rank = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  CLI::App app{"ellipsa-mpi: fit and score across MPI ranks, with the results of one process."};
  app.set_version_flag("--version", std::string("ellipsa-mpi ") + ellipsa_version());
  app.require_subcommand(1, 1);
  app.footer(kFooter);
  double timeout = 300.0;
  app.add_option("--timeout", timeout, "Seconds to wait for any other rank before ending the job")
      ->capture_default_str();

  mpi::FitArgs fit;
  CLI::App* fit_app = app.add_subcommand("fit", "Fit a model to the rows of every rank; rank 0 writes the model file");
  fit_app->add_option("-o,--output", fit.output, "Model file to write (rank 0)")->required();
  cli::add_fit_flags(*fit_app, fit.fit, true);
  fit_app->add_option("--reference", fit.fit.reference, "Scoring reference recorded in the model (as ellipsa fit)");
  fit_app->add_option(
      "--start", fit.start,
      "mixture, mcd: start from this model file (read by rank 0) instead of a fit on a gathered sample");
  fit_app
      ->add_option("--sample-rows", fit.sample_rows,
                   "mixture, mcd: rows gathered on rank 0 (evenly from every rank) to choose the start")
      ->capture_default_str()
      ->check(CLI::Range(int64_t{2}, int64_t{100000000}));
  add_common(*fit_app, fit.common);

  mpi::ScoreArgs score;
  CLI::App* score_app = app.add_subcommand("score", "Score every rank's rows; each rank writes its own part");
  score_app->add_option("model", score.model, "Model file (read by rank 0 and sent to every rank)")->required();
  score_app
      ->add_option("--output-dir", score.output_dir,
                   "Folder for scores-rank-R.csv of each rank and summary.json (rank 0)")
      ->required();
  score_app->add_option("--level", score.level, "Flag level")->capture_default_str();
  score_app->add_option("--reference", score.reference, "model, chi2, new-rows or fitting-rows")->capture_default_str();
  cli::add_digits_flag(*score_app, score.digits);
  add_common(*score_app, score.common);

  int code = 0;
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    if (rank == 0) code = app.exit(e);
    else code = e.get_exit_code();
    MPI_Finalize();
    return code == 0 ? cli::kExitOk : cli::kExitUsage;
  }
  if (!(timeout > 0.0)) {
    if (rank == 0) std::fprintf(stderr, "ellipsa-mpi: --timeout must be positive\n");
    MPI_Finalize();
    return cli::kExitUsage;
  }
  mpi::Comm comm(MPI_COMM_WORLD, timeout);
  try {
    code = fit_app->parsed() ? mpi::run_fit(comm, fit) : mpi::run_score(comm, score);
  } catch (const mpi::JobStopped& s) {
    code = s.exit_code;
  } catch (const std::exception& e) {
    // Outside any step: the other ranks may be waiting for this one, so the job ends here.
    std::fprintf(stderr, "ellipsa-mpi: rank %d: internal error: %s; ending the job\n", rank, e.what());
    std::fflush(stderr);
    MPI_Abort(MPI_COMM_WORLD, cli::kExitInternal);
  }
  MPI_Finalize();
  return code;
}
