#include "parts.hpp"

#include <algorithm>

namespace ellipsa::mpi {

Part part_of_rank(const std::vector<std::string>& files, bool split_rows, int rank, int ranks) {
  Part part;
  part.split_rows = split_rows;
  if (split_rows) {
    part.files = files;
    return part;
  }
  const auto f = static_cast<std::int64_t>(files.size());
  const std::int64_t begin = rank * f / ranks, end = (rank + 1) * f / ranks;
  part.files.assign(files.begin() + begin, files.begin() + end);
  return part;
}

void read_part(Part& part, const cli::CsvOptions& options, int rank, int ranks, const Visit& visit) {
  cli::CsvChunk chunk;
  if (!part.split_rows) {
    for (const auto& file : part.files) {
      cli::CsvReader reader(file, options);
      while (reader.next_chunk(chunk, kChunkRows)) visit(chunk, 0, chunk.rows(), file, reader);
    }
    return;
  }
  const std::string& file = part.files.at(0);
  std::int64_t n = 0;
  {
    cli::CsvReader counter(file, options);
    while (counter.next_chunk(chunk, kChunkRows)) n += static_cast<std::int64_t>(chunk.rows());
  }
  part.first_row = rank * n / ranks;
  part.end_row = (rank + 1) * n / ranks;
  cli::CsvReader reader(file, options);
  std::int64_t at = 0;  // data row index of chunk row 0
  while (at < part.end_row && reader.next_chunk(chunk, kChunkRows)) {
    const auto rows = static_cast<std::int64_t>(chunk.rows());
    const std::int64_t lo = std::max(at, part.first_row), hi = std::min(at + rows, part.end_row);
    if (lo < hi) visit(chunk, static_cast<std::size_t>(lo - at), static_cast<std::size_t>(hi - lo), file, reader);
    at += rows;
  }
}

}  // namespace ellipsa::mpi
