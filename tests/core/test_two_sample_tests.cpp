// Two-sample tests from summaries (core/two_sample_tests): Hotelling's
// two-sample T^2, Box's M, Welch's t and Holm's adjustment, against published
// worked examples and independent computations in base R.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "core/moments.hpp"
#include "core/two_sample_tests.hpp"
#include "reference_csv.hpp"

using namespace ellipsa::core;

namespace {

GroupSummary summary_of(const Eigen::MatrixXd& x) {
  const MeanCovariance mc = mean_covariance(make_view(x), Normalisation::ByCountMinusOne);
  return {static_cast<double>(x.rows()), mc.mean, mc.covariance};
}

Eigen::MatrixXd iris_species(int k) { return ellipsa_test::iris_species(ELLIPSA_REFERENCE_DIR, k); }

}  // namespace

TEST(TwoSampleT2, SoapExampleFromSummaries) {
  // Johnson & Wichern, Applied Multivariate Statistical Analysis, Example 6.3
  // (from memory): 50 bars of soap made each of two ways, lather and mildness;
  // means (8.3, 4.1) and (10.2, 3.9), S_pooled = [2 1; 1 5]; printed T^2 = 52.47.
  GroupSummary a{50.0, Eigen::Vector2d(8.3, 4.1), (Eigen::Matrix2d() << 2, 1, 1, 6).finished()};
  GroupSummary b{50.0, Eigen::Vector2d(10.2, 3.9), (Eigen::Matrix2d() << 2, 1, 1, 4).finished()};
  const TwoSampleT2 t = two_sample_t2(a, b);
  EXPECT_NEAR(t.t2, 52.47, 0.005);
  // Exact: 25 * 18.89 / 9 (computed by hand and with base R 4.x).
  EXPECT_NEAR(t.t2, 52.4722222222222, 1e-10);
  EXPECT_EQ(t.df1, 2.0);
  EXPECT_EQ(t.df2, 97.0);
  EXPECT_NEAR(t.f, 25.9683956916099, 1e-10);                 // base R: 97/(2*98) * T^2
  EXPECT_NEAR(t.p_value / 9.28608024604676e-10, 1.0, 1e-8);  // base R: pf(F, 2, 97, lower.tail = FALSE)
}

TEST(TwoSampleT2, IrisVersicolorAgainstVirginica) {
  // Independent computation in base R 4.x (solve() on the pooled covariance)
  // on Fisher's iris data (Anderson's measurements).
  const TwoSampleT2 t = two_sample_t2(summary_of(iris_species(1)), summary_of(iris_species(2)));
  EXPECT_NEAR(t.t2, 355.472145199055, 1e-9);
  EXPECT_NEAR(t.f, 86.1475862089547, 1e-10);
  EXPECT_EQ(t.df2, 95.0);
  EXPECT_NEAR(t.p_value / 9.53987626478074e-31, 1.0, 1e-7);
}

TEST(TwoSampleT2, AffineInvariantAndSymmetricForRandomSizes) {
  std::mt19937_64 gen(14);
  std::normal_distribution<double> z;  // values only; the test compares two computations on them
  for (int rep = 0; rep < 20; ++rep) {
    const Eigen::Index p = 1 + static_cast<Eigen::Index>(gen() % 6);
    const Eigen::Index n1 = p + 1 + static_cast<Eigen::Index>(gen() % 40),
                       n2 = 2 + static_cast<Eigen::Index>(gen() % 40);
    Eigen::MatrixXd x(n1, p), y(n2, p), a(p, p);
    for (auto* m : {&x, &y, &a})
      for (Eigen::Index i = 0; i < m->size(); ++i) m->data()[i] = z(gen);
    a.diagonal().array() += 3.0;  // well away from singular
    const Eigen::RowVectorXd shift = Eigen::RowVectorXd::Constant(p, 1e3);
    const TwoSampleT2 t = two_sample_t2(summary_of(x), summary_of(y));
    const TwoSampleT2 u = two_sample_t2(summary_of((x * a.transpose()).rowwise() + shift),
                                        summary_of((y * a.transpose()).rowwise() + shift));
    const TwoSampleT2 v = two_sample_t2(summary_of(y), summary_of(x));
    EXPECT_NEAR(u.t2, t.t2, 1e-8 * (1.0 + t.t2));  // Hotelling T^2 is affine invariant (common knowledge)
    EXPECT_NEAR(v.t2, t.t2, 1e-10 * (1.0 + t.t2));
    EXPECT_EQ(t.df2, static_cast<double>(n1 + n2 - p - 1));
  }
}

TEST(TwoSampleT2, RefusesWhatItCannotTest) {
  GroupSummary a{3.0, Eigen::Vector3d(1, 2, 3), Eigen::Matrix3d::Identity()};
  GroupSummary b = a;
  b.n = 1.0;
  EXPECT_THROW(two_sample_t2(a, b), Error);  // n1 + n2 - p - 1 = 0
  GroupSummary c{10.0, Eigen::Vector3d(1, 2, 3), Eigen::Matrix3d::Identity()};
  c.covariance(1, 1) = 0.0;
  c.covariance(1, 0) = c.covariance(0, 1) = 0.0;
  try {
    two_sample_t2(c, c);
    FAIL() << "a column without spread must make the pooled covariance singular";
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Singular);
    EXPECT_NE(std::string(e.what()).find("column 2"), std::string::npos) << e.what();
  }
  GroupSummary d{10.0, Eigen::Vector2d(1, 2), Eigen::Matrix2d::Identity()};
  EXPECT_THROW(two_sample_t2(c, d), Error);  // different dimensions
}

TEST(BoxM, NursingHomeExampleFromDeterminants) {
  // Johnson & Wichern, Applied Multivariate Statistical Analysis, Example 6.12
  // (from memory): nursing homes by ownership, p = 4, n = 271, 138, 107,
  // |S1| = 2.783e-8, |S2| = 89.539e-8, |S3| = 14.579e-8, |S_pooled| = 17.398e-8;
  // printed u = .0133, M = 289.3, (1 - u) M = 285.5 on 20 df. The printed
  // determinants are rounded, so M is matched to 0.5; the exact arithmetic on
  // the printed determinants is checked against base R 4.x.
  const std::vector<double> n{271, 138, 107};
  const std::vector<double> ld{std::log(2.783e-8), std::log(89.539e-8), std::log(14.579e-8)};
  const BoxM m = box_m_from_log_determinants(n, ld, std::log(17.398e-8), 4);
  EXPECT_NEAR(m.correction, 0.0133, 0.0001);  // exact 0.013249 from the counts; the book prints .0133
  EXPECT_NEAR(m.m, 289.3, 0.5);
  EXPECT_NEAR(m.chi2, 285.5, 0.5);
  EXPECT_EQ(m.df, 20.0);
  EXPECT_NEAR(m.m, 289.151203078592, 1e-8);  // base R on the printed determinants
  EXPECT_NEAR(m.correction, 0.0132494597831401, 1e-13);
  EXPECT_NEAR(m.chi2, 285.320105842155, 1e-8);
}

TEST(BoxM, IrisThreeSpecies) {
  // Box's M for the three iris species: chi-square approximation 140.94 on 20
  // df (from memory: widely printed for these data); base R 4.x computation
  // (log(det()) of cov()) gives M = 146.663249212512, c1 = 0.0390022675736961,
  // (1 - c1) M = 140.943049923498, P = 3.35203417831723e-20.
  const BoxM m = box_m({summary_of(iris_species(0)), summary_of(iris_species(1)), summary_of(iris_species(2))});
  EXPECT_NEAR(m.chi2, 140.94, 0.005);
  EXPECT_NEAR(m.m, 146.663249212512, 1e-9);
  EXPECT_NEAR(m.correction, 0.0390022675736961, 1e-14);
  EXPECT_NEAR(m.chi2, 140.943049923498, 1e-9);
  EXPECT_EQ(m.df, 20.0);
  EXPECT_NEAR(m.p_value / 3.35203417831723e-20, 1.0, 1e-7);
  // Two species (versicolor, virginica), base R: M 36.6445157039014, chi2 35.0366440964854 on 10 df.
  const BoxM two = box_m({summary_of(iris_species(1)), summary_of(iris_species(2))});
  EXPECT_NEAR(two.m, 36.6445157039014, 1e-9);
  EXPECT_NEAR(two.chi2, 35.0366440964854, 1e-9);
  EXPECT_NEAR(two.p_value / 1.23080016729543e-04, 1.0, 1e-8);
}

TEST(BoxM, IdenticalCovariancesGiveZeroAndBadGroupsAreRefused) {
  GroupSummary a{20.0, Eigen::Vector2d(0, 0), (Eigen::Matrix2d() << 2, 0.5, 0.5, 1).finished()};
  const BoxM m = box_m({a, a});
  EXPECT_NEAR(m.m, 0.0, 1e-12);  // equal covariances: ln|S_pooled| = ln|S_i| (definition)
  EXPECT_NEAR(m.p_value, 1.0, 1e-12);
  GroupSummary small{2.0, Eigen::Vector2d(0, 0), Eigen::Matrix2d::Identity()};
  EXPECT_THROW(box_m({a, small}), Error);  // n - 1 < p
  GroupSummary flat = a;
  flat.covariance << 2, 0, 0, 0;
  try {
    box_m({a, flat});
    FAIL();
  } catch (const Error& e) {
    EXPECT_EQ(e.kind(), ErrorKind::Singular);
    EXPECT_NE(std::string(e.what()).find("group 2"), std::string::npos) << e.what();
  }
  EXPECT_THROW(box_m({a}), Error);
}

TEST(WelchT, NistHandbookCarExampleFromSummaries) {
  // NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.5.3
  // (two-sample t-test, AUTO83B data, from memory): US cars n = 249, mean
  // 20.14458, sd 6.41470; Japanese cars n = 79, mean 30.48101, sd 6.10771;
  // unequal variances: T = -12.94627 (US minus Japan), 136.8750 df.
  const WelchT w = welch_t(249, 20.14458, 6.41470 * 6.41470, 79, 30.48101, 6.10771 * 6.10771);
  EXPECT_NEAR(w.t, 12.94627, 0.000005);  // batch 2 minus batch 1, hence the sign
  EXPECT_NEAR(w.df, 136.8750, 0.00005);
  EXPECT_NEAR(w.p_value / 1.57090461546484e-25, 1.0, 1e-7);  // base R: 2 * pt(-|t|, df)
}

TEST(WelchT, IrisVariablesAndHolm) {
  // base R 4.x: t.test(virginica[, j], versicolor[, j]) (Welch by default),
  // then p.adjust(p, "holm").
  const GroupSummary a = summary_of(iris_species(1)), b = summary_of(iris_species(2));
  const double t[] = {5.62916525971982, 3.20576075022182616, 12.6037794413850, 14.6253670474101};
  const double df[] = {94.0254863377648, 97.92682669979343757, 95.5704350064541, 89.0433751125165};
  const double pv[] = {1.86614438737700e-07, 0.00181948348210493, 4.90028752739827e-22, 2.11153440098872e-25};
  const double holm[] = {3.73228877475401e-07, 1.81948348210493e-03, 1.47008625821948e-21, 8.44613760395490e-25};
  std::vector<double> p;
  for (int j = 0; j < 4; ++j) {
    const WelchT w = welch_t(a.n, a.mean(j), a.covariance(j, j), b.n, b.mean(j), b.covariance(j, j));
    EXPECT_NEAR(w.t, t[j], 1e-11 * t[j]);
    EXPECT_NEAR(w.df, df[j], 1e-10 * df[j]);
    EXPECT_NEAR(w.p_value / pv[j], 1.0, 1e-7);
    p.push_back(w.p_value);
  }
  const auto adj = holm_adjust(p);
  for (int j = 0; j < 4; ++j) EXPECT_NEAR(adj[static_cast<std::size_t>(j)] / holm[j], 1.0, 1e-7);
}

TEST(WelchT, UndefinedWhenNeitherGroupVaries) {
  const WelchT w = welch_t(5, 1.0, 0.0, 7, 1.0, 0.0);
  EXPECT_TRUE(std::isnan(w.t) && std::isnan(w.df) && std::isnan(w.p_value));
  const WelchT one = welch_t(5, 1.0, 0.0, 7, 2.0, 1.0);  // one group constant: still defined
  EXPECT_NEAR(one.df, 6.0, 1e-12);                       // all variance from group 2: df = n2 - 1 (Welch-Satterthwaite)
  EXPECT_THROW(welch_t(1, 1.0, 1.0, 7, 2.0, 1.0), Error);
}

TEST(Holm, StepDownWithTiesAndMissing) {
  // base R 4.x: p.adjust(c(0.01, 0.04, 0.03, 0.005, NA, 0.2), "holm")
  //   -> 0.040 0.090 0.090 0.025 NA 0.200
  const double nan = std::nan("");
  const auto adj = holm_adjust({0.01, 0.04, 0.03, 0.005, nan, 0.2});
  const double expected[] = {0.040, 0.090, 0.090, 0.025, nan, 0.200};
  for (std::size_t i = 0; i < 6; ++i) {
    if (std::isnan(expected[i])) EXPECT_TRUE(std::isnan(adj[i]));
    else EXPECT_NEAR(adj[i], expected[i], 1e-15);
  }
  // Holm (1979): the adjusted values never exceed 1 and never decrease with p.
  const auto capped = holm_adjust({0.6, 0.5, 0.9});
  EXPECT_EQ(capped[0], 1.0);
  EXPECT_EQ(capped[1], 1.0);
  EXPECT_EQ(capped[2], 1.0);
  EXPECT_TRUE(holm_adjust({}).empty());
  EXPECT_THROW(holm_adjust({0.5, 1.5}), Error);
}
