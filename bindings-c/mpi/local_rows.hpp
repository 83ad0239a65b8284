// What the iterative fits need on every rank: its complete rows in memory
// (EM and the C-steps pass over them once per iteration), an even sample of
// them for the starts, and the exact distributed selection of an order
// statistic.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

#include "driver.hpp"

namespace ellipsa::mpi {

struct LocalRows {
  std::vector<double> values;  // row-major, complete rows only
  int64_t p = 0;
  int64_t dropped = 0;  // rows with a missing value, not kept
  int64_t rows() const { return p > 0 ? static_cast<int64_t>(values.size()) / p : 0; }
  ellipsa_matrix view() const { return ellipsa_matrix_row_major(values.data(), rows(), p); }
};

// Reads this rank's part (refusing infinite cells with file and line). Call inside step().
LocalRows read_local_rows(Comm& comm, const Common& c, const std::vector<std::string>& columns);

// An even sample of about `total` rows over all ranks, gathered on rank 0
// (each rank sends evenly spaced rows, in proportion to its rows): the rows
// the starts are chosen from. Empty on the other ranks.
LocalRows gather_sample(Comm& comm, const LocalRows& local, int64_t total_rows, int64_t total);

// The k-th smallest (1-based) of the values of every rank, exactly: a radix
// selection on the order-preserving 64-bit keys of the doubles, 8 bits per
// round, each round one all-reduce of 256 counts (8 rounds, 2 kB each). NaN
// values are not counted. k must lie in [1, number of non-NaN values].
double select_kth(Comm& comm, const std::vector<double>& values, int64_t k, const char* what);

}  // namespace ellipsa::mpi
