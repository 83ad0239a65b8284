// Which rows a rank reads, and reading them in chunks.
//
// Two layouts of the input:
//  - several files: rank r of P reads files [r F / P, (r + 1) F / P) of the F
//    given, in the order given (a contiguous block, so rank order is file order);
//  - one file split by rows (--split-rows): rank r reads data rows
//    [r n / P, (r + 1) n / P) of the n rows, after counting them (every rank
//    parses the whole file; split large data into files instead).
// Each file is read in chunks of at most kChunkRows rows, as `ellipsa fit`
// reads its file, so one rank on one file adds the same chunks as that tool.
#pragma once
#include <cstddef>
#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "csv_reader.hpp"

namespace ellipsa::mpi {

constexpr std::size_t kChunkRows = 65536;

struct Part {
  std::vector<std::string> files;
  bool split_rows = false;
  std::int64_t first_row = 0, end_row = 0;  // split_rows: the rank's range (set by read_part)
};

Part part_of_rank(const std::vector<std::string>& files, bool split_rows, int rank, int ranks);

// Rows [first, first + count) of `chunk`, from `file`.
using Visit = std::function<void(const cli::CsvChunk& chunk, std::size_t first, std::size_t count,
                                 const std::string& file, cli::CsvReader& reader)>;

// Reads the part with `options` (whose `columns` should name the columns
// agreed by every rank). Throws CsvError naming file and line.
void read_part(Part& part, const cli::CsvOptions& options, int rank, int ranks, const Visit& visit);

}  // namespace ellipsa::mpi
