// Gaussian mixtures by EM against published data sets: Old Faithful (Azzalini &
// Bowman 1990) and Fisher's iris (Fisher 1936).
#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <fstream>
#include <numeric>
#include <sstream>
#include <string>
#include <vector>

#include "core/mixture_em.hpp"
#include "core/mixture_select.hpp"

using namespace ellipsa::core;

namespace {

struct Table {
  Eigen::MatrixXd x;
  std::vector<std::string> label;  // last column when it is text
};

// Reads a CSV with a header line; numeric columns go to x, a trailing text column
// to label.
Table read_csv(const std::string& name, int numeric_columns) {
  std::ifstream in(std::string(ELLIPSA_REFERENCE_DIR) + "/mixtures/" + name);
  EXPECT_TRUE(in.good()) << name;
  std::string line;
  std::getline(in, line);
  std::vector<std::vector<double>> rows;
  Table t;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::stringstream ss(line);
    std::string cell;
    std::vector<double> row;
    for (int j = 0; j < numeric_columns; ++j) {
      std::getline(ss, cell, ',');
      row.push_back(std::stod(cell));
    }
    if (std::getline(ss, cell, ',')) t.label.push_back(cell);
    rows.push_back(row);
  }
  t.x.resize(static_cast<Index>(rows.size()), numeric_columns);
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (int j = 0; j < numeric_columns; ++j) t.x(static_cast<Index>(i), j) = rows[i][static_cast<std::size_t>(j)];
  return t;
}

}  // namespace

TEST(MixtureReference, OldFaithfulTwoComponentsFull) {
  const Table t = read_csv("faithful.csv", 2);
  ASSERT_EQ(t.x.rows(), 272);  // Azzalini & Bowman (1990): 272 eruptions
  MixtureOptions o;
  o.components = 2;
  o.structure = CovarianceStructure::Full;
  o.restarts = 5;
  o.seed = 20240601;
  const MixtureResult r = fit_mixture(make_view(t.x), o);
  ASSERT_TRUE(r.converged);
  const Index short_one = r.model.means(0, 0) < r.model.means(1, 0) ? 0 : 1;
  const Index long_one = 1 - short_one;
  // from memory of several sources (approximate): centres near (2.04, 54.5), (4.29, 80.0)
  EXPECT_NEAR(r.model.means(short_one, 0), 2.04, 0.05);
  EXPECT_NEAR(r.model.means(short_one, 1), 54.5, 1.0);
  EXPECT_NEAR(r.model.means(long_one, 0), 4.29, 0.05);
  EXPECT_NEAR(r.model.means(long_one, 1), 80.0, 1.0);
  EXPECT_TRUE(r.collapses.empty());

  // A maximum, not a saddle or a lesser local optimum: single starts from many
  // other seeds never climb higher (common practice, no published source).
  double highest_elsewhere = -1e300;
  for (std::uint64_t seed = 1; seed <= 40; ++seed) {
    MixtureOptions other = o;
    other.restarts = 1;
    other.seed = seed * 7919u;
    highest_elsewhere = std::max(highest_elsewhere, fit_mixture(make_view(t.x), other).log_likelihood);
  }
  EXPECT_LE(highest_elsewhere, r.log_likelihood + 1e-7 * std::abs(r.log_likelihood));
}

TEST(MixtureReference, OldFaithfulBicPrefersTwoOrThreeOverOne) {
  const Table t = read_csv("faithful.csv", 2);
  MixtureSelectionOptions so;
  so.k_min = 1;
  so.k_max = 4;
  so.structures = {CovarianceStructure::Full};
  so.fit.seed = 11;
  const MixtureSelection sel = select_mixture(make_view(t.x), so);
  ASSERT_EQ(sel.table.size(), 4u);
  ASSERT_GE(sel.winner, 0);
  const Index k_win = sel.table[static_cast<std::size_t>(sel.winner)].k;
  // common practice, no published source: the two eruption types give 2 (or 3) components
  EXPECT_TRUE(k_win == 2 || k_win == 3) << "BIC chose K = " << k_win;
  EXPECT_GT(sel.table[0].bic, sel.table[1].bic);
  for (const auto& c : sel.table) {
    ASSERT_TRUE(c.fitted) << c.message;
    EXPECT_EQ(c.n_parameters, mixture_parameter_count(c.k, 2, CovarianceStructure::Full));
    EXPECT_NEAR(c.bic, -2 * c.log_likelihood + c.n_parameters * std::log(272.0), 1e-9 * std::abs(c.bic));
    EXPECT_GE(c.icl, c.bic);  // the entropy term is never negative
  }
  EXPECT_EQ(sel.best.model.components(), k_win);
}

TEST(MixtureReference, IrisThreeComponentsFullMatchesSpecies) {
  const Table t = read_csv("iris.csv", 4);
  ASSERT_EQ(t.x.rows(), 150);
  std::vector<int> species;
  for (const auto& s : t.label) species.push_back(s == "setosa" ? 0 : s == "versicolor" ? 1 : 2);
  MixtureOptions o;
  o.components = 3;
  o.structure = CovarianceStructure::Full;
  o.restarts = 10;
  o.seed = 1936;
  const MixtureResult r = fit_mixture(make_view(t.x), o);
  // Best permutation of component labels onto species.
  std::array<int, 3> perm{0, 1, 2};
  int best_wrong = 151;
  do {
    int wrong = 0;
    for (Index i = 0; i < 150; ++i)
      wrong += perm[static_cast<std::size_t>(r.labels(i))] != species[static_cast<std::size_t>(i)];
    best_wrong = std::min(best_wrong, wrong);
  } while (std::next_permutation(perm.begin(), perm.end()));
  RecordProperty("iris_misassigned", best_wrong);
  std::printf("iris: %d of 150 flowers misassigned (logL %.6f)\n", best_wrong, r.log_likelihood);
  EXPECT_LT(best_wrong, 10);  // common practice, no published source
  // Fisher (1936) per-species means, widely printed: setosa 5.006/3.428/1.462/0.246
  bool setosa_found = false;
  for (Index k = 0; k < 3; ++k)
    if (std::abs(r.model.means(k, 2) - 1.462) < 0.02) {
      setosa_found = true;
      EXPECT_NEAR(r.model.means(k, 0), 5.006, 0.02);
      EXPECT_NEAR(r.model.means(k, 1), 3.428, 0.02);
      EXPECT_NEAR(r.model.means(k, 3), 0.246, 0.02);
    }
  EXPECT_TRUE(setosa_found);
}
