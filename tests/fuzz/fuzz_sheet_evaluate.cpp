// libFuzzer target for the spreadsheet catalog's generic evaluator
// (ellipsa_sheet_result_shape + ellipsa_sheet_evaluate), as a host would call
// it with fuzzed cells: ranges with blanks, text and error cells, hostile
// numbers, texts from a dictionary of the catalog's words or raw bytes, absent
// optional arguments, values of the wrong kind.
//
// Oracles:
//  1. Statuses are the header's; evaluate fails whenever result_shape fails,
//     with the same status.
//  2. When evaluate succeeds, the cells beyond the result shape are empty,
//     every cell's type is known, number cells of NUMBER type hold no NaN,
//     text cells point at text and error cells name a known error.
//  3. Evaluating twice with a fit cache (the second a cache hit) gives the
//     same cells bit for bit, and so does evaluating without the cache (one
//     input in four: it costs a second fit).
#include <cmath>
#include <cstdint>
#include <cstring>
#include <string>
#include <vector>

#include "fuzz_support.hpp"

namespace {

const char* const kWords[] = {
    "classical", "ledoit-wolf", "oas", "mcd",  "detmcd",   "mrcd",         "mixture", "full", "diagonal",
    "tied",      "spherical",   "all", "chi2", "new-rows", "fitting-rows", "model",   "bic",  "icl",
    "1-4",       "2",           "",    "x",    "0.975",    "1e308",        "nan",     "-1"};

bool same_cells(const std::vector<ellipsa_sheet_cell>& a, const std::vector<ellipsa_sheet_cell>& b) {
  for (std::size_t i = 0; i < a.size(); ++i) {
    if (a[i].type != b[i].type || a[i].error != b[i].error) return false;
    if (std::memcmp(&a[i].number, &b[i].number, sizeof(double)) != 0) return false;
    if ((a[i].text == nullptr) != (b[i].text == nullptr)) return false;
    if (a[i].text && std::strcmp(a[i].text, b[i].text) != 0) return false;
  }
  return true;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  fuzz::Input in(data, size);
  std::int32_t functions = 0;
  fuzz::check(ellipsa_sheet_function_count(&functions) == ELLIPSA_OK && functions > 0, "count");
  const std::int32_t index = static_cast<std::int32_t>(in.range(0, functions - 1));
  ellipsa_sheet_function_info info{};
  info.struct_size = sizeof info;
  fuzz::check(ellipsa_sheet_function_describe(&info, index) == ELLIPSA_OK, "describe");

  // Arguments in catalog order; a fuzzed count (may leave out required ones).
  const std::int32_t count = static_cast<std::int32_t>(in.range(0, info.argument_count));
  std::vector<ellipsa_sheet_value> args(static_cast<std::size_t>(count));
  std::vector<std::vector<double>> ranges(args.size());
  std::vector<std::vector<std::uint8_t>> kinds(args.size());
  std::vector<std::string> texts(args.size());
  const std::int64_t shared_rows = in.range(0, 24), shared_cols = in.range(0, 4);
  for (std::int32_t a = 0; a < count; ++a) {
    ellipsa_sheet_argument_info arg{};
    arg.struct_size = sizeof arg;
    fuzz::check(ellipsa_sheet_argument_describe(&arg, index, a) == ELLIPSA_OK, "argument describe");
    ellipsa_sheet_value& v = args[a];
    v = ELLIPSA_SHEET_VALUE_INIT;
    const std::uint8_t how = in.byte();
    // Mostly the catalog's kind; sometimes absent or another kind.
    v.kind = how < 200 ? arg.kind : (how < 230 ? ELLIPSA_SHEET_VALUE_ABSENT : static_cast<std::int32_t>(how % 6));
    switch (v.kind) {
      case ELLIPSA_SHEET_ARG_RANGE: {
        const bool own = in.byte() < 40;
        const std::int64_t r = own ? in.range(0, 24) : shared_rows, c = own ? in.range(0, 4) : shared_cols;
        ranges[a].resize(static_cast<std::size_t>(r * c));
        for (double& x : ranges[a]) x = in.byte() < 200 ? in.byte() / 16.0 + a : in.value();
        v.range = ellipsa_matrix_row_major(ranges[a].empty() ? nullptr : ranges[a].data(), r, c);
        if (in.byte() < 60) {
          kinds[a].resize(ranges[a].size());
          for (std::uint8_t& k : kinds[a]) {
            const std::uint8_t b = in.byte();
            k = b < 220 ? ELLIPSA_SHEET_INPUT_NUMBER : static_cast<std::uint8_t>(b % 4);
          }
          v.cell_kind = kinds[a].data();
        }
        break;
      }
      case ELLIPSA_SHEET_ARG_NUMBER:
      case ELLIPSA_SHEET_ARG_FLAG: v.number = in.byte() < 128 ? in.byte() / 8.0 : in.value(); break;
      case ELLIPSA_SHEET_ARG_TEXT: {
        const std::uint8_t b = in.byte();
        if (b < 200) {
          texts[a] = kWords[b % (sizeof kWords / sizeof kWords[0])];
        } else {
          const std::int64_t len = in.range(0, 12);
          for (std::int64_t i = 0; i < len; ++i) texts[a].push_back(static_cast<char>(in.byte() | 1));
        }
        v.text = texts[a].c_str();
        break;
      }
      default: break;
    }
  }

  std::int64_t rows = -1, cols = -1;
  const ellipsa_status shape = ellipsa_sheet_result_shape(&rows, &cols, index, args.data(), count);
  fuzz::check(
      shape == ELLIPSA_OK || shape == ELLIPSA_ERR_ARGUMENT || shape == ELLIPSA_ERR_SHAPE || shape == ELLIPSA_ERR_NULL,
      "shape status", ellipsa_last_error());
  if (shape != ELLIPSA_OK) {
    std::vector<ellipsa_sheet_cell> cells(4);
    const ellipsa_status st = ellipsa_sheet_evaluate(cells.data(), 2, 2, nullptr, index, args.data(), count);
    fuzz::check(st == shape, "evaluate and result_shape disagree", ellipsa_last_error());
    return 0;
  }
  fuzz::check(rows >= 1 && cols >= 1 && rows <= 100000 && cols <= 100000, "result shape", std::to_string(rows));
  const std::int64_t extra = in.byte() % 2;
  // The evaluation without a cache (a second fit) runs for one input in four:
  // the fits dominate the cost of an execution (182 executions/s with it on
  // every input, 240 with it on one in four, in 30 s runs on the shared
  // development machine), and a cached result that differs from a
  // fresh one shows on any of the inputs that reach it.
  const bool compare_uncached = (in.byte() & 3) == 0;
  const std::int64_t R = rows + extra, C = cols + extra;
  if (R * C > 4096) return 0;
  ellipsa_sheet_cache* cache = nullptr;
  fuzz::check(ellipsa_sheet_cache_create(&cache, 4, 1 << 20) == ELLIPSA_OK, "cache");
  std::vector<ellipsa_sheet_cell> cached(static_cast<std::size_t>(R * C)), hit(cached.size()), plain;
  const ellipsa_status st = ellipsa_sheet_evaluate(cached.data(), R, C, cache, index, args.data(), count);
  fuzz::check(st == ELLIPSA_OK || st == ELLIPSA_ERR_DATA || st == ELLIPSA_NUM_SINGULAR || st == ELLIPSA_NUM_EXACT_FIT ||
                  st == ELLIPSA_NUM_NOT_CONVERGED || st == ELLIPSA_ERR_ARGUMENT || st == ELLIPSA_ERR_MEMORY,
              "evaluate status", std::string(ellipsa_status_string(st)) + " " + ellipsa_last_error());
  if (st != ELLIPSA_OK) {
    ellipsa_sheet_cache_destroy(cache);
    return 0;
  }
  for (std::int64_t i = 0; i < R; ++i)
    for (std::int64_t j = 0; j < C; ++j) {
      const ellipsa_sheet_cell& c = cached[i * C + j];
      if (i >= rows || j >= cols) fuzz::check(c.type == ELLIPSA_SHEET_CELL_EMPTY, "cell beyond the shape not empty");
      fuzz::check(c.type >= ELLIPSA_SHEET_CELL_EMPTY && c.type <= ELLIPSA_SHEET_CELL_ERROR, "cell type");
      if (c.type == ELLIPSA_SHEET_CELL_NUMBER) fuzz::check(!std::isnan(c.number), "NaN in a number cell");
      if (c.type == ELLIPSA_SHEET_CELL_TEXT) fuzz::check(c.text != nullptr, "text cell without text");
      if (c.type == ELLIPSA_SHEET_CELL_ERROR)
        fuzz::check(c.error >= ELLIPSA_SHEET_ERROR_VALUE && c.error <= ELLIPSA_SHEET_ERROR_NA, "error value");
    }
  fuzz::check(ellipsa_sheet_evaluate(hit.data(), R, C, cache, index, args.data(), count) == ELLIPSA_OK, "hit");
  fuzz::check(same_cells(cached, hit), "cache hit changes the cells");
  if (compare_uncached) {
    plain.resize(cached.size());
    fuzz::check(ellipsa_sheet_evaluate(plain.data(), R, C, nullptr, index, args.data(), count) == ELLIPSA_OK,
                "uncached");
    fuzz::check(same_cells(plain, cached), "cache changes the cells");
  }
  ellipsa_sheet_cache_destroy(cache);
  return 0;
}
