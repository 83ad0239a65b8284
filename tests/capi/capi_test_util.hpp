// Small helpers for the contract tests: RAII for handles, caller buffers for
// every score output, seeded data, and a reader for the plain numeric
// reference CSV files.
#pragma once
#include <cmath>
#include <cstdint>
#include <fstream>
#include <memory>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <gtest/gtest.h>

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

// Model text from ellipsa_model_save, and a model loaded from text.
inline std::string save(const ellipsa_model* m) {
  char* text = nullptr;
  int64_t length = 0;
  if (ellipsa_model_save(&text, &length, m) != ELLIPSA_OK) return {};
  std::string s(text, static_cast<size_t>(length));
  ellipsa_text_free(text);
  return s;
}
inline ellipsa_status load(const std::string& s, Model* out) {
  ellipsa_model* m = nullptr;
  const ellipsa_status st = ellipsa_model_load(&m, s.data(), static_cast<int64_t>(s.size()));
  out->reset(m);
  return st;
}

// A named diagnostic of a model, asserting that the query succeeds.
inline double diagnostic(const ellipsa_model* m, const char* name) {
  double v = NAN;
  EXPECT_EQ(ellipsa_model_diagnostic(&v, m, name), ELLIPSA_OK) << name << ": " << ellipsa_last_error();
  return v;
}

struct AccFree {
  void operator()(ellipsa_accumulator* a) const { ellipsa_accumulator_destroy(a); }
};
using Acc = std::unique_ptr<ellipsa_accumulator, AccFree>;
// An empty accumulator of p columns, asserting that creation succeeds.
inline Acc make_accumulator(int64_t p) {
  ellipsa_accumulator* a = nullptr;
  EXPECT_EQ(ellipsa_accumulator_create(&a, p), ELLIPSA_OK);
  return Acc(a);
}

inline Options options(ellipsa_method m) {
  ellipsa_fit_options* o = nullptr;
  if (ellipsa_fit_options_create(&o, m) != ELLIPSA_OK) return nullptr;
  return Options(o);
}

// Buffers for every output of ellipsa_model_score on n rows of p columns
// (mixture outputs for k components), and `scores` pointing at all of them.
// Not copyable: `scores` holds pointers into the vectors.
struct ScoreBuffers {
  std::vector<double> d2, p_value, contribution, conditional_drop, membership, log_density;
  std::vector<int32_t> flag, observed, component, low_density;
  ellipsa_scores scores = ELLIPSA_SCORES_INIT;
  ScoreBuffers(int64_t n, int64_t p, int64_t k = 1)
      : d2(n),
        p_value(n),
        contribution(n * p),
        conditional_drop(n * p),
        membership(n * k),
        log_density(n),
        flag(n),
        observed(n),
        component(n),
        low_density(n) {
    scores.squared_distance = d2.data();
    scores.p_value = p_value.data();
    scores.flag = flag.data();
    scores.observed = observed.data();
    scores.contribution = contribution.data();
    scores.conditional_drop = conditional_drop.data();
    scores.component = component.data();
    scores.membership = membership.data();
    scores.log_density = log_density.data();
    scores.low_density = low_density.data();
  }
  ScoreBuffers(const ScoreBuffers&) = delete;
  ScoreBuffers& operator=(const ScoreBuffers&) = delete;
};

// Row-major n x p with correlated normal columns and a location offset.
inline std::vector<double> correlated_rows(int64_t n, int64_t p, uint64_t seed, double offset = 0.0) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> z(0.0, 1.0);
  std::vector<double> x(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i) {
    double common = z(gen);
    for (int64_t j = 0; j < p; ++j) x[static_cast<size_t>(i * p + j)] = offset + (j + 1) * (0.6 * common + z(gen));
  }
  return x;
}

// The cells of the first line of a comma-separated file (its header).
inline std::vector<std::string> read_csv_header(std::ifstream& in) {
  std::string line;
  std::getline(in, line);
  std::vector<std::string> header;
  std::stringstream ss(line);
  std::string cell;
  while (std::getline(ss, cell, ',')) header.push_back(cell);
  return header;
}

// Reads a CSV with a header; returns the numeric columns listed (by name) as
// row-major values.
inline std::vector<double> read_columns(const std::string& path, const std::vector<std::string>& names, int64_t* rows) {
  std::ifstream in(path);
  std::string line;
  const std::vector<std::string> header = read_csv_header(in);
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

// Like read_columns, but keeps only the rows whose named cells all hold
// numbers ("NA" or an empty cell marks a missing value).
inline std::vector<double> read_complete_rows(const std::string& path, const std::vector<std::string>& names,
                                              int64_t* rows) {
  std::ifstream in(path);
  std::string line;
  const std::vector<std::string> header = read_csv_header(in);
  std::vector<double> out;
  *rows = 0;
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    std::stringstream ss(line);
    std::string cell;
    while (std::getline(ss, cell, ',')) cells.push_back(cell);
    std::vector<double> row;
    for (const auto& n : names)
      for (size_t j = 0; j < header.size(); ++j)
        if (header[j] == n && j < cells.size() && cells[j] != "NA" && !cells[j].empty())
          row.push_back(std::stod(cells[j]));
    if (row.size() != names.size()) continue;
    out.insert(out.end(), row.begin(), row.end());
    ++*rows;
  }
  return out;
}

}  // namespace capi_test
