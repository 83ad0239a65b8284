// FAST-MCD and DetMCD on published data sets, and against the exhaustive MCD
// optimum on small data.
#include <gtest/gtest.h>

#include <algorithm>
#include <string>

#include "core/cholesky.hpp"
#include "core/distributions.hpp"
#include "core/mcd_deterministic.hpp"
#include "core/mcd_fast.hpp"
#include "core/moments.hpp"
#include "test_mcd_common.hpp"

using namespace ellipsa::core;
using mcd_test::flagged_rows_1based;
using mcd_test::load_robust;

namespace {

void expect_flagged(const RobustFit& f, const std::vector<int>& rows_1based, const char* what) {
  for (int r : rows_1based)
    EXPECT_TRUE(f.outlier[static_cast<std::size_t>(r - 1)]) << what << ": row " << r << " not flagged";
  // The reweighted distances flag them too.
  const double cut = chi2_quantile(0.975, static_cast<double>(f.location.size()));
  for (int r : rows_1based) EXPECT_GT(f.robust_d2(r - 1), cut) << what << ": row " << r;
}

std::vector<bool> classical_flags(const Eigen::MatrixXd& x) {
  const MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
  CholeskyFactor c(mc.covariance);
  const Eigen::VectorXd d2 = c.squared_distances(make_view(x), mc.mean);
  const double cut = chi2_quantile(0.975, static_cast<double>(x.cols()));
  std::vector<bool> f(static_cast<std::size_t>(x.rows()));
  for (Index i = 0; i < x.rows(); ++i) f[static_cast<std::size_t>(i)] = d2(i) > cut;
  return f;
}

}  // namespace

// Brownlee (1965) stackloss, 3 regressors; leverage points 1, 2, 3, 21 as
// recalled from Rousseeuw & Leroy (1987) (SOURCES.md): demand at least these.
TEST(McdReference, StacklossFlagsLeveragePointsClassicalMasksThem) {
  const Eigen::MatrixXd x = load_robust("stackloss.csv", 3);
  ASSERT_EQ(x.rows(), 21);
  const std::vector<int> known{1, 2, 3, 21};
  const RobustFit fast = fast_mcd(make_view(x));
  const RobustFit det = det_mcd(make_view(x));
  EXPECT_FALSE(fast.exact_fit);
  EXPECT_EQ(fast.h, 12);  // floor((21 + 3 + 1) / 2)
  expect_flagged(fast, known, "FAST-MCD");
  expect_flagged(det, known, "DetMCD");
  const std::vector<bool> cl = classical_flags(x);
  int classical_hits = 0;
  for (int r : known) classical_hits += cl[static_cast<std::size_t>(r - 1)] ? 1 : 0;
  EXPECT_LT(classical_hits, 4) << "classical distances should not flag all four (masking)";
}

// Hawkins, Bradu & Kass (1984): rows 1-14 outlying in the regressor space.
TEST(McdReference, HbkFlagsRows1To14) {
  const Eigen::MatrixXd x = load_robust("hbk.csv", 3);
  ASSERT_EQ(x.rows(), 75);
  std::vector<int> known;
  for (int r = 1; r <= 14; ++r) known.push_back(r);
  const RobustFit fast = fast_mcd(make_view(x));
  const RobustFit det = det_mcd(make_view(x));
  expect_flagged(fast, known, "FAST-MCD");
  expect_flagged(det, known, "DetMCD");
  // Constructed data: the other 61 rows are clean regressors; allow a few flags.
  EXPECT_LE(flagged_rows_1based(fast.outlier).size(), 14u + 4u);
  const std::vector<bool> cl = classical_flags(x);
  int classical_hits = 0;
  for (int r : known) classical_hits += cl[static_cast<std::size_t>(r - 1)] ? 1 : 0;
  EXPECT_LT(classical_hits, 14);
}

// Rousseeuw (1984) modified wood gravity data: planted outliers 4, 6, 8, 19.
TEST(McdReference, WoodPlantedOutliers) {
  const Eigen::MatrixXd x = load_robust("wood.csv", 5);
  ASSERT_EQ(x.rows(), 20);
  const std::vector<int> known{4, 6, 8, 19};
  expect_flagged(fast_mcd(make_view(x)), known, "FAST-MCD");
  expect_flagged(det_mcd(make_view(x)), known, "DetMCD");
}

// CYG OB1 (Rousseeuw & Leroy 1987 tabulation): giants 11, 20, 30, 34.
TEST(McdReference, StarsGiants) {
  const Eigen::MatrixXd x = load_robust("starsCYG.csv", 2);
  ASSERT_EQ(x.rows(), 47);
  const std::vector<int> known{11, 20, 30, 34};
  expect_flagged(fast_mcd(make_view(x)), known, "FAST-MCD");
  expect_flagged(det_mcd(make_view(x)), known, "DetMCD");
}

// Exhaustive optimum: stackloss with h = 12, C(21,12) = 293930 subsets.
TEST(McdReference, StacklossReachesExhaustiveOptimum) {
  const Eigen::MatrixXd x = load_robust("stackloss.csv", 3);
  std::vector<Index> best_rows;
  const double best = mcd_test::exhaustive_min_log_det(x, 12, &best_rows);
  const RobustFit fast = fast_mcd(make_view(x));
  const RobustFit det = det_mcd(make_view(x));
  EXPECT_NEAR(fast.raw_log_det, best, 1e-9);
  EXPECT_NEAR(det.raw_log_det, best, 1e-9);
  EXPECT_EQ(fast.h_subset, best_rows);
}

// Invented seeded data (correlated normal rows, 4 planted outliers), n = 20,
// p = 2 and n = 18, p = 3, 20 seeds each. FAST-MCD must reach the exhaustive
// optimum every time. DetMCD (six deterministic starts, no guarantee of the
// global optimum) may never go below it and must reach it in most cases:
// measured 23 of 40 when this test was written; demand at least 20.
// Unoptimised builds (the sanitizer pass of CI) enumerate 3 seeds per p: the
// enumeration alone takes minutes there, and the optimised `make test` runs
// all 40 sets and the DetMCD count.
#ifdef __OPTIMIZE__
constexpr std::uint64_t kExhaustiveSeeds = 20;
#else
constexpr std::uint64_t kExhaustiveSeeds = 3;
#endif
TEST(McdReference, InventedSmallSetsReachExhaustiveOptimum) {
  int det_reached = 0, total = 0;
  for (Index p = 2; p <= 3; ++p)
    for (std::uint64_t seed = 1; seed <= kExhaustiveSeeds; ++seed) {
      const Index n = p == 2 ? 20 : 18;
      Eigen::MatrixXd x = mcd_test::normal_data(n, p, seed);
      x.col(1) += 0.6 * x.col(0);
      for (Index i = 0; i < 4; ++i) {
        x(i, 0) += 6.0 + static_cast<double>(i);
        x(i, 1) -= 6.0 + static_cast<double>(i);
      }
      const Index h = mcd_subset_size(n, p, 0.5);
      const double best = mcd_test::exhaustive_min_log_det(x, h);
      EXPECT_NEAR(fast_mcd(make_view(x)).raw_log_det, best, 1e-9) << "p=" << p << " seed " << seed;
      const double det = det_mcd(make_view(x)).raw_log_det;
      EXPECT_GE(det, best - 1e-9);
      det_reached += std::abs(det - best) < 1e-9 ? 1 : 0;
      ++total;
      if (seed <= 5) {  // alpha = 0.75 as well
        FastMcdOptions o;
        o.alpha = 0.75;
        const Index h75 = mcd_subset_size(n, p, 0.75);
        EXPECT_NEAR(fast_mcd(make_view(x), o).raw_log_det, mcd_test::exhaustive_min_log_det(x, h75), 1e-9);
      }
    }
  if (kExhaustiveSeeds == 20)
    EXPECT_GE(det_reached, 20) << "DetMCD reached the optimum in " << det_reached << " of " << total;
}

// DetMCD with the tau scale (taken beyond kDetMcdQnMaxRows rows) against the
// Qn-based fit on the published sets above, forced onto tau by qn_max_rows =
// 0: the same known outliers flagged, and on stackloss the exhaustive optimum
// (Brownlee 1965; the optimum by enumeration, as above).
TEST(McdReference, DetMcdWithTheTauScaleFindsWhatQnFinds) {
  DetMcdOptions tau;
  tau.qn_max_rows = 0;
  struct Set {
    const char* file;
    Index p;
    std::vector<int> known;
  };
  std::vector<int> hbk_rows;
  for (int r = 1; r <= 14; ++r) hbk_rows.push_back(r);
  const std::vector<Set> sets{{"stackloss.csv", 3, {1, 2, 3, 21}},
                              {"hbk.csv", 3, hbk_rows},
                              {"wood.csv", 5, {4, 6, 8, 19}},
                              {"starsCYG.csv", 2, {11, 20, 30, 34}}};
  for (const Set& s : sets) {
    const Eigen::MatrixXd x = load_robust(s.file, s.p);
    const RobustFit with_tau = det_mcd(make_view(x), tau);
    const RobustFit with_qn = det_mcd(make_view(x));
    expect_flagged(with_tau, s.known, s.file);
    // Measured when written: the same h-subset on stackloss and hbk; on wood
    // the tau starts led to a lower determinant (raw log det -36.670 against
    // -35.840), on starsCYG to a higher one (-8.086 against -8.110). DetMCD
    // promises a local optimum from its six starts, not the global one.
    if (std::string(s.file) == "stackloss.csv" || std::string(s.file) == "hbk.csv")
      EXPECT_EQ(with_tau.h_subset, with_qn.h_subset) << s.file;
  }
  const Eigen::MatrixXd x = load_robust("stackloss.csv", 3);
  EXPECT_NEAR(det_mcd(make_view(x), tau).raw_log_det, mcd_test::exhaustive_min_log_det(x, 12), 1e-9);
}

// Beyond the switch point (n = 12000 > kDetMcdQnMaxRows, so tau by default):
// invented correlated normal rows with 20% shifted; the fit keeps every
// planted row out of its subset and lands where the Qn-based fit of the same
// data does: raw log det -2.2647439 (tau) against -2.2647418 (Qn) when
// written, a few rows of the h-subsets swapped, and the reweighting then
// keeps the same rows, so the final locations agree to rounding.
TEST(McdReference, DetMcdBeyondTheSwitchPointMatchesQn) {
  ASSERT_LT(kDetMcdQnMaxRows, 12000);
  Eigen::MatrixXd x = mcd_test::normal_data(12000, 4, 1202);
  x.col(1) += 0.7 * x.col(0);
  for (Index i = 0; i < 2400; ++i) x.row(i).array() += 5.0;
  DetMcdOptions qn;
  qn.qn_max_rows = 12000;
  const RobustFit with_tau = det_mcd(make_view(x));
  const RobustFit with_qn = det_mcd(make_view(x), qn);
  for (Index r : with_tau.h_subset) EXPECT_GE(r, 2400) << "planted row " << r << " in the subset";
  for (Index r : with_qn.h_subset) EXPECT_GE(r, 2400) << "planted row " << r << " in the Qn subset";
  EXPECT_NEAR(with_tau.raw_log_det, with_qn.raw_log_det, 1e-4);
  EXPECT_EQ(with_tau.outlier, with_qn.outlier);  // the reweighting keeps the same rows
  EXPECT_LT((with_tau.location - with_qn.location).cwiseAbs().maxCoeff(), 1e-9);
}
