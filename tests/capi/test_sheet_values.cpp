// The numbers of every sheet function equal, bit for bit, the same
// computation through the ordinary C interface; per-row errors stay in their
// row; the fit cache hits and misses as promised; outside references give the
// published values through the sheet functions. Through ellipsa.h only.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <limits>
#include <string>
#include <thread>
#include <vector>

#include "capi_test_util.hpp"
#include "ellipsa.h"
#include "sheet_test_util.hpp"

using namespace sheet_test;
using capi_test::Model;

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr int64_t kN = 60, kP = 3;

// 60 x 3 rows with: row 4 one blank cell, row 9 all blank, row 17 a text cell
// (NaN + mask), row 30 an error cell.
struct SheetData {
  std::vector<double> x = capi_test::correlated_rows(kN, kP, 5, 100.0);
  std::vector<uint8_t> kinds = std::vector<uint8_t>(kN * kP, ELLIPSA_SHEET_INPUT_NUMBER);
  SheetData() {
    x[4 * kP + 1] = kNaN;
    for (int64_t j = 0; j < kP; ++j) x[9 * kP + j] = kNaN;
    x[17 * kP + 2] = kNaN;
    kinds[17 * kP + 2] = ELLIPSA_SHEET_INPUT_TEXT;
    x[30 * kP + 0] = kNaN;
    kinds[30 * kP + 0] = ELLIPSA_SHEET_INPUT_ERROR;
  }
  ellipsa_sheet_value value() const { return range(x.data(), kN, kP, kinds.data()); }
  ellipsa_matrix view() const { return ellipsa_matrix_row_major(x.data(), kN, kP); }
};

// A second block of rows (reference) from the same process, no missing cells.
const std::vector<double>& reference_rows() {
  static const std::vector<double> r = capi_test::correlated_rows(80, kP, 9, 100.0);
  return r;
}

Model fit(const ellipsa_matrix& m, ellipsa_method method, uint64_t seed = 0) {
  auto o = capi_test::options(method);
  if (method == ELLIPSA_METHOD_MCD || method == ELLIPSA_METHOD_MIXTURE)
    EXPECT_EQ(ellipsa_fit_options_set_seed(o.get(), seed), ELLIPSA_OK);
  ellipsa_model* out = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&out, &m, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  return Model(out);
}

void expect_bits(const ellipsa_sheet_cell& c, double expected) {
  ASSERT_EQ(c.type, ELLIPSA_SHEET_CELL_NUMBER);
  EXPECT_EQ(std::memcmp(&c.number, &expected, sizeof(double)), 0) << c.number << " vs " << expected;
}

// Row i of a per-row result: blank rows empty, text/error rows #VALUE!,
// others `expected(i)` bit for bit.
template <class F>
void expect_per_row(const Result& r, int64_t col, F expected) {
  ASSERT_EQ(r.status, ELLIPSA_OK) << r.message;
  for (int64_t i = 0; i < kN; ++i) {
    SCOPED_TRACE("row " + std::to_string(i));
    const auto& c = r.at(i, col);
    if (i == 9) {
      EXPECT_EQ(c.type, ELLIPSA_SHEET_CELL_EMPTY);
    } else if (i == 17 || i == 30) {
      EXPECT_EQ(c.type, ELLIPSA_SHEET_CELL_ERROR);
      EXPECT_EQ(c.error, ELLIPSA_SHEET_ERROR_VALUE);
    } else {
      expect_bits(c, expected(i));
    }
  }
}

}  // namespace

TEST(SheetValues, ScreeningFunctionsEqualTheCInterfaceBitForBit) {
  const SheetData d;
  const ellipsa_matrix ref_view = ellipsa_matrix_row_major(reference_rows().data(), 80, kP);
  for (const char* method : {"mcd", "classical", "detmcd", "ledoit-wolf"}) {
    for (const bool with_reference : {false, true}) {
      SCOPED_TRACE(std::string(method) + (with_reference ? " with reference" : " on itself"));
      ellipsa_method m{};
      ASSERT_EQ(ellipsa_method_from_name(&m, method), ELLIPSA_OK);
      const Model model = fit(with_reference ? ref_view : d.view(), m, 4);
      capi_test::ScoreBuffers s(kN, kP);
      const ellipsa_matrix view = d.view();
      // p-values and flags as the batch tool gives them: `ellipsa screen`
      // scores its own rows as fitting rows, `ellipsa score` new rows.
      const int32_t role = with_reference ? ELLIPSA_REFERENCE_NEW_ROWS : ELLIPSA_REFERENCE_FITTING_ROWS;
      ASSERT_EQ(ellipsa_model_score_v2(&s.scores, model.get(), &view, 0.99, role), ELLIPSA_OK);

      const ellipsa_sheet_value ref = with_reference ? range(reference_rows().data(), 80, kP) : absent();
      const ellipsa_sheet_value seed = m == ELLIPSA_METHOD_MCD ? number(4) : absent();
      const std::vector<ellipsa_sheet_value> common = {d.value(), ref, text(method), absent(), seed};
      expect_per_row(evaluate("ELL.DIST2", common), 0, [&](int64_t i) { return s.d2[i]; });
      expect_per_row(evaluate("ELL.PVALUE", common), 0, [&](int64_t i) { return s.p_value[i]; });
      expect_per_row(evaluate("ELL.FLAG", {d.value(), ref, number(0.99), text(method), absent(), seed}), 0,
                     [&](int64_t i) { return static_cast<double>(s.flag[i]); });
      capi_test::ScoreBuffers chi2(kN, kP);
      ASSERT_EQ(ellipsa_model_score_v2(&chi2.scores, model.get(), &view, 0.99, ELLIPSA_REFERENCE_CHI2), ELLIPSA_OK);
      expect_per_row(evaluate("ELL.PVALUE", {d.value(), ref, text(method), absent(), seed, text("chi2")}), 0,
                     [&](int64_t i) { return chi2.p_value[i]; });
      expect_per_row(evaluate("ELL.FLAG", {d.value(), ref, number(0.99), text(method), absent(), seed, text("chi2")}),
                     0, [&](int64_t i) { return static_cast<double>(chi2.flag[i]); });
      expect_per_row(evaluate("ELL.DRIVER", common), 0, [&](int64_t i) {
        int64_t best = -1;
        for (int64_t j = 0; j < kP; ++j) {
          const double c = s.contribution[i * kP + j];
          if (!std::isnan(c) && (best < 0 || c > s.contribution[i * kP + best])) best = j;
        }
        return static_cast<double>(best + 1);
      });
      for (const bool conditional : {false, true}) {
        const Result r = evaluate("ELL.CONTRIB", {d.value(), ref, flag(conditional), text(method), absent(), seed});
        const auto& v = conditional ? s.conditional_drop : s.contribution;
        for (int64_t j = 0; j < kP; ++j) {
          if (j == 1) continue;  // row 4's blank cell: checked below
          expect_per_row(r, j, [&](int64_t i) { return v[i * kP + j]; });
        }
        EXPECT_EQ(r.at(4, 1).type, ELLIPSA_SHEET_CELL_EMPTY);  // not observed
        expect_bits(r.at(4, 0), v[4 * kP + 0]);
      }
    }
  }
}

TEST(SheetValues, ProfileFunctionsEqualModelQueries) {
  const SheetData d;
  for (const char* method : {"mcd", "classical", "oas"}) {
    SCOPED_TRACE(method);
    ellipsa_method m{};
    ASSERT_EQ(ellipsa_method_from_name(&m, method), ELLIPSA_OK);
    const Model model = fit(d.view(), m, 0);
    std::vector<double> location(kP), scatter(kP * kP);
    ASSERT_EQ(ellipsa_model_component(location.data(), kP, scatter.data(), kP * kP, nullptr, model.get(), 0),
              ELLIPSA_OK);
    const Result c = evaluate("ELL.CENTER", {d.value(), text(method)});
    ASSERT_EQ(c.status, ELLIPSA_OK) << c.message;
    for (int64_t j = 0; j < kP; ++j) expect_bits(c.at(0, j), location[j]);
    const Result s = evaluate("ELL.SCATTER", {d.value(), text(method)});
    ASSERT_EQ(s.status, ELLIPSA_OK) << s.message;
    for (int64_t i = 0; i < kP; ++i)
      for (int64_t j = 0; j < kP; ++j) expect_bits(s.at(i, j), scatter[i * kP + j]);
  }
  for (const char* method : {"ledoit-wolf", "oas"}) {
    ellipsa_method m{};
    ASSERT_EQ(ellipsa_method_from_name(&m, method), ELLIPSA_OK);
    const Model model = fit(d.view(), m);
    double intensity = 0.0;
    ASSERT_EQ(ellipsa_model_diagnostic(&intensity, model.get(), "shrinkage_intensity"), ELLIPSA_OK);
    const Result r = evaluate("ELL.SHRINKAGE", {d.value(), text(method)});
    ASSERT_EQ(r.status, ELLIPSA_OK) << r.message;
    expect_bits(r.at(0, 0), intensity);
  }
}

TEST(SheetValues, RegimeFunctionsEqualTheMixtureThroughTheCInterface) {
  // Two separated groups of 40 rows (seeded), plus the sheet's blank and text rows.
  SheetData d;
  for (int64_t i = 30; i < kN; ++i)
    for (int64_t j = 0; j < kP; ++j) d.x[i * kP + j] += 25.0;
  auto o = capi_test::options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_components(o.get(), 1, 3), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_fit_options_set_seed(o.get(), 2), ELLIPSA_OK);
  const ellipsa_matrix view = d.view();
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &view, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  const Model model(raw);
  int32_t k = 0;
  ASSERT_EQ(ellipsa_model_describe(nullptr, nullptr, nullptr, &k, model.get()), ELLIPSA_OK);
  capi_test::ScoreBuffers s(kN, kP, k);
  ASSERT_EQ(ellipsa_model_score(&s.scores, model.get(), &view, 0.975), ELLIPSA_OK);

  const std::vector<ellipsa_sheet_value> args = {d.value(), absent(), text("1-3"), text("full"), number(2)};
  expect_per_row(evaluate("ELL.REGIME", args), 0, [&](int64_t i) { return s.component[i] + 1.0; });
  const Result mem = evaluate("ELL.MEMBERSHIP", args);
  ASSERT_EQ(mem.cols, 3);
  for (int64_t c = 0; c < k; ++c) expect_per_row(mem, c, [&](int64_t i) { return s.membership[i * k + c]; });
  for (int64_t c = k; c < 3; ++c) EXPECT_EQ(mem.at(0, c).type, ELLIPSA_SHEET_CELL_EMPTY);

  const Result table = evaluate("ELL.REGIMETABLE", {d.value(), text("1-3"), text("full"), number(2)});
  ASSERT_EQ(table.status, ELLIPSA_OK) << table.message;
  ASSERT_EQ(table.rows, 4);
  EXPECT_STREQ(table.at(0, 4).text, "bic");
  std::vector<ellipsa_candidate> cands(3);
  for (auto& c : cands) c.struct_size = sizeof c;
  int64_t count = 0;
  ASSERT_EQ(ellipsa_model_selection(cands.data(), 3, &count, model.get()), ELLIPSA_OK);
  ASSERT_EQ(count, 3);
  for (int64_t t = 0; t < 3; ++t) {
    expect_bits(table.at(t + 1, 0), cands[t].components);
    EXPECT_STREQ(table.at(t + 1, 1).text, "full");
    expect_bits(table.at(t + 1, 2), cands[t].log_likelihood);
    expect_bits(table.at(t + 1, 4), cands[t].bic);
    expect_bits(table.at(t + 1, 5), cands[t].icl);
    expect_bits(table.at(t + 1, 7), cands[t].chosen);
  }
}

TEST(SheetValues, LimitsAndDistributionsEqualTheCFunctions) {
  double v = 0.0;
  ASSERT_EQ(ellipsa_chi2_quantile(&v, 0.95, 3), ELLIPSA_OK);
  expect_bits(evaluate("ELL.CHI2INV", {number(0.95), number(3)}).at(0, 0), v);
  ASSERT_EQ(ellipsa_chi2_tail(&v, 7.5, 3), ELLIPSA_OK);
  expect_bits(evaluate("ELL.CHI2TAIL", {number(7.5), number(3)}).at(0, 0), v);
  ASSERT_EQ(ellipsa_f_quantile(&v, 0.9, 3, 17), ELLIPSA_OK);
  expect_bits(evaluate("ELL.FINV", {number(0.9), number(3), number(17)}).at(0, 0), v);
  ASSERT_EQ(ellipsa_f_tail(&v, 2.9, 3, 17), ELLIPSA_OK);
  expect_bits(evaluate("ELL.FTAIL", {number(2.9), number(3), number(17)}).at(0, 0), v);
  ASSERT_EQ(ellipsa_beta_quantile(&v, 0.3, 2, 5), ELLIPSA_OK);
  expect_bits(evaluate("ELL.BETAINV", {number(0.3), number(2), number(5)}).at(0, 0), v);
  ASSERT_EQ(ellipsa_beta_tail(&v, 0.3, 2, 5), ELLIPSA_OK);
  expect_bits(evaluate("ELL.BETATAIL", {number(0.3), number(2), number(5)}).at(0, 0), v);
  ASSERT_EQ(ellipsa_hotelling_limit(&v, ELLIPSA_PHASE_TWO, 50, 4, 1.0 - 0.99), ELLIPSA_OK);
  expect_bits(evaluate("ELL.T2LIMIT", {number(50), number(4), number(0.99)}).at(0, 0), v);
  ASSERT_EQ(ellipsa_hotelling_limit(&v, ELLIPSA_PHASE_ONE, 50, 4, 1.0 - 0.975), ELLIPSA_OK);
  expect_bits(evaluate("ELL.T2LIMIT", {number(50), number(4), absent(), number(1)}).at(0, 0), v);
  // Numbers typed as text are read as numbers, as sheets do.
  ASSERT_EQ(ellipsa_chi2_quantile(&v, 0.95, 3), ELLIPSA_OK);
  expect_bits(evaluate("ELL.CHI2INV", {text("0.95"), text(" 3")}).at(0, 0), v);
  // The version canary: the library's own version text.
  const Result version = evaluate("ELL.VERSION", {});
  ASSERT_EQ(version.status, ELLIPSA_OK);
  ASSERT_EQ(version.at(0, 0).type, ELLIPSA_SHEET_CELL_TEXT);
  EXPECT_STREQ(version.at(0, 0).text, ellipsa_version());
  // A probability outside its range is a whole-function argument error.
  EXPECT_EQ(evaluate("ELL.CHI2INV", {number(1.5), number(3)}).status, ELLIPSA_ERR_ARGUMENT);
}

// Johnson & Wichern, Applied Multivariate Statistical Analysis, Example 5.2
// (sweat data, H0: mu = (4, 50, 10)): T^2 = 9.74 (9.7388 to four decimals) and
// the 10% critical value (n-1)p/(n-p) F(3,17; 0.90) = 8.18 (from a table F). Through the sheet:
// T^2 = n * ELL.DIST2(mu0, reference = the data, "classical").
TEST(SheetValues, SweatExampleThroughTheSheetFunctions) {
  int64_t n = 0;
  const auto x = capi_test::read_columns(std::string(ELLIPSA_REFERENCE_DIR) + "/hotelling/sweat_johnson_wichern.csv",
                                         {"sweat_rate", "sodium", "potassium"}, &n);
  ASSERT_EQ(n, 20);
  const double mu0[3] = {4.0, 50.0, 10.0};
  const Result r = evaluate("ELL.DIST2", {range(mu0, 1, 3), range(x.data(), n, 3), text("classical")});
  ASSERT_EQ(r.status, ELLIPSA_OK) << r.message;
  EXPECT_NEAR(20.0 * r.at(0, 0).number, 9.7388, 5e-5);  // J&W Example 5.2, T^2 to four decimals
  const Result f = evaluate("ELL.FINV", {number(0.90), number(3), number(17)});
  // J&W Example 5.2 reads F(3, 17; 0.10) = 2.44 from a two-decimal table and
  // prints the critical value (19 * 3 / 17) * 2.44 = 8.18.
  EXPECT_NEAR(f.at(0, 0).number, 2.44, 0.005);
  EXPECT_NEAR(19.0 * 3.0 / 17.0 * f.at(0, 0).number, 8.18, 19.0 * 3.0 / 17.0 * 0.005);
  const Result tail = evaluate("ELL.FTAIL", {number(2.9045), number(3), number(17)});
  EXPECT_NEAR(tail.at(0, 0).number, 0.0649, 5e-5);  // P-value of F = 2.9045 on (3, 17) df, as printed
}

// NIST/SEMATECH e-Handbook, 1.3.6.7.4, chi-square upper critical values (three
// decimals; tolerance 0.0015 as tests/reference/SOURCES.md explains).
TEST(SheetValues, ChiSquareTableThroughTheSheetFunctions) {
  std::ifstream in(std::string(ELLIPSA_REFERENCE_DIR) + "/distributions/chi2_upper_nist_handbook_table.csv");
  std::string line;
  std::getline(in, line);
  const double upper[] = {0.10, 0.05, 0.025, 0.01, 0.001};
  int rows = 0;
  while (std::getline(in, line)) {
    std::stringstream ss(line);
    std::string cell;
    std::getline(ss, cell, ',');
    const double df = std::stod(cell);
    for (const double u : upper) {
      std::getline(ss, cell, ',');
      const Result r = evaluate("ELL.CHI2INV", {number(1.0 - u), number(df)});
      ASSERT_EQ(r.status, ELLIPSA_OK);
      EXPECT_NEAR(r.at(0, 0).number, std::stod(cell), 0.0015) << "df " << df << " upper " << u;
    }
    ++rows;
  }
  EXPECT_EQ(rows, 100);
}

TEST(SheetValues, CacheFitsOncePerDataAndOptions) {
  const SheetData d;
  ellipsa_sheet_cache* cache = nullptr;
  ASSERT_EQ(ellipsa_sheet_cache_create(&cache, 8, 1 << 20), ELLIPSA_OK);
  int64_t hits = 0, misses = 0, entries = 0, bytes = 0;
  const Result first = evaluate("ELL.DIST2", {d.value()}, cache);
  ASSERT_EQ(first.status, ELLIPSA_OK);
  evaluate("ELL.FLAG", {d.value()}, cache);
  evaluate("ELL.CONTRIB", {d.value()}, cache);
  ASSERT_EQ(ellipsa_sheet_cache_stats(&hits, &misses, &entries, &bytes, cache), ELLIPSA_OK);
  EXPECT_EQ(misses, 1);
  EXPECT_EQ(hits, 2);
  EXPECT_EQ(entries, 1);
  EXPECT_EQ(bytes, kN * kP * 8);
  // The cached fit gives the same bits as a fresh one.
  const Result again = evaluate("ELL.DIST2", {d.value()}, cache);
  EXPECT_EQ(std::memcmp(again.cells.data(), first.cells.data(), first.cells.size() * sizeof(ellipsa_sheet_cell)), 0);
  // One changed cell, or one changed option, is a miss.
  SheetData changed;
  changed.x[0] += 1e-9;
  evaluate("ELL.DIST2", {changed.value()}, cache);
  evaluate("ELL.DIST2", {d.value(), absent(), text("mcd"), absent(), number(1)}, cache);
  ASSERT_EQ(ellipsa_sheet_cache_stats(&hits, &misses, &entries, nullptr, cache), ELLIPSA_OK);
  EXPECT_EQ(misses, 3);
  EXPECT_EQ(hits, 3);
  EXPECT_EQ(entries, 3);
  // A text cell is missing for the fit, like a blank: same fit, a hit.
  SheetData blanked = d;
  blanked.kinds[17 * kP + 2] = ELLIPSA_SHEET_INPUT_NUMBER;
  evaluate("ELL.DIST2", {blanked.value()}, cache);
  ASSERT_EQ(ellipsa_sheet_cache_stats(&hits, nullptr, nullptr, nullptr, cache), ELLIPSA_OK);
  EXPECT_EQ(hits, 4);
  ellipsa_sheet_cache_destroy(cache);
  ellipsa_sheet_cache_destroy(nullptr);
}

TEST(SheetValues, CacheStaysWithinItsBounds) {
  ellipsa_sheet_cache* cache = nullptr;
  EXPECT_EQ(ellipsa_sheet_cache_create(&cache, 0, 100), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_cache_create(&cache, 2, -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_cache_create(nullptr, 2, 100), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_sheet_cache_stats(nullptr, nullptr, nullptr, nullptr, nullptr), ELLIPSA_ERR_NULL);
  ASSERT_EQ(ellipsa_sheet_cache_create(&cache, 2, 1 << 20), ELLIPSA_OK);
  std::vector<std::vector<double>> blocks;
  for (uint64_t seed = 0; seed < 4; ++seed) blocks.push_back(capi_test::correlated_rows(30, 2, seed));
  for (const auto& b : blocks) evaluate("ELL.DIST2", {range(b.data(), 30, 2), absent(), text("classical")}, cache);
  int64_t entries = 0, bytes = 0;
  ASSERT_EQ(ellipsa_sheet_cache_stats(nullptr, nullptr, &entries, &bytes, cache), ELLIPSA_OK);
  EXPECT_EQ(entries, 2);
  EXPECT_EQ(bytes, 2 * 30 * 2 * 8);
  // The least recently used went first: block 3 is still held, block 0 is not.
  int64_t hits = 0;
  evaluate("ELL.DIST2", {range(blocks[3].data(), 30, 2), absent(), text("classical")}, cache);
  evaluate("ELL.DIST2", {range(blocks[0].data(), 30, 2), absent(), text("classical")}, cache);
  ASSERT_EQ(ellipsa_sheet_cache_stats(&hits, nullptr, nullptr, nullptr, cache), ELLIPSA_OK);
  EXPECT_EQ(hits, 1);
  ellipsa_sheet_cache_destroy(cache);
  // A byte bound of 0 keeps nothing.
  ASSERT_EQ(ellipsa_sheet_cache_create(&cache, 2, 0), ELLIPSA_OK);
  evaluate("ELL.DIST2", {range(blocks[0].data(), 30, 2), absent(), text("classical")}, cache);
  ASSERT_EQ(ellipsa_sheet_cache_stats(nullptr, nullptr, &entries, nullptr, cache), ELLIPSA_OK);
  EXPECT_EQ(entries, 0);
  ellipsa_sheet_cache_destroy(cache);
}

TEST(SheetValues, OneCacheSharedByThreadsGivesOneAnswer) {
  const SheetData d;
  ellipsa_sheet_cache* cache = nullptr;
  ASSERT_EQ(ellipsa_sheet_cache_create(&cache, 4, 1 << 20), ELLIPSA_OK);
  const Result expected = evaluate("ELL.DIST2", {d.value()});
  std::vector<Result> results(4);
  std::vector<std::thread> threads;
  for (size_t t = 0; t < results.size(); ++t)
    threads.emplace_back([&, t] {
      for (int k = 0; k < 5; ++k) results[t] = evaluate("ELL.DIST2", {d.value()}, cache);
    });
  for (auto& t : threads) t.join();
  for (const auto& r : results) {
    ASSERT_EQ(r.status, ELLIPSA_OK);
    EXPECT_EQ(std::memcmp(r.cells.data(), expected.cells.data(), r.cells.size() * sizeof(ellipsa_sheet_cell)), 0);
  }
  int64_t hits = 0, misses = 0;
  ASSERT_EQ(ellipsa_sheet_cache_stats(&hits, &misses, nullptr, nullptr, cache), ELLIPSA_OK);
  EXPECT_EQ(hits + misses, 20);
  EXPECT_GE(hits, 16);  // at most one fit per thread before the first insert
  ellipsa_sheet_cache_destroy(cache);
}

TEST(SheetValues, DataThatCannotBeFittedIsAStatusNotACrash) {
  const double one_row[3] = {1, 2, 3};
  Result r = evaluate("ELL.DIST2", {range(one_row, 1, 3)});
  EXPECT_EQ(r.status, ELLIPSA_ERR_DATA);
  EXPECT_NE(r.message.find("rows"), std::string::npos);
  // Text only: every cell masked, so no complete row to fit on.
  std::vector<double> nan(30, kNaN);
  std::vector<uint8_t> text_kinds(30, ELLIPSA_SHEET_INPUT_TEXT);
  r = evaluate("ELL.DIST2", {range(nan.data(), 10, 3, text_kinds.data())});
  EXPECT_EQ(r.status, ELLIPSA_ERR_DATA);
  // One new row against a reference is fine.
  const auto& ref = reference_rows();
  r = evaluate("ELL.DIST2", {range(one_row, 1, 3), range(ref.data(), 80, 3)});
  EXPECT_EQ(r.status, ELLIPSA_OK);
  // Collinear columns under the classical fit: singular, named.
  std::vector<double> collinear(60);
  for (int i = 0; i < 20; ++i) {
    collinear[i * 3] = i;
    collinear[i * 3 + 1] = 2.0 * i + 1.0;
    collinear[i * 3 + 2] = std::sin(i);
  }
  r = evaluate("ELL.DIST2", {range(collinear.data(), 20, 3), absent(), text("classical")});
  EXPECT_EQ(r.status, ELLIPSA_NUM_SINGULAR);
}

TEST(SheetValues, ARangeLargerThanMemoryIsAMemoryError) {
#if defined(__SANITIZE_ADDRESS__) || defined(__SANITIZE_THREAD__)
  GTEST_SKIP() << "the sanitizers' allocators stop the process on impossible sizes by design";
#else
  // A view that repeats one value 2^36 x 2^20 times (stride 0): copying it
  // would need 2^59 bytes.
  const double v = 1.0;
  ellipsa_sheet_value huge = range(&v, int64_t{1} << 36, int64_t{1} << 20);
  huge.range.row_stride = 0;
  huge.range.col_stride = 0;
  int64_t rows = 0, cols = 0;
  EXPECT_EQ(ellipsa_sheet_result_shape(&rows, &cols, index_of("ELL.DIST2"), &huge, 1), ELLIPSA_ERR_MEMORY);
#endif
}
