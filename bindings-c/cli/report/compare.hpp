// What `ellipsa compare` found, already read from the C interface, and the two
// ways it is shown: the plain-text summary and the HTML page. Nothing here
// calls the library's statistics; the verdict only reads the p-values.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

#include "ellipsa.h"

namespace ellipsa::cli {

struct CompareTest {
  std::string name;
  bool requested = false;  // false: the robust test was skipped (--no-robust)
  bool available = false;  // false: reason says why it could not be computed
  std::string reason;
  double statistic = 0.0, transformed = 0.0, df1 = 0.0, df2 = 0.0, p_value = 0.0;
  std::int64_t permutations = 0;
  // Significant at the given level (false when not available or p is NaN).
  bool significant(double level) const { return available && p_value < level; }
};

struct CompareSummary {
  std::string reference_file, batch_file;
  double significance = 0.05;
  std::vector<std::string> columns;
  std::int64_t reference_used = 0, reference_dropped = 0, batch_used = 0, batch_dropped = 0;
  CompareTest mean, robust_mean, covariance;
  std::vector<ellipsa_variable_shift> variables;
  // Any test significant: either mean test, the covariance test, or a
  // variable whose Holm-adjusted p-value is below the level.
  bool moved() const;
};

std::string compare_text(const CompareSummary& s);
// One self-contained HTML page (the report's styles); deterministic.
std::string compare_page(const CompareSummary& s);

}  // namespace ellipsa::cli
