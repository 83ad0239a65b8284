// ellipsa-mpi: the subcommands and what they share. Built on the C interface
// (ellipsa.h) and the batch tool's CSV, option and output pieces; MPI lives
// only in mpi_comm.*.
#pragma once
#include <chrono>
#include <string>
#include <vector>

#include "commands.hpp"
#include "mpi_comm.hpp"
#include "parts.hpp"

namespace ellipsa::mpi {

struct Common {
  std::vector<std::string> files;
  bool split_rows = false;
  cli::DialectFlags dialect;
  cli::OutputFlags out;
};

struct FitArgs {
  Common common;
  std::string output;
  cli::FitFlags fit;
  std::string start;           // mixture, mcd: a model file as the start (else chosen on a sample)
  int64_t sample_rows = 2000;  // mixture, mcd: rows gathered on rank 0 to choose the start
};

struct ScoreArgs {
  Common common;
  std::string model;
  std::string output_dir;
  double level = 0.975;
  std::string reference = "model";
  std::string digits = "10";
};

int run_fit(Comm& comm, const FitArgs& a);
int run_score(Comm& comm, const ScoreArgs& a);

// Runs `body` on this rank, catching what it throws, and agrees with every
// rank on the outcome (Comm::agree): a message naming the rank and, for bad
// data, the file and line. Returns normally only when every rank succeeded.
template <class Body>
void step(Comm& comm, Body&& body) {
  std::string message;
  int code = 0;
  try {
    body();
  } catch (const cli::CliError& e) {
    message = e.what();
    code = e.code;
  } catch (const cli::CsvError& e) {
    message = e.what();
    code = cli::kExitData;
  } catch (const std::exception& e) {
    message = e.what();
    code = cli::kExitData;
  }
  comm.agree(message, code);
}

// The column names every rank reads: rank 0's detection on its first file
// (or exactly --columns), broadcast.
std::vector<std::string> agreed_columns(Comm& comm, const Common& c);
cli::CsvOptions part_options(const Common& c, const std::vector<std::string>& columns);

// Seconds since `start`.
inline double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

}  // namespace ellipsa::mpi
