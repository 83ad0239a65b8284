// The bad-input catalogue (docs/bad-input-catalogue.md), one row per test:
// public entry points against hostile inputs. Each row names the call, the
// input, the status and the start of the message; the test makes the call,
// checks the status against the row and against the statuses the header lists
// for that call (ellipsa.h is the source of each list), checks that the
// message names the function, and checks that the row is in the document.
// ELLIPSA_CATALOGUE_PRINT=1 prints the rows as the document's table.
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <limits>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "ellipsa.h"

namespace {

const double kNaN = std::numeric_limits<double>::quiet_NaN();
const double kInf = std::numeric_limits<double>::infinity();

// A hostile matrix: a name and a view over owned storage.
struct Hostile {
  std::string name;
  std::vector<double> storage;
  ellipsa_matrix view{};
};

std::vector<double> clean(int64_t n, int64_t p) {
  std::vector<double> x(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i)
    for (int64_t j = 0; j < p; ++j) x[i * p + j] = std::sin(1.0 + i * 0.7 + j * 1.3) * (j + 1) + 0.01 * i * j;
  return x;
}

std::vector<Hostile> hostile_matrices() {
  const int64_t n = 20, p = 3;
  std::vector<Hostile> h;
  auto add = [&](std::string name, std::vector<double> x, int64_t rows, int64_t cols, int64_t rs, int64_t cs) {
    Hostile m{std::move(name), std::move(x), {}};
    m.view = {m.storage.empty() ? nullptr : m.storage.data(), rows, cols, rs, cs};
    h.push_back(std::move(m));
  };
  add("NULL data, 20 x 3", {}, n, p, p, 1);
  add("empty: 0 rows", clean(1, p), 0, p, p, 1);
  add("no columns", clean(n, 1), n, 0, 0, 1);
  add("negative rows", clean(n, p), -1, p, p, 1);
  add("negative columns", clean(n, p), n, -3, p, 1);
  add("negative row stride", clean(n, p), n, p, -3, 1);
  add("negative column stride", clean(n, p), n, p, p, -1);
  add("rows*cols overflows int64", clean(1, p), int64_t{1} << 62, 8, 8, 1);
  add("one row", clean(1, p), 1, p, p, 1);
  auto x = clean(n, p);
  for (double& v : x) v = kNaN;
  add("all NaN", x, n, p, p, 1);
  x = clean(n, p);
  x[7] = kInf;
  add("+inf in a cell", x, n, p, p, 1);
  x = clean(n, p);
  x[5] = -kInf;
  add("-inf in a cell", x, n, p, p, 1);
  x = clean(n, p);
  for (int64_t i = 0; i < n; ++i) x[i * p + 1] = 4.0;
  add("constant column", x, n, p, p, 1);
  x = clean(n, p);
  for (int64_t i = 0; i < n; ++i) x[i * p + 2] = x[i * p];
  add("duplicate column", x, n, p, p, 1);
  add("n < p (2 rows, 3 columns)", clean(2, p), 2, p, p, 1);
  x = clean(n, p);
  for (double& v : x) v *= 1e300;
  add("values near 1e300", x, n, p, p, 1);
  x = clean(n, p);
  for (double& v : x) v *= 1e-310;
  add("subnormal values", x, n, p, p, 1);
  add("zero row stride (one row repeated)", clean(1, p), n, p, 0, 1);
  x = clean(n, p);
  for (int64_t i = 0; i < n; ++i) x[i * p] = kNaN;
  add("one column all NaN", x, n, p, p, 1);
  return h;
}

struct Row {
  std::string call, input;
  std::function<ellipsa_status()> run;
  std::set<ellipsa_status> listed;  // the statuses ellipsa.h lists for the call
};

std::string first_words(const std::string& message) {
  std::string m = message.substr(0, 90);
  for (char& c : m)
    if (c == '|' || c == '\n') c = ' ';
  return m;
}

std::vector<Row> rows() {
  static std::vector<Hostile> matrices = hostile_matrices();
  std::vector<Row> out;
  static const std::set<ellipsa_status> fit_listed = {
      ELLIPSA_OK,           ELLIPSA_ERR_NULL,      ELLIPSA_ERR_SHAPE,         ELLIPSA_ERR_ARGUMENT, ELLIPSA_ERR_DATA,
      ELLIPSA_NUM_SINGULAR, ELLIPSA_NUM_EXACT_FIT, ELLIPSA_NUM_NOT_CONVERGED, ELLIPSA_ERR_MEMORY};
  const ellipsa_method methods[] = {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_MCD,
                                    ELLIPSA_METHOD_MRCD, ELLIPSA_METHOD_MIXTURE};
  for (ellipsa_method m : methods)
    for (const Hostile& h : matrices)
      out.push_back({std::string("ellipsa_model_fit (") + ellipsa_method_name(m) + ")", h.name,
                     [m, &h] {
                       ellipsa_fit_options* o = nullptr;
                       ellipsa_fit_options_create(&o, m);
                       if (m == ELLIPSA_METHOD_MIXTURE) ellipsa_fit_options_set_restarts(o, 1);
                       ellipsa_model* model = nullptr;
                       const ellipsa_status st = ellipsa_model_fit(&model, &h.view, o);
                       ellipsa_model_destroy(model);
                       ellipsa_fit_options_destroy(o);
                       return st;
                     },
                     fit_listed});
  // Scoring against a fitted classical model of 3 columns.
  static ellipsa_model* model = [] {
    const auto x = clean(20, 3);
    const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 20, 3);
    ellipsa_fit_options* o = nullptr;
    ellipsa_fit_options_create(&o, ELLIPSA_METHOD_CLASSICAL);
    ellipsa_model* m = nullptr;
    ellipsa_model_fit(&m, &v, o);
    ellipsa_fit_options_destroy(o);
    return m;
  }();
  for (const Hostile& h : matrices)
    out.push_back({"ellipsa_model_score",
                   h.name,
                   [&h] {
                     std::vector<double> d2(64);
                     ellipsa_scores s = ELLIPSA_SCORES_INIT;
                     if (h.view.rows >= 0 && h.view.rows <= 64) s.squared_distance = d2.data();
                     return ellipsa_model_score(&s, model, &h.view, 0.975);
                   },
                   {ELLIPSA_OK, ELLIPSA_ERR_NULL, ELLIPSA_ERR_SHAPE, ELLIPSA_ERR_ARGUMENT, ELLIPSA_ERR_DATA,
                    ELLIPSA_ERR_MEMORY}});
  for (const Hostile& h : matrices)
    out.push_back({"ellipsa_accumulator_add",
                   h.name,
                   [&h] {
                     ellipsa_accumulator* a = nullptr;
                     ellipsa_accumulator_create(&a, 3);
                     const ellipsa_status st = ellipsa_accumulator_add(a, &h.view);
                     ellipsa_accumulator_destroy(a);
                     return st;
                   },
                   {ELLIPSA_OK, ELLIPSA_ERR_NULL, ELLIPSA_ERR_SHAPE, ELLIPSA_ERR_DATA, ELLIPSA_ERR_MEMORY}});
  for (const Hostile& h : matrices)
    out.push_back({"ellipsa_data_shape",
                   h.name,
                   [&h] {
                     ellipsa_shape_test t{};
                     t.struct_size = sizeof t;
                     return ellipsa_data_shape(&t, &h.view);
                   },
                   {ELLIPSA_OK, ELLIPSA_ERR_NULL, ELLIPSA_ERR_SHAPE, ELLIPSA_ERR_DATA, ELLIPSA_NUM_SINGULAR,
                    ELLIPSA_ERR_MEMORY}});
  for (const Hostile& h : matrices)
    out.push_back({"ellipsa_batch_compare (batch)",
                   h.name,
                   [&h] {
                     const auto x = clean(20, 3);
                     const ellipsa_matrix ref = ellipsa_matrix_row_major(x.data(), 20, 3);
                     ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
                     o.robust = 0;
                     ellipsa_comparison* c = nullptr;
                     const ellipsa_status st = ellipsa_batch_compare(&c, &ref, &h.view, &o);
                     ellipsa_comparison_destroy(c);
                     return st;
                   },
                   {ELLIPSA_OK, ELLIPSA_ERR_NULL, ELLIPSA_ERR_SHAPE, ELLIPSA_ERR_ARGUMENT, ELLIPSA_ERR_DATA,
                    ELLIPSA_ERR_MEMORY}});
  // Model files.
  const std::set<ellipsa_status> load_listed = {ELLIPSA_OK, ELLIPSA_ERR_NULL, ELLIPSA_ERR_ARGUMENT, ELLIPSA_ERR_FORMAT,
                                                ELLIPSA_ERR_MEMORY};
  static std::string saved = [] {
    char* t = nullptr;
    int64_t len = 0;
    ellipsa_model_save(&t, &len, model);
    std::string s(t, static_cast<size_t>(len));
    ellipsa_text_free(t);
    return s;
  }();
  auto replace = [](std::string s, const std::string& from, const std::string& to) {
    const auto at = s.find(from);
    if (at != std::string::npos) s.replace(at, from.size(), to);
    return s;
  };
  const std::vector<std::pair<std::string, std::string>> files = {
      {"empty text (length 0)", ""},
      {"truncated to half", saved.substr(0, saved.size() / 2)},
      {"not JSON", "this is not a model"},
      {"JSON array", "[1, 2, 3]"},
      {"newer format_version (99)", replace(saved, "\"format_version\": 2", "\"format_version\": 99")},
      {"unknown method", replace(saved, "\"classical\"", "\"magic\"")},
      {"kind mixture without components", replace(saved, "\"gaussian\"", "\"mixture\"")},
      {"location with a string", replace(saved, "\"location\": [", "\"location\": [\"x\",")},
      {"NUL byte inside", replace(saved, "\"format\"", std::string("\"for\0at\"", 8))},
      {"invalid UTF-8", replace(saved, "x1", "\xff\xfe")},
      {"deeply nested arrays", std::string(100000, '[')},
      {"huge number 1e999", replace(saved, "\"n_rows_used\": 20", "\"n_rows_used\": 1e999")},
      {"negative row count", replace(saved, "\"n_rows_used\": 20", "\"n_rows_used\": -20")},
      {"missing scatter", replace(saved, "\"scatter\"", "\"scatterX\"")},
      {"Latin-1 column name", replace(saved, "\"x1\"", "\"caf\xe9\"")},
      {"UTF-16 text (BOM)", std::string("\xff\xfe{\0}\0", 6)},
  };
  for (const auto& [name, text] : files)
    out.push_back({"ellipsa_model_load", name,
                   [text = text] {
                     ellipsa_model* m = nullptr;
                     const ellipsa_status st = ellipsa_model_load(&m, text.data(), static_cast<int64_t>(text.size()));
                     ellipsa_model_destroy(m);
                     return st;
                   },
                   load_listed});
  // Options out of range.
  auto opt = [](ellipsa_method m, std::function<ellipsa_status(ellipsa_fit_options*)> f) {
    return [m, f] {
      ellipsa_fit_options* o = nullptr;
      ellipsa_fit_options_create(&o, m);
      const ellipsa_status st = f(o);
      ellipsa_fit_options_destroy(o);
      return st;
    };
  };
  const std::set<ellipsa_status> setter = {ELLIPSA_OK, ELLIPSA_ERR_NULL, ELLIPSA_ERR_ARGUMENT, ELLIPSA_ERR_SHAPE};
  out.push_back({"ellipsa_fit_options_set_alpha", "alpha 0.3 (mcd)",
                 opt(ELLIPSA_METHOD_MCD, [](auto o) { return ellipsa_fit_options_set_alpha(o, 0.3); }), setter});
  out.push_back({"ellipsa_fit_options_set_alpha", "alpha NaN (mcd)",
                 opt(ELLIPSA_METHOD_MCD, [](auto o) { return ellipsa_fit_options_set_alpha(o, kNaN); }), setter});
  out.push_back({"ellipsa_fit_options_set_alpha", "alpha 0.75 (classical)",
                 opt(ELLIPSA_METHOD_CLASSICAL, [](auto o) { return ellipsa_fit_options_set_alpha(o, 0.75); }), setter});
  out.push_back({"ellipsa_fit_options_set_components", "k_min 0",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_components(o, 0, 3); }),
                 setter});
  out.push_back({"ellipsa_fit_options_set_components", "k_min > k_max",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_components(o, 4, 2); }),
                 setter});
  out.push_back({"ellipsa_fit_options_set_restarts", "restarts 0",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_restarts(o, 0); }), setter});
  out.push_back({"ellipsa_fit_options_set_restarts", "restarts 10001",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_restarts(o, 10001); }),
                 setter});
  out.push_back({"ellipsa_fit_options_set_iterations", "tolerance -1",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_iterations(o, 10, -1.0); }),
                 setter});
  out.push_back({"ellipsa_fit_options_set_iterations", "tolerance +inf",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_iterations(o, 10, kInf); }),
                 setter});
  out.push_back({"ellipsa_fit_options_set_regularisation", "ridge -1e-6",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_regularisation(o, -1e-6); }),
                 setter});
  out.push_back({"ellipsa_fit_options_set_divisor", "divisor 7",
                 opt(ELLIPSA_METHOD_CLASSICAL, [](auto o) { return ellipsa_fit_options_set_divisor(o, 7); }), setter});
  out.push_back({"ellipsa_fit_options_set_missing", "EM for mcd",
                 opt(ELLIPSA_METHOD_MCD, [](auto o) { return ellipsa_fit_options_set_missing(o, ELLIPSA_MISSING_EM); }),
                 setter});
  out.push_back(
      {"ellipsa_fit_options_set_column_names", "count -1",
       opt(ELLIPSA_METHOD_CLASSICAL, [](auto o) { return ellipsa_fit_options_set_column_names(o, nullptr, -1); }),
       setter});
  out.push_back({"ellipsa_fit_options_set_reference", "reference 9",
                 opt(ELLIPSA_METHOD_CLASSICAL, [](auto o) { return ellipsa_fit_options_set_reference(o, 9); }),
                 setter});
  out.push_back({"ellipsa_fit_options_set_structure", "structure 0",
                 opt(ELLIPSA_METHOD_MIXTURE, [](auto o) { return ellipsa_fit_options_set_structure(o, 0); }), setter});
  out.push_back({"ellipsa_fit_options_set_starts", "starts 0 (mcd)",
                 opt(ELLIPSA_METHOD_MCD, [](auto o) { return ellipsa_fit_options_set_starts(o, 0); }), setter});
  out.push_back({"ellipsa_fit_options_set_starts", "starts 5 (detmcd)",
                 opt(ELLIPSA_METHOD_DETMCD, [](auto o) { return ellipsa_fit_options_set_starts(o, 5); }), setter});
  out.push_back({"ellipsa_fit_options_set_memory_limit", "limit -1 byte",
                 opt(ELLIPSA_METHOD_MCD, [](auto o) { return ellipsa_fit_options_set_memory_limit(o, -1); }), setter});
  // Resource ceilings: a fit above the memory ceiling, sizes whose working
  // memory overflows 64 bits (a stride-0 view: one double stands for them all).
  static const double kOne = 1.0;
  out.push_back({"ellipsa_model_fit (mcd)", "1e6 x 50 under a 1 MiB ceiling",
                 [] {
                   ellipsa_fit_options* o = nullptr;
                   ellipsa_fit_options_create(&o, ELLIPSA_METHOD_MCD);
                   ellipsa_fit_options_set_memory_limit(o, 1 << 20);
                   const ellipsa_matrix v{&kOne, 1000000, 50, 0, 0};
                   ellipsa_model* m = nullptr;
                   const ellipsa_status st = ellipsa_model_fit(&m, &v, o);
                   ellipsa_model_destroy(m);
                   ellipsa_fit_options_destroy(o);
                   return st;
                 },
                 fit_listed});
  for (const ellipsa_method m : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_MIXTURE})
    out.push_back({std::string("ellipsa_model_fit (") + ellipsa_method_name(m) + ")", "1 x 2^31: p^2 overflows",
                   [m] {
                     ellipsa_fit_options* o = nullptr;
                     ellipsa_fit_options_create(&o, m);
                     const ellipsa_matrix v{&kOne, 1, int64_t{1} << 31, 0, 0};
                     ellipsa_model* model = nullptr;
                     const ellipsa_status st = ellipsa_model_fit(&model, &v, o);
                     ellipsa_model_destroy(model);
                     ellipsa_fit_options_destroy(o);
                     return st;
                   },
                   fit_listed});
  out.push_back({"ellipsa_fit_memory_estimate", "2^40 x 2^30: n p overflows",
                 [] {
                   ellipsa_fit_options* o = nullptr;
                   ellipsa_fit_options_create(&o, ELLIPSA_METHOD_DETMCD);
                   int64_t bytes = 0;
                   const ellipsa_status st = ellipsa_fit_memory_estimate(&bytes, o, int64_t{1} << 40, int64_t{1} << 30);
                   ellipsa_fit_options_destroy(o);
                   return st;
                 },
                 std::set<ellipsa_status>{ELLIPSA_OK, ELLIPSA_ERR_NULL, ELLIPSA_ERR_SHAPE, ELLIPSA_ERR_ARGUMENT,
                                          ELLIPSA_ERR_MEMORY}});
  out.push_back({"ellipsa_fit_options_create", "method 99",
                 [] {
                   ellipsa_fit_options* o = nullptr;
                   const auto st = ellipsa_fit_options_create(&o, 99);
                   ellipsa_fit_options_destroy(o);
                   return st;
                 },
                 setter});
  out.push_back({"ellipsa_method_from_name", "empty name",
                 [] {
                   ellipsa_method m = 0;
                   return ellipsa_method_from_name(&m, "");
                 },
                 setter});
  out.push_back({"ellipsa_accumulator_create",
                 "p = 0",
                 [] {
                   ellipsa_accumulator* a = nullptr;
                   const auto st = ellipsa_accumulator_create(&a, 0);
                   ellipsa_accumulator_destroy(a);
                   return st;
                 },
                 {ELLIPSA_OK, ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_accumulator_create",
                 "p = 2^62",
                 [] {
                   ellipsa_accumulator* a = nullptr;
                   const auto st = ellipsa_accumulator_create(&a, int64_t{1} << 62);
                   ellipsa_accumulator_destroy(a);
                   return st;
                 },
                 {ELLIPSA_OK, ELLIPSA_ERR_ARGUMENT, ELLIPSA_ERR_MEMORY}});
  out.push_back({"ellipsa_model_score",
                 "level 1.0",
                 [] {
                   std::vector<double> d(2);
                   auto x = clean(2, 3);
                   auto v = ellipsa_matrix_row_major(x.data(), 2, 3);
                   ellipsa_scores s = ELLIPSA_SCORES_INIT;
                   s.squared_distance = d.data();
                   return ellipsa_model_score(&s, model, &v, 1.0);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_model_score",
                 "struct_size 8",
                 [] {
                   auto x = clean(2, 3);
                   auto v = ellipsa_matrix_row_major(x.data(), 2, 3);
                   ellipsa_scores s = ELLIPSA_SCORES_INIT;
                   s.struct_size = 8;
                   return ellipsa_model_score(&s, model, &v, 0.9);
                 },
                 {ELLIPSA_ERR_SHAPE}});
  out.push_back({"ellipsa_chi2_quantile",
                 "probability NaN",
                 [] {
                   double o = 0;
                   return ellipsa_chi2_quantile(&o, kNaN, 3);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_chi2_quantile",
                 "df -1",
                 [] {
                   double o = 0;
                   return ellipsa_chi2_quantile(&o, 0.5, -1);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  // The F and Beta range [1e-100, 1e12] (ellipsa.h, "Distributions"); the
  // first case is the fuzzer's input that hung inside Boost before the check.
  out.push_back({"ellipsa_beta_quantile",
                 "shapes 5e250 and 1e150",
                 [] {
                   double o = 0;
                   return ellipsa_beta_quantile(&o, 0.0041, 4.9778176961711737e250, 1e150);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_beta_tail",
                 "shapes 1e20 and 1e20",
                 [] {
                   double o = 0;
                   return ellipsa_beta_tail(&o, 0.5, 1e20, 1e20);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_f_quantile",
                 "df1 below 1e-100",
                 [] {
                   double o = 0;
                   return ellipsa_f_quantile(&o, 0.5, 1e-300, 3.0);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_f_tail",
                 "df2 above 1e12",
                 [] {
                   double o = 0;
                   return ellipsa_f_tail(&o, 1.0, 3.0, 1e13);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_hotelling_limit",
                 "m <= p",
                 [] {
                   double o = 0;
                   return ellipsa_hotelling_limit(&o, ELLIPSA_PHASE_ONE, 3, 3, 0.99);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_hotelling_limit",
                 "phase 3",
                 [] {
                   double o = 0;
                   return ellipsa_hotelling_limit(&o, 3, 30, 3, 0.99);
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_model_diagnostic",
                 "unknown name",
                 [] {
                   double o = 0;
                   return ellipsa_model_diagnostic(&o, model, "no-such");
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_model_component",
                 "k = 5 of a Gaussian model",
                 [] { return ellipsa_model_component(nullptr, 0, nullptr, 0, nullptr, model, 5); },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_sheet_function_find",
                 "no such function",
                 [] {
                   int32_t i = 0;
                   return ellipsa_sheet_function_find(&i, "ELL.NOPE");
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  out.push_back({"ellipsa_sheet_cache_create",
                 "max_entries 0",
                 [] {
                   ellipsa_sheet_cache* c = nullptr;
                   const auto st = ellipsa_sheet_cache_create(&c, 0, 10);
                   ellipsa_sheet_cache_destroy(c);
                   return st;
                 },
                 {ELLIPSA_ERR_ARGUMENT}});
  return out;
}

std::string status_cell(ellipsa_status st) { return ellipsa_status_string(st); }

TEST(BadInputCatalogue, EveryRowGivesItsDocumentedStatus) {
  std::ifstream in(std::string(ELLIPSA_EXAMPLES_DIR) + "/../docs/bad-input-catalogue.md");
  std::stringstream doc;
  doc << in.rdbuf();
  const bool print = std::getenv("ELLIPSA_CATALOGUE_PRINT") != nullptr;
  int count = 0;
  for (const Row& r : rows()) {
    const ellipsa_status st = r.run();
    const std::string message = st == ELLIPSA_OK ? std::string() : ellipsa_last_error();
    ++count;
    EXPECT_TRUE(r.listed.count(st)) << r.call << " / " << r.input << ": " << status_cell(st)
                                    << " is not among the statuses ellipsa.h lists: " << message;
    if (st != ELLIPSA_OK) {
      const std::string fn = r.call.substr(0, r.call.find(' '));
      EXPECT_EQ(message.rfind(fn, 0), 0u)
          << r.call << " / " << r.input << ": message does not name the function: " << message;
    }
    const std::string line = "| " + r.call + " | " + r.input + " | " + status_cell(st) + " |";
    if (print) {
      std::printf("%s %s |\n", line.c_str(), first_words(message).c_str());
    } else {
      EXPECT_NE(doc.str().find(line), std::string::npos) << "row missing or status changed: " << line;
    }
  }
  std::printf("hostile inputs: %d\n", count);
}

}  // namespace
