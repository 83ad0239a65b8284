// The status lists of ellipsa.h, checked against what the calls return:
// setters refuse exactly the methods their documentation names, a fit returns
// no status outside its list (and never the ARGUMENT its list no longer
// carries) on a grid of awkward inputs, every status of the lists that no
// other contract test reaches, and the model text's number form.
#include <gtest/gtest.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <functional>
#include <limits>
#include <set>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {

std::string last() { return ellipsa_last_error(); }

const ellipsa_method kAllMethods[] = {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS,
                                      ELLIPSA_METHOD_MCD,       ELLIPSA_METHOD_DETMCD,      ELLIPSA_METHOD_MRCD,
                                      ELLIPSA_METHOD_MIXTURE};

struct Setter {
  const char* label;
  std::set<ellipsa_method> serves;                           // the methods the header names for it
  std::function<ellipsa_status(ellipsa_fit_options*)> call;  // a valid value
};

const std::vector<Setter>& setters() {
  using M = std::set<ellipsa_method>;
  static const std::vector<Setter> s = {
      {"divisor", M{ELLIPSA_METHOD_CLASSICAL},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_divisor(o, ELLIPSA_DIVISOR_N); }},
      {"alpha", M{ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MRCD},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_alpha(o, 0.75); }},
      {"seed", M{ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_MIXTURE},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_seed(o, 7); }},
      {"components", M{ELLIPSA_METHOD_MIXTURE},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_components(o, 1, 2); }},
      {"structure", M{ELLIPSA_METHOD_MIXTURE},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_structure(o, ELLIPSA_STRUCTURE_TIED); }},
      {"restarts", M{ELLIPSA_METHOD_MIXTURE},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_restarts(o, 2); }},
      {"iterations", M{ELLIPSA_METHOD_MIXTURE},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_iterations(o, 50, 1e-5); }},
      {"regularisation", M{ELLIPSA_METHOD_MIXTURE},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_regularisation(o, 1e-5); }},
      {"small_sample", M{ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_small_sample(o, 0); }},
      {"consistency", M{ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_DETMCD},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_consistency(o, ELLIPSA_CONSISTENCY_MEDIAN); }},
      {"reference",
       M{ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS, ELLIPSA_METHOD_MCD,
         ELLIPSA_METHOD_DETMCD, ELLIPSA_METHOD_MRCD},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_reference(o, ELLIPSA_REFERENCE_CHI2); }},
      {"missing EM", M{ELLIPSA_METHOD_MIXTURE},
       [](ellipsa_fit_options* o) { return ellipsa_fit_options_set_missing(o, ELLIPSA_MISSING_EM); }},
  };
  return s;
}

// Every status the header lists for ellipsa_model_fit(), plus the two any
// call may return. ARGUMENT is not among them: a setting that does not apply
// is refused by its setter, so a fit never sees one (the fit's ARGUMENT is
// for an unreadable ELLIPSA_THREADS or ELLIPSA_MEMORY_LIMIT, unset here).
const std::set<ellipsa_status> kFitStatuses = {
    ELLIPSA_OK,           ELLIPSA_ERR_NULL,      ELLIPSA_ERR_SHAPE,         ELLIPSA_ERR_DATA,
    ELLIPSA_NUM_SINGULAR, ELLIPSA_NUM_EXACT_FIT, ELLIPSA_NUM_NOT_CONVERGED, ELLIPSA_ERR_CANCELLED,
    ELLIPSA_ERR_MEMORY};

// Awkward data of n rows and p columns, row-major.
std::vector<double> awkward(int kind, int64_t n, int64_t p) {
  std::vector<double> x = correlated_rows(n, p, 900 + static_cast<uint64_t>(kind));
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (int64_t i = 0; i < n; ++i)
    for (int64_t j = 0; j < p; ++j) {
      double& v = x[static_cast<size_t>(i * p + j)];
      switch (kind) {
        case 1:
          if (j == 0) v = 2.5;
          break;                 // a constant column
        case 2: v = 1.0; break;  // every row equal
        case 3:
          if (i % 2 == 1) v = x[static_cast<size_t>((i - 1) * p + j)];
          break;  // duplicated rows
        case 4:
          if (i == 0) v = nan;
          break;  // a row without values
        case 5:
          if (j == p - 1) v = nan;
          break;                     // a column without values
        case 6: v *= 1e300; break;   // near overflow
        case 7: v *= 1e-300; break;  // near underflow
        case 8:
          if (j == p - 1 && p > 1) v = 2.0 * x[static_cast<size_t>(i * p)];
          break;  // collinear
        case 9:
          if ((i + j) % 3 == 0) v = nan;
          break;                                         // scattered NaN
        case 10: v = static_cast<double>(i % 2); break;  // two points only
        default: break;
      }
    }
  return x;
}

}  // namespace

TEST(StatusLists, SettersRefuseExactlyTheMethodsTheyDoNotServe) {
  // The header: "a setter whose setting the handle's method does not use
  // returns ELLIPSA_ERR_ARGUMENT and names the methods it applies to", and
  // each setter's list names its methods.
  for (const Setter& s : setters())
    for (ellipsa_method m : kAllMethods) {
      Options o = options(m);
      ASSERT_TRUE(o);
      const ellipsa_status st = s.call(o.get());
      if (s.serves.count(m)) {
        EXPECT_EQ(st, ELLIPSA_OK) << s.label << " on " << ellipsa_method_name(m) << ": " << last();
      } else {
        EXPECT_EQ(st, ELLIPSA_ERR_ARGUMENT) << s.label << " on " << ellipsa_method_name(m);
        for (ellipsa_method served : s.serves)
          EXPECT_NE(last().find(ellipsa_method_name(served)), std::string::npos) << s.label << ": " << last();
      }
      EXPECT_EQ(s.call(nullptr), ELLIPSA_ERR_NULL) << s.label;
    }
  // The exact wording of the refusal, for one setter.
  Options det = options(ELLIPSA_METHOD_DETMCD);
  ASSERT_EQ(ellipsa_fit_options_set_seed(det.get(), 1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(last(),
            "ellipsa_fit_options_set_seed: a seed does not apply to method detmcd (it applies to mcd, mixture)");
  // Setters every method takes.
  for (ellipsa_method m : kAllMethods) {
    Options o = options(m);
    const char* names[] = {"a"};
    EXPECT_EQ(ellipsa_fit_options_set_column_names(o.get(), names, 1), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_fit_options_set_missing(o.get(), ELLIPSA_MISSING_REFUSE), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_fit_options_set_progress(o.get(), nullptr, nullptr), ELLIPSA_OK);
  }
  EXPECT_EQ(ellipsa_fit_options_set_progress(nullptr, nullptr, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_fit_options_set_column_names(nullptr, nullptr, 1), ELLIPSA_ERR_NULL);
}

TEST(StatusLists, FitReturnsOnlyTheStatusesItsListNames) {
  // A grid of methods, sizes and awkward data; whatever the outcome, it is a
  // listed status and a failure carries a message naming the function.
  int failures_seen = 0, fits_seen = 0;
  for (ellipsa_method method : kAllMethods)
    for (int64_t n : {0, 1, 2, 3, 5, 9, 30})
      for (int64_t p : {1, 2, 4})
        for (int kind = 0; kind <= 10; ++kind) {
          Options o = options(method);
          ASSERT_TRUE(o);
          if (method == ELLIPSA_METHOD_MIXTURE) {
            ASSERT_EQ(ellipsa_fit_options_set_components(o.get(), 1, 3), ELLIPSA_OK);
            ASSERT_EQ(ellipsa_fit_options_set_structure(o.get(), ELLIPSA_STRUCTURE_ALL), ELLIPSA_OK);
            ASSERT_EQ(ellipsa_fit_options_set_restarts(o.get(), 1), ELLIPSA_OK);
            if (kind == 9) ASSERT_EQ(ellipsa_fit_options_set_missing(o.get(), ELLIPSA_MISSING_EM), ELLIPSA_OK);
          }
          const std::vector<double> x = awkward(kind, n, p);
          const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
          ellipsa_model* m = nullptr;
          const ellipsa_status st = ellipsa_model_fit(&m, &v, o.get());
          Model guard(m);
          const std::string where = std::string(ellipsa_method_name(method)) + " n=" + std::to_string(n) +
                                    " p=" + std::to_string(p) + " kind=" + std::to_string(kind);
          EXPECT_TRUE(kFitStatuses.count(st)) << where << ": " << ellipsa_status_string(st) << " " << last();
          if (st == ELLIPSA_OK) {
            ++fits_seen;
            ASSERT_NE(m, nullptr) << where;
            // Scoring the same rows: only statuses of ellipsa_model_score()'s list.
            int32_t k = 1;
            ASSERT_EQ(ellipsa_model_describe(nullptr, nullptr, nullptr, &k, m), ELLIPSA_OK);
            ScoreBuffers b(n, p, k);
            const ellipsa_status ss = ellipsa_model_score(&b.scores, m, &v, 0.975);
            EXPECT_TRUE(ss == ELLIPSA_OK || ss == ELLIPSA_NUM_SINGULAR || ss == ELLIPSA_ERR_MEMORY)
                << where << " scoring: " << ellipsa_status_string(ss) << " " << last();
          } else {
            ++failures_seen;
            EXPECT_EQ(m, nullptr) << where;
            EXPECT_EQ(last().rfind("ellipsa_model_fit: ", 0), 0u) << where << ": " << last();
          }
        }
  // Both outcomes occur on the grid (otherwise it checks nothing).
  EXPECT_GT(fits_seen, 50);
  EXPECT_GT(failures_seen, 50);
}

TEST(StatusLists, StatusesNoOtherContractTestReaches) {
  const auto x = correlated_rows(40, 3, 11);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 40, 3);
  // set_reference: "ellipsa_model_fit() then returns ELLIPSA_ERR_DATA when the
  // fit has too few rows for the reference chosen" (4 rows, 3 columns: the
  // classical fit works, the fitting-rows reference needs m > p + 1 = 4).
  {
    Options o = options(ELLIPSA_METHOD_CLASSICAL);
    ASSERT_EQ(ellipsa_fit_options_set_reference(o.get(), ELLIPSA_REFERENCE_FITTING_ROWS), ELLIPSA_OK);
    const ellipsa_matrix few = ellipsa_matrix_row_major(x.data(), 4, 3);
    ellipsa_model* m = nullptr;
    EXPECT_EQ(ellipsa_model_fit(&m, &few, o.get()), ELLIPSA_ERR_DATA) << last();
    EXPECT_EQ(m, nullptr);
    EXPECT_NE(last().find("fitting-rows reference needs at least"), std::string::npos) << last();
  }
  Options classical = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, classical.get()), ELLIPSA_OK);
  Model gaussian(raw);
  Options robust_options = options(ELLIPSA_METHOD_DETMCD);
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, robust_options.get()), ELLIPSA_OK);
  Model robust(raw);

  // Queries: NULL model, and the raw estimate's STATE and SHAPE.
  EXPECT_EQ(ellipsa_model_describe(nullptr, nullptr, nullptr, nullptr, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_rows(nullptr, nullptr, nullptr), ELLIPSA_ERR_NULL);
  const char* name = nullptr;
  EXPECT_EQ(ellipsa_model_column_name(&name, nullptr, 0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_column_name(nullptr, gaussian.get(), 0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_component(nullptr, 0, nullptr, 0, nullptr, nullptr, 0), ELLIPSA_ERR_NULL);
  double loc[3], scatter[9];
  EXPECT_EQ(ellipsa_model_raw_estimate(loc, 3, scatter, 9, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_raw_estimate(loc, 3, scatter, 9, gaussian.get()), ELLIPSA_ERR_STATE);
  EXPECT_EQ(ellipsa_model_raw_estimate(loc, 2, scatter, 9, robust.get()), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_model_raw_estimate(loc, 3, scatter, 8, robust.get()), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_model_raw_estimate(loc, 3, scatter, 9, robust.get()), ELLIPSA_OK);
  int64_t count = 0;
  EXPECT_EQ(ellipsa_model_row_set(nullptr, 0, &count, robust.get(), 99), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_row_set(nullptr, 0, nullptr, robust.get(), ELLIPSA_ROWS_H_SUBSET), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_row_set(nullptr, 0, &count, nullptr, ELLIPSA_ROWS_H_SUBSET), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_selection(nullptr, 0, &count, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_selection(nullptr, 0, nullptr, gaussian.get()), ELLIPSA_ERR_NULL);

  // The distribution functions: NULL out and arguments outside their range.
  double out = 0.0;
  EXPECT_EQ(ellipsa_chi2_tail(nullptr, 1.0, 2.0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_f_quantile(nullptr, 0.5, 2.0, 3.0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_f_tail(nullptr, 1.0, 2.0, 3.0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_f_tail(&out, std::nan(""), 2.0, 3.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_f_tail(&out, 1.0, 0.0, 3.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_beta_quantile(nullptr, 0.5, 2.0, 3.0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_beta_tail(nullptr, 0.5, 2.0, 3.0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_beta_tail(&out, std::nan(""), 2.0, 3.0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_beta_tail(&out, 0.5, -1.0, 3.0), ELLIPSA_ERR_ARGUMENT);
  ellipsa_method method = 0;
  EXPECT_EQ(ellipsa_method_from_name(nullptr, "mcd"), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_method_from_name(&method, nullptr), ELLIPSA_ERR_NULL);

  // model_shape: DATA (fewer than p + 2 rows) and SINGULAR (a constant column).
  {
    ellipsa_shape_test shape;
    shape.struct_size = sizeof shape;
    std::vector<double> few = correlated_rows(4, 3, 12);
    const ellipsa_matrix vf = ellipsa_matrix_row_major(few.data(), 4, 3);
    ASSERT_EQ(ellipsa_model_fit(&raw, &vf, classical.get()), ELLIPSA_OK);
    Model small(raw);
    EXPECT_EQ(ellipsa_model_shape(&shape, small.get(), &vf), ELLIPSA_ERR_DATA) << last();
    std::vector<double> flat = correlated_rows(30, 3, 13);
    for (int i = 0; i < 30; ++i) flat[static_cast<size_t>(i * 3 + 2)] = 4.0;
    const ellipsa_matrix vc = ellipsa_matrix_row_major(flat.data(), 30, 3);
    Options lw = options(ELLIPSA_METHOD_LEDOIT_WOLF);  // shrinkage fits a constant column
    ASSERT_EQ(ellipsa_model_fit(&raw, &vc, lw.get()), ELLIPSA_OK) << last();
    Model shrunk(raw);
    EXPECT_EQ(ellipsa_model_shape(&shape, shrunk.get(), &vc), ELLIPSA_NUM_SINGULAR) << last();
  }

  // model_from_accumulator: SHAPE (names that do not match p) and SINGULAR
  // (collinear columns under the classical fit, named).
  {
    ellipsa_accumulator* acc = nullptr;
    ASSERT_EQ(ellipsa_accumulator_create(&acc, 3), ELLIPSA_OK);
    std::vector<double> y = correlated_rows(30, 3, 14);
    for (int i = 0; i < 30; ++i)
      y[static_cast<size_t>(i * 3 + 2)] = y[static_cast<size_t>(i * 3)] - y[static_cast<size_t>(i * 3 + 1)];
    const ellipsa_matrix vy = ellipsa_matrix_row_major(y.data(), 30, 3);
    ASSERT_EQ(ellipsa_accumulator_add(acc, &vy), ELLIPSA_OK);
    Options named = options(ELLIPSA_METHOD_CLASSICAL);
    const char* two[] = {"a", "b"};
    ASSERT_EQ(ellipsa_fit_options_set_column_names(named.get(), two, 2), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_model_from_accumulator(&raw, acc, named.get()), ELLIPSA_ERR_SHAPE);
    EXPECT_EQ(raw, nullptr);
    const char* three[] = {"melt", "hold", "gap"};
    ASSERT_EQ(ellipsa_fit_options_set_column_names(named.get(), three, 3), ELLIPSA_OK);
    EXPECT_EQ(ellipsa_model_from_accumulator(&raw, acc, named.get()), ELLIPSA_NUM_SINGULAR);
    EXPECT_NE(last().find("collinear columns: \"melt\" \"hold\" \"gap\""), std::string::npos) << last();
    ellipsa_accumulator_destroy(acc);
  }
}

TEST(StatusLists, ModelTextWritesEachNumberInItsShortestRoundTripForm) {
  // The header: "each number is written in the shortest decimal form that
  // reads back to the same double (at most 17 significant digits)". Every
  // number token of a saved model is compared with std::to_chars' shortest
  // form of the value it reads as (the C++17 definition of shortest round trip).
  const auto x = correlated_rows(50, 3, 15, 0.1);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 50, 3);
  int tokens = 0, below_17 = 0;
  for (ellipsa_method method : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_MCD, ELLIPSA_METHOD_MIXTURE}) {
    Options o = options(method);
    ellipsa_model* raw = nullptr;
    ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << last();
    Model m(raw);
    const std::string text = save(m.get());
    ASSERT_FALSE(text.empty());
    bool in_string = false;
    for (size_t i = 0; i < text.size(); ++i) {
      const char c = text[i];
      if (c == '"' && (i == 0 || text[i - 1] != '\\')) in_string = !in_string;
      if (in_string || !(c == '-' || (c >= '0' && c <= '9'))) continue;
      size_t j = i;
      while (j < text.size() && std::string("0123456789+-.eE").find(text[j]) != std::string::npos) ++j;
      const std::string token = text.substr(i, j - i);
      i = j - 1;
      const bool integral = token.find_first_of(".eE") == std::string::npos;
      const double value = std::strtod(token.c_str(), nullptr);
      char buf[64];
      const auto r = std::to_chars(buf, buf + sizeof buf, value);
      const std::string shortest(buf, r.ptr);
      ++tokens;
      if (integral) continue;  // counts and sizes
      size_t digits = 0;
      for (char d : token.substr(0, token.find_first_of("eE"))) digits += (d >= '0' && d <= '9');
      EXPECT_LE(digits, 18u) << token;  // 17 significant digits and a leading "0."
      // The same digits as the shortest form (JSON may spell the exponent differently).
      EXPECT_EQ(std::strtod(shortest.c_str(), nullptr), value) << token;
      std::string a = token, b = shortest;
      for (std::string* s : {&a, &b}) {
        const size_t e = s->find_first_of("eE");
        *s = s->substr(0, e);
        s->erase(std::remove(s->begin(), s->end(), '.'), s->end());
        s->erase(std::remove(s->begin(), s->end(), '-'), s->end());
        const size_t nz = s->find_first_not_of('0');
        *s = nz == std::string::npos ? "0" : s->substr(nz);
        while (s->size() > 1 && s->back() == '0') s->pop_back();
      }
      EXPECT_EQ(a, b) << "token " << token << " vs shortest " << shortest;
      below_17 += a.size() < 17;
    }
    // save -> load -> save gives identical bytes.
    Model back;
    ASSERT_EQ(load(text, &back), ELLIPSA_OK) << last();
    EXPECT_EQ(save(back.get()), text);
  }
  EXPECT_GT(tokens, 100);
  EXPECT_GT(below_17, 0);  // not every number was padded to 17 digits
}

TEST(StatusLists, HotellingLimitIsTheCoresAndItsMessageSaysWhatItNeeds) {
  // One place for the Tracy-Young-Mason limits (core/hotelling.*): the C
  // function's refusal is the core's sentence, with the rows it needs.
  double out = 0.0;
  EXPECT_EQ(ellipsa_hotelling_limit(&out, ELLIPSA_PHASE_ONE, 4, 3, 0.05), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(last(), "ellipsa_hotelling_limit: phase I limit: needs m >= 5 reference rows for p = 3, got 4");
  EXPECT_EQ(ellipsa_hotelling_limit(&out, ELLIPSA_PHASE_TWO, 3, 3, 0.05), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(last(), "ellipsa_hotelling_limit: phase II limit: needs m >= 4 reference rows for p = 3, got 3");
  EXPECT_EQ(ellipsa_hotelling_limit(&out, ELLIPSA_PHASE_TWO, 20, 0, 0.05), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(last(), "ellipsa_hotelling_limit: phase II limit: p must be at least 1");
}

TEST(StatusLists, StructureAndMissingPolicyNamesRoundTrip) {
  // One spelling of each name, in the C interface like the methods' names.
  for (int32_t s = ELLIPSA_STRUCTURE_FULL; s <= ELLIPSA_STRUCTURE_ALL; ++s) {
    int32_t back = 0;
    ASSERT_EQ(ellipsa_structure_from_name(&back, ellipsa_structure_name(s)), ELLIPSA_OK) << s;
    EXPECT_EQ(back, s);
  }
  EXPECT_STREQ(ellipsa_structure_name(ELLIPSA_STRUCTURE_TIED), "tied");
  EXPECT_STREQ(ellipsa_structure_name(0), "unknown");
  int32_t out = 0;
  EXPECT_EQ(ellipsa_structure_from_name(&out, "round"), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(last(),
            "ellipsa_structure_from_name: unknown covariance structure 'round' (known: full, diagonal, "
            "tied, spherical, all)");
  EXPECT_EQ(ellipsa_structure_from_name(nullptr, "full"), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_structure_from_name(&out, nullptr), ELLIPSA_ERR_NULL);
  for (int32_t p : {ELLIPSA_MISSING_DROP_ROWS, ELLIPSA_MISSING_REFUSE, ELLIPSA_MISSING_EM}) {
    int32_t back = 0;
    ASSERT_EQ(ellipsa_missing_from_name(&back, ellipsa_missing_name(p)), ELLIPSA_OK) << p;
    EXPECT_EQ(back, p);
  }
  EXPECT_STREQ(ellipsa_missing_name(ELLIPSA_MISSING_DROP_ROWS), "drop");
  EXPECT_STREQ(ellipsa_missing_name(9), "unknown");
  EXPECT_EQ(ellipsa_missing_from_name(&out, "impute"), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(last(), "ellipsa_missing_from_name: unknown missing-value policy 'impute' (known: drop, refuse, em)");
  EXPECT_EQ(ellipsa_missing_from_name(nullptr, "em"), ELLIPSA_ERR_NULL);

  // The model file spells the structure with the same name.
  const auto x = correlated_rows(60, 2, 16);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 60, 2);
  Options o = options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_structure(o.get(), ELLIPSA_STRUCTURE_DIAGONAL), ELLIPSA_OK);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << last();
  Model m(raw);
  EXPECT_NE(
      save(m.get()).find(std::string("\"structure\": \"") + ellipsa_structure_name(ELLIPSA_STRUCTURE_DIAGONAL) + "\""),
      std::string::npos)
      << save(m.get()).substr(0, 400);
}
