// MRCD (Boudt et al. 2020) for p >= n: conditioning bound, planted outliers.
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <vector>

#include "core/distributions.hpp"
#include "core/error.hpp"
#include "core/mcd_regularised.hpp"
#include "test_mcd_common.hpp"

using namespace ellipsa::core;

namespace {
double condition(const Eigen::MatrixXd& s) {
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(s, Eigen::EigenvaluesOnly);
  return es.eigenvalues().maxCoeff() / es.eigenvalues().minCoeff();
}
}  // namespace

TEST(Mrcd, WideDataWellConditionedAndFlagsPlantedOutliers) {
  const Index n = 40, p = 60, bad = 4;
  // AR(1)-correlated columns (0.7), unequal scales.
  Eigen::MatrixXd x = mcd_test::normal_data(n, p, 17);
  for (Index j = 1; j < p; ++j) x.col(j) = 0.7 * x.col(j - 1) + std::sqrt(1 - 0.49) * x.col(j);
  for (Index j = 0; j < p; ++j) x.col(j) *= 1.0 + static_cast<double>(j % 5);
  for (Index i = 0; i < bad; ++i)
    for (Index j = 0; j < p; ++j) x(i, j) += (j % 2 ? 4.0 : -4.0) * (1.0 + static_cast<double>(j % 5));
  const RobustFit f = mrcd(make_view(x));
  EXPECT_GT(f.rho, 0.0);
  EXPECT_LT(f.rho, 1.0);
  // The guarantee is in standardised units (condition_number <= 50).
  EXPECT_LE(f.condition_number, 50.0 * (1 + 1e-9));
  EXPECT_FALSE(f.target.empty());
  // In original units the scatter is D K D with D the Qn scales (1..5 here):
  // at most 50 * (max D / min D)^2 up to sampling of Qn.
  EXPECT_LT(condition(f.scatter), 50.0 * 40.0);
  for (Index i = 0; i < bad; ++i) EXPECT_TRUE(f.outlier[static_cast<std::size_t>(i)]) << i;
  for (Index i : f.h_subset) EXPECT_GE(i, bad);
  EXPECT_EQ(f.h, 30);  // ceil(0.75 * 40)
  const Index flagged = static_cast<Index>(std::count(f.outlier.begin(), f.outlier.end(), true));
  EXPECT_LE(flagged, n - f.h + 2);  // at most the rows outside H, give or take
}

TEST(Mrcd, ConditionBoundOption) {
  const Eigen::MatrixXd x = mcd_test::normal_data(25, 80, 5);
  MrcdOptions o;
  o.max_condition = 10.0;
  const RobustFit f = mrcd(make_view(x), o);
  EXPECT_LE(f.condition_number, 10.0 * (1 + 1e-9));
  o.max_condition = 1.0;
  EXPECT_THROW(mrcd(make_view(x), o), Error);
  Eigen::MatrixXd bad = x;
  bad(2, 2) = std::nan("");
  EXPECT_THROW(mrcd(make_view(bad)), Error);
}

TEST(Mrcd, TallDataNeedsNoRegularisation) {
  const Eigen::MatrixXd x = mcd_test::normal_data(500, 4, 8);
  const RobustFit f = mrcd(make_view(x));
  EXPECT_EQ(f.rho, 0.0);  // a clean N(0, I) sample is far from condition 50
  EXPECT_LT(f.condition_number, 50.0);
}

// The median calibration (common practice for MRCD, see mcd_common.hpp): with
// an even number of rows the median is the mean of the two middle distances,
// and the stored flags follow the same rule scoring applies to the final
// scatter (robust_d2 against chi2q(p, level)), so the two cannot disagree.
TEST(Mrcd, MedianCalibrationAndStoredFlagsFollowOneRule) {
  for (Index n : {40, 41}) {
    const Index p = 60;
    const Eigen::MatrixXd x = mcd_test::normal_data(n, p, 23);
    const RobustFit f = mrcd(make_view(x));
    const double pd = static_cast<double>(p);
    std::vector<double> d(f.robust_d2.data(), f.robust_d2.data() + n);
    std::sort(d.begin(), d.end());
    const double med = n % 2 ? d[static_cast<size_t>(n / 2)]
                             : 0.5 * (d[static_cast<size_t>(n / 2 - 1)] + d[static_cast<size_t>(n / 2)]);
    EXPECT_NEAR(med, chi2_quantile(0.5, pd), 1e-10 * pd) << n;
    EXPECT_GT(f.reweight_factor, 0.0);
    EXPECT_TRUE(f.scatter.isApprox(f.reweight_factor * f.raw_scatter, 1e-14)) << n;
    const double cutoff = chi2_quantile(f.reweight_level, pd);
    for (Index i = 0; i < n; ++i) {
      EXPECT_NEAR(f.robust_d2(i), f.raw_d2(i) / f.reweight_factor, 1e-12 * f.robust_d2(i)) << i;
      EXPECT_EQ(f.outlier[static_cast<size_t>(i)], f.robust_d2(i) > cutoff) << i;
    }
  }
}
