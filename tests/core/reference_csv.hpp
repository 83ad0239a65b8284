// Readers for the numeric reference CSV files in tests/reference (one header
// line, comma-separated numbers), shared by the core tests.
#pragma once
#include <Eigen/Core>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

namespace ellipsa_test {

// Every data row as numbers; blank lines skipped. Throws if the file is missing.
inline std::vector<std::vector<double>> read_numeric_rows(const std::string& path) {
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
    while (std::getline(ss, cell, ',')) row.push_back(std::stod(cell));
    rows.push_back(row);
  }
  return rows;
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

}  // namespace ellipsa_test
