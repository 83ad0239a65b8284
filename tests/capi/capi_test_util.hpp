// Small helpers for the contract tests: RAII for handles, seeded data, and a
// reader for the plain numeric reference CSV files.
#pragma once
#include <cmath>
#include <cstdint>
#include <fstream>
#include <memory>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "ellipsa.h"

namespace capi_test {

struct ModelFree {
  void operator()(ellipsa_model* m) const { ellipsa_model_destroy(m); }
};
struct OptionsFree {
  void operator()(ellipsa_fit_options* o) const { ellipsa_fit_options_destroy(o); }
};
using Model = std::unique_ptr<ellipsa_model, ModelFree>;
using Options = std::unique_ptr<ellipsa_fit_options, OptionsFree>;

inline Options options(ellipsa_method m) {
  ellipsa_fit_options* o = nullptr;
  if (ellipsa_fit_options_create(&o, m) != ELLIPSA_OK) return nullptr;
  return Options(o);
}

// Row-major n x p with correlated normal columns and a location offset.
inline std::vector<double> correlated_rows(int64_t n, int64_t p, uint64_t seed, double offset = 0.0) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> z(0.0, 1.0);
  std::vector<double> x(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i) {
    double common = z(gen);
    for (int64_t j = 0; j < p; ++j)
      x[static_cast<size_t>(i * p + j)] = offset + (j + 1) * (0.6 * common + z(gen));
  }
  return x;
}

// Reads a CSV with a header; returns the numeric columns listed (by name) as
// row-major values.
inline std::vector<double> read_columns(const std::string& path, const std::vector<std::string>& names,
                                        int64_t* rows) {
  std::ifstream in(path);
  std::string line;
  std::getline(in, line);
  std::vector<std::string> header;
  {
    std::stringstream ss(line);
    std::string cell;
    while (std::getline(ss, cell, ',')) header.push_back(cell);
  }
  std::vector<size_t> pick;
  for (const auto& n : names)
    for (size_t j = 0; j < header.size(); ++j)
      if (header[j] == n) pick.push_back(j);
  std::vector<double> out;
  *rows = 0;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::vector<std::string> cells;
    std::stringstream ss(line);
    std::string cell;
    while (std::getline(ss, cell, ',')) cells.push_back(cell);
    for (size_t j : pick) out.push_back(std::stod(cells[j]));
    ++*rows;
  }
  return out;
}

}  // namespace capi_test
