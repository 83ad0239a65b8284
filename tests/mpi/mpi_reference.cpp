// The single-process reference for the MPI test: reads the parts that the
// ranks of ellipsa-mpi read (the layout documented in bindings-c/mpi/parts.hpp,
// written out again here), adds each part to its own accumulator in chunks of
// 65536 rows per file, merges the parts along the binomial tree described in
// bindings-c/mpi/mpi_comm.hpp, in memory, with no MPI, and writes the model.
// The MPI run must give the same bytes.
//
//   mpi_reference RANKS METHOD OUTPUT [--split-rows] FILE...
#include <cstdio>
#include <fstream>
#include <memory>
#include <string>
#include <vector>

#include "csv_reader.hpp"
#include "ellipsa.h"

namespace {

struct AccFree {
  void operator()(ellipsa_accumulator* a) const { ellipsa_accumulator_destroy(a); }
};
using Acc = std::unique_ptr<ellipsa_accumulator, AccFree>;

void check(ellipsa_status s, const char* what) {
  if (s != ELLIPSA_OK) throw std::runtime_error(std::string(what) + ": " + ellipsa_last_error());
}

// Adds rows [lo, hi) (data-row numbers within the file; hi < 0: to the end).
void add_rows(ellipsa_accumulator* acc, const std::string& file, const std::vector<std::string>& columns, int64_t lo,
              int64_t hi) {
  ellipsa::cli::CsvOptions o;
  o.columns = columns;
  ellipsa::cli::CsvReader reader(file, o);
  ellipsa::cli::CsvChunk chunk;
  int64_t at = 0;
  while (reader.next_chunk(chunk, 65536)) {
    const auto rows = static_cast<int64_t>(chunk.rows());
    const int64_t a = std::max(at, lo), b = hi < 0 ? at + rows : std::min(at + rows, hi);
    if (a < b) {
      const auto p = static_cast<int64_t>(chunk.cols());
      const auto x = ellipsa_matrix_row_major(chunk.data() + (a - at) * p, b - a, p);
      check(ellipsa_accumulator_add(acc, &x), file.c_str());
    }
    at += rows;
  }
}

int64_t count_rows(const std::string& file, const std::vector<std::string>& columns) {
  ellipsa::cli::CsvOptions o;
  o.columns = columns;
  ellipsa::cli::CsvReader reader(file, o);
  ellipsa::cli::CsvChunk chunk;
  int64_t n = 0;
  while (reader.next_chunk(chunk, 65536)) n += static_cast<int64_t>(chunk.rows());
  return n;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    if (argc < 5) throw std::runtime_error("usage: mpi_reference RANKS METHOD OUTPUT [--split-rows] FILE...");
    const int ranks = std::stoi(argv[1]);
    const std::string method = argv[2], output = argv[3];
    int first = 4;
    const bool split = std::string(argv[4]) == "--split-rows";
    if (split) ++first;
    const std::vector<std::string> files(argv + first, argv + argc);
    ellipsa::cli::CsvReader detect(files.at(0));
    const std::vector<std::string> columns = detect.selected_names();
    const auto p = static_cast<int64_t>(columns.size());

    std::vector<Acc> parts;
    const int64_t n = split ? count_rows(files[0], columns) : 0;
    const auto f = static_cast<int64_t>(files.size());
    for (int r = 0; r < ranks; ++r) {
      ellipsa_accumulator* a = nullptr;
      check(ellipsa_accumulator_create(&a, p), "create");
      parts.emplace_back(a);
      if (split) {
        add_rows(a, files[0], columns, r * n / ranks, (r + 1) * n / ranks);
      } else {
        for (int64_t i = r * f / ranks; i < (r + 1) * f / ranks; ++i)
          add_rows(a, files[static_cast<std::size_t>(i)], columns, 0, -1);
      }
    }
    // Binomial tree: at step s, part r (r % 2s == 0) takes in part r + s.
    for (int s = 1; s < ranks; s *= 2)
      for (int r = 0; r + s < ranks; r += 2 * s)
        check(ellipsa_accumulator_merge(parts[r].get(), parts[r + s].get()), "merge");

    ellipsa_method m = 0;
    check(ellipsa_method_from_name(&m, method.c_str()), "method");
    ellipsa_fit_options* o = nullptr;
    check(ellipsa_fit_options_create(&o, m), "options");
    std::vector<const char*> names;
    for (const auto& c : columns) names.push_back(c.c_str());
    check(ellipsa_fit_options_set_column_names(o, names.data(), p), "names");
    ellipsa_model* model = nullptr;
    const ellipsa_status st = ellipsa_model_from_accumulator(&model, parts[0].get(), o);
    ellipsa_fit_options_destroy(o);
    check(st, "model");
    char* text = nullptr;
    int64_t length = 0;
    check(ellipsa_model_save(&text, &length, model), "save");
    std::ofstream(output, std::ios::binary).write(text, length);
    ellipsa_text_free(text);
    ellipsa_model_destroy(model);
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "mpi_reference: %s\n", e.what());
    return 1;
  }
}
