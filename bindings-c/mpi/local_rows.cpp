#include "local_rows.hpp"

#include <cmath>
#include <cstring>

namespace ellipsa::mpi {

LocalRows read_local_rows(Comm& comm, const Common& c, const std::vector<std::string>& columns) {
  LocalRows out;
  out.p = static_cast<int64_t>(columns.size());
  Part part = part_of_rank(c.files, c.split_rows, comm.rank(), comm.size());
  read_part(part, part_options(c, columns), comm.rank(), comm.size(),
            [&](const cli::CsvChunk& chunk, std::size_t first, std::size_t count, const std::string&,
                cli::CsvReader& reader) {
              cli::refuse_infinite_cells(reader, chunk);
              const auto p = static_cast<std::size_t>(out.p);
              for (std::size_t i = first; i < first + count; ++i) {
                const double* row = chunk.data() + i * p;
                bool complete = true;
                for (std::size_t j = 0; j < p; ++j) complete = complete && !std::isnan(row[j]);
                if (complete) out.values.insert(out.values.end(), row, row + p);
                else ++out.dropped;
              }
            });
  return out;
}

LocalRows gather_sample(Comm& comm, const LocalRows& local, int64_t total_rows, int64_t total) {
  const int64_t n = local.rows();
  // This rank's share, rounded up so that the sample is never empty while rows exist.
  const int64_t quota = total_rows <= total ? n : std::min<int64_t>(n, (n * total + total_rows - 1) / total_rows);
  std::string bytes(static_cast<std::size_t>(quota * local.p) * sizeof(double), '\0');
  for (int64_t s = 0; s < quota; ++s) {
    const int64_t row = s * n / quota;  // evenly spaced, deterministic
    std::memcpy(bytes.data() + static_cast<std::size_t>(s * local.p) * sizeof(double),
                local.values.data() + row * local.p, static_cast<std::size_t>(local.p) * sizeof(double));
  }
  LocalRows sample;
  sample.p = local.p;
  for (const std::string& part : comm.gather(bytes, "gathering the sample for the starts")) {
    const std::size_t at = sample.values.size();
    sample.values.resize(at + part.size() / sizeof(double));
    std::memcpy(sample.values.data() + at, part.data(), part.size());
  }
  return sample;
}

namespace {
// Order-preserving key of a double: flip every bit of negatives, the sign bit of the others.
uint64_t key_of(double v) {
  uint64_t b = 0;
  std::memcpy(&b, &v, sizeof b);
  return (b >> 63) ? ~b : b | (uint64_t{1} << 63);
}
double value_of(uint64_t key) {
  const uint64_t b = (key >> 63) ? key & ~(uint64_t{1} << 63) : ~key;
  double v = 0.0;
  std::memcpy(&v, &b, sizeof v);
  return v;
}
}  // namespace

double select_kth(Comm& comm, const std::vector<double>& values, int64_t k, const char* what) {
  std::vector<uint64_t> keys;
  keys.reserve(values.size());
  for (double v : values)
    if (!std::isnan(v)) keys.push_back(key_of(v == 0.0 ? 0.0 : v));  // -0 and +0 are one value
  uint64_t prefix = 0;
  int64_t remaining = k;
  for (int shift = 56; shift >= 0; shift -= 8) {
    const uint64_t high = shift == 56 ? 0 : ~((uint64_t{1} << (shift + 8)) - 1);
    std::vector<int64_t> counts(256, 0);
    for (uint64_t key : keys)
      if ((key & high) == prefix) ++counts[(key >> shift) & 255];
    counts = comm.sum(counts, what);
    int64_t below = 0;
    int b = 0;
    for (; b < 256; ++b) {
      if (below + counts[static_cast<std::size_t>(b)] >= remaining) break;
      below += counts[static_cast<std::size_t>(b)];
    }
    if (b == 256) throw std::runtime_error(std::string(what) + ": fewer values than the rank asked for");
    remaining -= below;
    prefix |= static_cast<uint64_t>(b) << shift;
  }
  return value_of(prefix);
}

}  // namespace ellipsa::mpi
