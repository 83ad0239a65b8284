// Readers for the numeric reference CSV files in tests/reference (one header
// line, comma-separated numbers), shared by the core tests.
#pragma once
#include <Eigen/Core>
#include <fstream>
#include <limits>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

namespace ellipsa_test {

// The first `columns` cells of every data row as numbers (later cells, e.g. a
// text label, are ignored); blank lines skipped. Throws if the file is missing.
inline std::vector<std::vector<double>> read_numeric_rows_prefix(const std::string& path, int columns) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path);
  std::string line;
  std::getline(in, line);
  std::vector<std::vector<double>> rows;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::vector<double> row;
    std::stringstream ss(line);
    std::string cell;
    for (int j = 0; j < columns && std::getline(ss, cell, ','); ++j) row.push_back(std::stod(cell));
    rows.push_back(row);
  }
  return rows;
}

// Every data row as numbers; blank lines skipped. Throws if the file is missing.
inline std::vector<std::vector<double>> read_numeric_rows(const std::string& path) {
  return read_numeric_rows_prefix(path, std::numeric_limits<int>::max());
}

// The same as a matrix (rows x columns of the first row).
inline Eigen::MatrixXd read_numeric_csv(const std::string& path) {
  const auto rows = read_numeric_rows(path);
  Eigen::MatrixXd m(static_cast<Eigen::Index>(rows.size()), static_cast<Eigen::Index>(rows.at(0).size()));
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (std::size_t j = 0; j < rows[i].size(); ++j)
      m(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = rows[i].at(j);
  return m;
}

// Rows 50k .. 50k+49 of mixtures/iris.csv as a 50 x 4 matrix: species k = 0
// (setosa), 1 (versicolor), 2 (virginica), in the file's order.
inline Eigen::MatrixXd iris_species(const std::string& reference_dir, int k) {
  const auto rows = read_numeric_rows_prefix(reference_dir + "/mixtures/iris.csv", 4);
  Eigen::MatrixXd x(50, 4);
  for (int i = 0; i < 50; ++i)
    for (int j = 0; j < 4; ++j) x(i, j) = rows.at(static_cast<std::size_t>(50 * k + i)).at(static_cast<std::size_t>(j));
  return x;
}

}  // namespace ellipsa_test
