// Helpers shared by the MCD tests: reference CSV loading, seeded normal data,
// brute-force enumeration of h-subsets.
#pragma once
#include <gtest/gtest.h>

#include <Eigen/Core>
#include <Eigen/LU>
#include <cmath>
#include <fstream>
#include <functional>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "core/order_statistics.hpp"

namespace mcd_test {

// The core's one MAD (order_statistics.hpp mad_about) about the column's own
// median, for tests that check a sample's MAD directly.
inline double mad_of(const Eigen::Ref<const Eigen::VectorXd>& x) {
  const Eigen::VectorXd v = x;
  std::vector<double> dev, buf;
  return ellipsa::core::mad_about(v.data(), v.size(), ellipsa::core::median_of(v.data(), v.size(), buf), dev, buf);
}

// Reads tests/reference/robust/<name>: header line, first column `obs`
// (dropped), then `cols` numeric columns (the first `cols` variables).
inline Eigen::MatrixXd load_robust(const std::string& name, int cols) {
  std::ifstream in(std::string(ELLIPSA_REFERENCE_DIR) + "/robust/" + name);
  EXPECT_TRUE(in.good()) << name;
  std::string line;
  std::getline(in, line);
  std::vector<std::vector<double>> rows;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::stringstream ss(line);
    std::string cell;
    std::getline(ss, cell, ',');  // obs
    std::vector<double> r;
    while (static_cast<int>(r.size()) < cols && std::getline(ss, cell, ',')) r.push_back(std::stod(cell));
    rows.push_back(r);
  }
  Eigen::MatrixXd x(static_cast<Eigen::Index>(rows.size()), cols);
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (int j = 0; j < cols; ++j) x(static_cast<Eigen::Index>(i), j) = rows[i][static_cast<std::size_t>(j)];
  return x;
}

// n x p standard normal rows (Box-Muller on mt19937_64, portable).
inline Eigen::MatrixXd normal_data(Eigen::Index n, Eigen::Index p, std::uint64_t seed) {
  std::mt19937_64 g(seed);
  auto u01 = [&g]() { return (static_cast<double>(g() >> 11) + 0.5) * (1.0 / 9007199254740992.0); };
  Eigen::MatrixXd x(n, p);
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < p; ++j)
      x(i, j) = std::sqrt(-2.0 * std::log(u01())) * std::cos(6.283185307179586 * u01());
  return x;
}

// log det of the covariance (divisor h) of every h-subset; returns the minimum.
inline double exhaustive_min_log_det(const Eigen::MatrixXd& x, Eigen::Index h,
                                     std::vector<Eigen::Index>* best_rows = nullptr) {
  const Eigen::Index n = x.rows(), p = x.cols();
  std::vector<Eigen::Index> idx(static_cast<std::size_t>(h));
  for (Eigen::Index k = 0; k < h; ++k) idx[static_cast<std::size_t>(k)] = k;
  double best = std::numeric_limits<double>::infinity();
  Eigen::MatrixXd g(h, p);
  for (;;) {
    for (Eigen::Index k = 0; k < h; ++k) g.row(k) = x.row(idx[static_cast<std::size_t>(k)]);
    const Eigen::RowVectorXd m = g.colwise().mean();
    g.rowwise() -= m;
    const Eigen::MatrixXd c = g.transpose() * g / static_cast<double>(h);
    const double d = c.determinant();
    const double ld = d > 0 ? std::log(d) : -std::numeric_limits<double>::infinity();
    if (ld < best) {
      best = ld;
      if (best_rows) *best_rows = idx;
    }
    // next combination
    Eigen::Index k = h - 1;
    while (k >= 0 && idx[static_cast<std::size_t>(k)] == n - h + k) --k;
    if (k < 0) break;
    ++idx[static_cast<std::size_t>(k)];
    for (Eigen::Index l = k + 1; l < h; ++l)
      idx[static_cast<std::size_t>(l)] = idx[static_cast<std::size_t>(l - 1)] + 1;
  }
  return best;
}

inline std::vector<int> flagged_rows_1based(const std::vector<bool>& flags) {
  std::vector<int> out;
  for (std::size_t i = 0; i < flags.size(); ++i)
    if (flags[i]) out.push_back(static_cast<int>(i) + 1);
  return out;
}

}  // namespace mcd_test
