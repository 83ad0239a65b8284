// Test rows for the streaming-state tests: column j is offset + (j + 1) * N(0, 1),
// from a fixed seed, so that offsets far from zero exercise the centred sums.
#pragma once

#include <Eigen/Dense>

#include <random>

inline Eigen::MatrixXd offset_rows(Eigen::Index n, Eigen::Index p, unsigned seed, double offset) {
  std::mt19937_64 g(seed);
  std::normal_distribution<double> z;
  Eigen::MatrixXd x(n, p);
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < p; ++j) x(i, j) = offset + static_cast<double>(j + 1) * z(g);
  return x;
}
