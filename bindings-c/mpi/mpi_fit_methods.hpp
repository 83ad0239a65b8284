// The distributed fits, one per estimator family, and the report they fill.
#pragma once
#include <string>
#include <vector>

#include "driver.hpp"

namespace ellipsa::mpi {

struct FitReport {
  cli::ModelPtr model;     // rank 0
  int64_t rows_read = 0;   // this rank's, then (run_fit) the sum over ranks
  int64_t reductions = 0;  // tree reductions (1 for a streaming fit; one per EM iteration or C-step)
  int64_t bytes_per_reduction =
      0;                       // bytes sent by all ranks in one reduction with its broadcast (iterative: the largest)
  int64_t iterations = 0;      // EM: M-steps; MCD: C-steps on all rows
  double start_seconds = 0.0;  // EM, MCD: gathering the sample and choosing the start
  double read_seconds = 0.0, reduce_seconds = 0.0, fit_seconds = 0.0, total_seconds = 0.0;
};

void fit_streaming(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, FitReport& report);
void fit_mixture_mpi(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, FitReport& report);
void fit_mcd_mpi(Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, FitReport& report);
void emit_fit_summary(const Comm& comm, const FitArgs& a, const std::vector<std::string>& columns,
                      const FitReport& report);

}  // namespace ellipsa::mpi
