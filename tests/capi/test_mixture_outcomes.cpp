// Outcomes of a mixture fit that are not failures of the call: an EM run that
// stops at its iteration cap (returned with ELLIPSA_OK and "converged" 0), and
// a model choice whose large K cannot be fitted (failed candidates with their
// reason, the best of the others kept). Through ellipsa.h only.
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "capi_test_util.hpp"
#include "ellipsa.h"

namespace {

using capi_test::Model;

double diagnostic(const ellipsa_model* m, const char* name) {
  double v = std::nan("");
  EXPECT_EQ(ellipsa_model_diagnostic(&v, m, name), ELLIPSA_OK) << name << ": " << ellipsa_last_error();
  return v;
}

std::vector<ellipsa_candidate> selection(const ellipsa_model* m) {
  int64_t count = 0;
  EXPECT_EQ(ellipsa_model_selection(nullptr, 0, &count, m), ELLIPSA_OK);
  std::vector<ellipsa_candidate> table(static_cast<size_t>(count), ellipsa_candidate ELLIPSA_CANDIDATE_INIT);
  if (count > 0) EXPECT_EQ(ellipsa_model_selection(table.data(), count, &count, m), ELLIPSA_OK);
  return table;
}

std::string reason(const ellipsa_model* m, int64_t index) {
  const char* r = nullptr;
  EXPECT_EQ(ellipsa_candidate_explain(&r, m, index), ELLIPSA_OK) << ellipsa_last_error();
  return r == nullptr ? std::string("(null)") : std::string(r);
}

Model fit_mixture(const std::vector<double>& x, int64_t n, int64_t p, int32_t k_min, int32_t k_max, int32_t structure,
                  int32_t max_iterations, double tolerance, ellipsa_status* status) {
  auto o = capi_test::options(ELLIPSA_METHOD_MIXTURE);
  EXPECT_EQ(ellipsa_fit_options_set_components(o.get(), k_min, k_max), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_structure(o.get(), structure), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_seed(o.get(), 17), ELLIPSA_OK);
  if (max_iterations > 0) EXPECT_EQ(ellipsa_fit_options_set_iterations(o.get(), max_iterations, tolerance), ELLIPSA_OK);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* m = nullptr;
  *status = ellipsa_model_fit(&m, &v, o.get());
  return Model(m);
}

// Two well separated clouds of 100 rows each (EM settles in a few steps).
std::vector<double> two_clouds() {
  auto x = capi_test::correlated_rows(100, 2, 41);
  const auto y = capi_test::correlated_rows(100, 2, 42, 25.0);
  x.insert(x.end(), y.begin(), y.end());
  return x;
}

}  // namespace

TEST(MixtureOutcomes, IterationCapReturnsOkWithConvergedZero) {
  // One correlated cloud split into two components: EM creeps for many steps,
  // so one iteration cannot meet a relative tolerance of 1e-12.
  const auto x = capi_test::correlated_rows(200, 2, 40);
  ellipsa_status st = -1;
  const Model m = fit_mixture(x, 200, 2, 2, 2, ELLIPSA_STRUCTURE_FULL, 1, 1e-12, &st);
  ASSERT_EQ(st, ELLIPSA_OK) << ellipsa_last_error();
  ASSERT_NE(m, nullptr);
  EXPECT_EQ(diagnostic(m.get(), "converged"), 0.0);
  EXPECT_EQ(diagnostic(m.get(), "iterations"), 1.0);
  const auto table = selection(m.get());
  ASSERT_EQ(table.size(), 1u);
  EXPECT_EQ(table[0].converged, 0);
  EXPECT_EQ(table[0].chosen, 1);
  EXPECT_TRUE(std::isfinite(table[0].bic));  // still a fit
  EXPECT_EQ(reason(m.get(), 0), "");
  // The flag survives the model file.
  Model back;
  ASSERT_EQ(capi_test::load(capi_test::save(m.get()), &back), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(diagnostic(back.get(), "converged"), 0.0);
  EXPECT_EQ(selection(back.get())[0].converged, 0);
}

TEST(MixtureOutcomes, ConvergedFitReportsConvergedOne) {
  const auto x = two_clouds();
  ellipsa_status st = -1;
  const Model m = fit_mixture(x, 200, 2, 1, 3, ELLIPSA_STRUCTURE_FULL, 0, 0.0, &st);
  ASSERT_EQ(st, ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(diagnostic(m.get(), "converged"), 1.0);
  EXPECT_LT(diagnostic(m.get(), "iterations"), 500.0);  // the documented default cap
  const auto table = selection(m.get());
  ASSERT_EQ(table.size(), 3u);
  for (size_t i = 0; i < table.size(); ++i) {
    if (table[i].chosen) {
      EXPECT_EQ(table[i].components, 2);  // two clouds 25 apart: BIC picks two
      EXPECT_EQ(table[i].converged, 1);
    }
    EXPECT_EQ(reason(m.get(), static_cast<int64_t>(i)), "");
  }
}

TEST(MixtureOutcomes, KRangeBeyondTheRowsKeepsTheBestAndRecordsReasons) {
  // 12 rows, 2 columns, spherical: 4K - 1 free parameters (weights, means, one
  // variance each; common practice), so K = 1..3 can be fitted, K = 4..12 have
  // too few rows and K = 13 exceeds the rows.
  const auto x = capi_test::correlated_rows(12, 2, 43);
  ellipsa_status st = -1;
  const Model m = fit_mixture(x, 12, 2, 1, 13, ELLIPSA_STRUCTURE_SPHERICAL, 0, 0.0, &st);
  ASSERT_EQ(st, ELLIPSA_OK) << ellipsa_last_error();
  const auto table = selection(m.get());
  ASSERT_EQ(table.size(), 13u);
  int chosen = 0;
  for (size_t i = 0; i < table.size(); ++i) {
    const std::string r = reason(m.get(), static_cast<int64_t>(i));
    if (table[i].chosen) {
      ++chosen;
      EXPECT_LE(table[i].components, 3);
      EXPECT_EQ(r, "");
    }
    if (i >= 3) {
      EXPECT_TRUE(std::isnan(table[i].log_likelihood)) << "K = " << table[i].components;
      EXPECT_TRUE(std::isnan(table[i].bic));
      EXPECT_EQ(table[i].converged, 0);
      EXPECT_FALSE(r.empty());
    }
  }
  EXPECT_EQ(chosen, 1);
  EXPECT_EQ(reason(m.get(), 0), "");
  EXPECT_EQ(reason(m.get(), 12), "mixture: K = 13 exceeds the number of rows (12)");
  EXPECT_NE(reason(m.get(), 3).find("fewer than the 15 free parameters"), std::string::npos) << reason(m.get(), 3);

  // The reasons are stored in the model file; a file without them (as written
  // before they were stored) still loads, with empty reasons.
  const std::string text = capi_test::save(m.get());
  ASSERT_NE(text.find("\"reason\""), std::string::npos);
  Model back;
  ASSERT_EQ(capi_test::load(text, &back), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(reason(back.get(), 12), "mixture: K = 13 exceeds the number of rows (12)");
  EXPECT_EQ(capi_test::save(back.get()), text);
  std::string old = text;
  // Remove each `, "reason": "..."` (the messages hold no quote).
  for (size_t key = old.find("\"reason\""); key != std::string::npos; key = old.find("\"reason\"")) {
    const size_t from = old.rfind(',', key);
    const size_t open = old.find('"', old.find(':', key));
    const size_t close = old.find('"', open + 1);
    old.erase(from, close + 1 - from);
  }
  ASSERT_EQ(old.find("reason"), std::string::npos) << old;
  Model older;
  ASSERT_EQ(capi_test::load(old, &older), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(reason(older.get(), 12), "");
  // A reason that is not text is refused.
  std::string bad = text;
  const size_t at = bad.find("\"mixture: K = 13");
  bad.replace(at, bad.find('"', at + 1) - at + 1, "13");
  Model refused;
  EXPECT_EQ(capi_test::load(bad, &refused), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("reason must be a string"), std::string::npos)
      << ellipsa_last_error();
}

TEST(MixtureOutcomes, NoCandidateFitsIsADataError) {
  const auto x = capi_test::correlated_rows(12, 2, 43);
  ellipsa_status st = -1;
  const Model m = fit_mixture(x, 12, 2, 13, 14, ELLIPSA_STRUCTURE_SPHERICAL, 0, 0.0, &st);
  EXPECT_EQ(st, ELLIPSA_ERR_DATA);
  EXPECT_EQ(m, nullptr);
  EXPECT_EQ(std::string(ellipsa_last_error()),
            "ellipsa_model_fit: mixture selection: no candidate could be fitted "
            "(mixture: K = 13 exceeds the number of rows (12))");
}

TEST(MixtureOutcomes, CandidateExplainStatuses) {
  const auto x = two_clouds();
  ellipsa_status st = -1;
  const Model m = fit_mixture(x, 200, 2, 1, 2, ELLIPSA_STRUCTURE_DIAGONAL, 0, 0.0, &st);
  ASSERT_EQ(st, ELLIPSA_OK) << ellipsa_last_error();
  const char* r = "untouched";
  EXPECT_EQ(ellipsa_candidate_explain(nullptr, m.get(), 0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_candidate_explain(&r, nullptr, 0), ELLIPSA_ERR_NULL);
  EXPECT_EQ(r, nullptr);  // set to NULL on failure
  EXPECT_EQ(ellipsa_candidate_explain(&r, m.get(), 2), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_candidate_explain(&r, m.get(), -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("candidate index -1"), std::string::npos) << ellipsa_last_error();
  EXPECT_EQ(ellipsa_candidate_explain(&r, m.get(), 1), ELLIPSA_OK);
  EXPECT_STREQ(r, "");

  auto o = capi_test::options(ELLIPSA_METHOD_CLASSICAL);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 200, 2);
  ellipsa_model* g = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&g, &v, o.get()), ELLIPSA_OK);
  const Model gaussian(g);
  EXPECT_EQ(ellipsa_candidate_explain(&r, gaussian.get(), 0), ELLIPSA_ERR_STATE);
}
