// Fast subset of the calibration study (scripts/calibration, docs/calibration.md),
// seeded, through the C interface with the library's defaults: the goals of
// issue 14 that a user sees.
//
// Nominal rate: 1 - level = 2.5% at level 0.975 is the definition of the
// level (a row of the bulk exceeds the 0.975 quantile of its reference
// distribution with probability 0.025). The goal interval [1.8%, 3.5%] is the
// project's (issue 14). Each cell scores R >= 8000 rows: the binomial standard
// error sqrt(0.025 * 0.975 / R) is at most 0.175%, so the interval lies more
// than 4 standard errors below and 5.7 above the nominal rate; rows of one
// replicate share a fit, which the study's s.e. column shows to widen the error
// by up to about 2 in the fresh use, still inside the margins. A seed change
// does not break a calibrated method; a miscalibrated one (the 0.1.0 MCD: 8.8%
// at n = 100, p = 5) fails by tens of standard errors.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "study_cells.hpp"

namespace cal = ellipsa::calibration;

namespace {

// The evaluation seed of docs/calibration.md. Not the calibration seed
// (20261202), on whose samples the robust references were fitted: rates
// measured there would be in-sample.
constexpr uint64_t kSeed = 1;

cal::CellResult cell(const char* method, cal::Bulk bulk, int64_t n, int64_t p, cal::Use use, int64_t rows) {
  cal::CellSettings s;
  EXPECT_EQ(ellipsa_method_from_name(&s.method, method), ELLIPSA_OK);
  s.seed = kSeed;
  const int64_t per_fit = use == cal::Use::Self ? n : s.fresh_rows;
  return cal::run_cell(bulk, n, p, use, (rows + per_fit - 1) / per_fit, s);
}

}  // namespace

TEST(Calibration, CleanGaussianRatesLieInTheGoalIntervalForEveryMethod) {
  for (const char* method : {"classical", "ledoit-wolf", "oas", "mcd", "detmcd"})
    for (const auto& [n, p] : std::vector<std::pair<int64_t, int64_t>>{{50, 5}, {100, 10}})
      for (cal::Use use : {cal::Use::Self, cal::Use::Fresh}) {
        const cal::CellResult r = cell(method, cal::Bulk::Gaussian, n, p, use, 8000);
        EXPECT_EQ(r.failed, 0);
        EXPECT_GE(r.rate(), 0.018) << method << " n=" << n << " p=" << p << " " << cal::use_name(use);
        EXPECT_LE(r.rate(), 0.035) << method << " n=" << n << " p=" << p << " " << cal::use_name(use);
      }
}

namespace {

struct Fitted {
  ellipsa_model* model = nullptr;
  ~Fitted() { ellipsa_model_destroy(model); }
};

// Fits the library's default robust method (mcd, the default of `ellipsa
// screen` and of the demo) and returns the flags of `score` under `reference`.
std::vector<int32_t> default_flags(const std::vector<double>& fit_rows, int64_t n, const std::vector<double>& score,
                                   int64_t m, int64_t p, int32_t reference, uint64_t seed) {
  ellipsa_fit_options* o = nullptr;
  EXPECT_EQ(ellipsa_fit_options_create(&o, ELLIPSA_METHOD_MCD), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_seed(o, seed), ELLIPSA_OK);
  const ellipsa_matrix x = ellipsa_matrix_row_major(fit_rows.data(), n, p);
  Fitted f;
  EXPECT_EQ(ellipsa_model_fit(&f.model, &x, o), ELLIPSA_OK) << ellipsa_last_error();
  ellipsa_fit_options_destroy(o);
  std::vector<int32_t> flag(static_cast<size_t>(m));
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.flag = flag.data();
  const ellipsa_matrix y = ellipsa_matrix_row_major(score.data(), m, p);
  EXPECT_EQ(ellipsa_model_score_v2(&s, f.model, &y, 0.975, reference), ELLIPSA_OK) << ellipsa_last_error();
  return flag;
}

// Numeric columns 4.. of a demo CSV file for the rows whose id starts with `prefix`.
std::vector<double> demo_rows(const std::string& file, const std::string& prefix, std::vector<std::string>& ids) {
  std::ifstream in(std::string(ELLIPSA_EXAMPLES_DIR) + "/" + file);
  EXPECT_TRUE(in.good()) << file;
  std::string line;
  std::getline(in, line);  // header
  std::vector<double> out;
  while (std::getline(in, line)) {
    if (line.rfind(prefix, 0) != 0) continue;
    std::stringstream ss(line);
    std::string cell;
    for (int j = 0; std::getline(ss, cell, ','); ++j) {
      if (j == 0) ids.push_back(cell);
      if (j >= 3) out.push_back(std::stod(cell));
    }
  }
  return out;
}

}  // namespace

// Issue 14 goal: 25% of n = 400 rows of a 6-variable normal bulk shifted 8
// standard deviations along its least-variance direction; the default robust
// screen flags at least 98 of the 100 shifted rows and at most 20 of the 300
// others. (The classical fit is masked by such a cluster: common practice,
// the reason robust fits exist.)
TEST(Calibration, MaskingResistanceIsKept) {
  const int64_t n = 400, p = 6, shifted = 100;
  // Covariance Q diag(lambda) Q' with Q = I - 2 v v' / v'v, v = (1, ..., 6):
  // distinct variances, the smallest (0.25) along q_6.
  const double lambda[p] = {9.0, 5.0, 3.0, 2.0, 1.0, 0.25};
  double q[p][p];
  double vv = 0.0;
  for (int j = 0; j < p; ++j) vv += (j + 1.0) * (j + 1.0);
  for (int a = 0; a < p; ++a)
    for (int b = 0; b < p; ++b) q[a][b] = (a == b ? 1.0 : 0.0) - 2.0 * (a + 1.0) * (b + 1.0) / vv;
  cal::Stream s(kSeed);
  std::vector<double> x(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i) {
    double z[p];
    for (int k = 0; k < p; ++k)
      z[k] = std::sqrt(lambda[k]) * s.normal() + (i < shifted && k == p - 1 ? 8.0 * std::sqrt(lambda[k]) : 0.0);
    for (int a = 0; a < p; ++a) {
      double v = 0.0;
      for (int k = 0; k < p; ++k) v += q[a][k] * z[k];
      x[static_cast<size_t>(i * p + a)] = v;
    }
  }
  const auto flag = default_flags(x, n, x, n, p, ELLIPSA_REFERENCE_FITTING_ROWS, 1);
  int hit = 0, false_flags = 0;
  for (int64_t i = 0; i < n; ++i) (i < shifted ? hit : false_flags) += flag[static_cast<size_t>(i)] == 1;
  std::printf("masking: %d of 100 shifted rows flagged, %d of 300 others\n", hit, false_flags);
  EXPECT_GE(hit, 98);
  EXPECT_LE(false_flags, 20);
}

// The demo's phase-II story (examples/run-demo.sh): a profile of mould A's
// 180 clean reference shots, the new batch's 120 mould A shots scored with the
// model's default reference. The planted faults
// (examples/moulding_new_batch_faults.csv: A-0030, A-0080, A-0101) are
// flagged. Clean shots flagged: at most 8, the 99.7% quantile of
// Binomial(117, 0.025), the count a calibrated 2.5% rate gives on 117 clean
// shots (0.1.0 flagged 19). Issue 14 asks for at most 4; this data set gives 7
// (docs/calibration.md), so that goal is not met and not asserted. The data
// are invented (examples/README.md).
TEST(Calibration, DemoNewBatchFlagsThePlantedFaultsAndFewCleanShots) {
  std::vector<std::string> ref_ids, new_ids;
  const auto ref = demo_rows("moulding_reference.csv", "A-", ref_ids);
  const auto fresh = demo_rows("moulding_new_batch.csv", "A-", new_ids);
  const int64_t p = 7, n = static_cast<int64_t>(ref_ids.size()), m = static_cast<int64_t>(new_ids.size());
  ASSERT_EQ(n, 180);
  ASSERT_EQ(m, 120);
  ASSERT_EQ(static_cast<int64_t>(ref.size()), n * p);
  const auto flag = default_flags(ref, n, fresh, m, p, ELLIPSA_REFERENCE_MODEL, 1);  // seed 1 as in run-demo.sh
  int clean_flags = 0, faults_flagged = 0;
  for (int64_t i = 0; i < m; ++i) {
    const std::string& id = new_ids[static_cast<size_t>(i)];
    const bool fault = id == "A-0030" || id == "A-0080" || id == "A-0101";
    if (fault) faults_flagged += flag[static_cast<size_t>(i)] == 1;
    else clean_flags += flag[static_cast<size_t>(i)] == 1;
  }
  std::printf("demo new batch, mould A: %d of 3 faults flagged, %d of 117 clean shots\n", faults_flagged, clean_flags);
  EXPECT_EQ(faults_flagged, 3);
  EXPECT_LE(clean_flags, 8);
}
