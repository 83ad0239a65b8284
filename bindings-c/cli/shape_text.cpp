// Mardia's shape check in words, for screen, inspect and report: the numbers,
// and a plain sentence when the limits should be read as approximate.
#include <cmath>
#include <cstdio>

#include "commands.hpp"

namespace ellipsa::cli {
namespace {
std::string g(double v, const char* format = "%.4g") {
  char buf[48];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}
std::string p(double v) { return v < 0.001 ? g(v, "%.1e") : g(v, "%.3f"); }
}  // namespace

std::optional<ellipsa_shape_test> model_shape(const ellipsa_model* m, const ellipsa_matrix& x) {
  ellipsa_shape_test s;
  s.struct_size = sizeof s;
  if (ellipsa_model_shape(&s, m, &x) != ELLIPSA_OK) return std::nullopt;
  return s;
}

std::string shape_numbers(const ellipsa_shape_test& s) {
  return "skewness " + g(s.skewness) + " (p = " + p(s.skewness_p_value) + "), kurtosis " + g(s.kurtosis) + " against " +
         g(s.kurtosis_expected) + " (p = " + p(s.kurtosis_p_value) + "), on " + std::to_string(s.rows) + " rows";
}

std::vector<std::string> shape_sentences(const ellipsa_shape_test& s, double level) {
  std::vector<std::string> out;
  if (s.skewness_p_value < level || s.kurtosis_p_value < level)
    out.push_back(
        "The bulk does not look elliptical (Mardia's test): the chi-square limits assume it is, so "
        "read the flag rate and the p-values as approximate.");
  if (s.approximate)
    out.push_back(
        "These are the rows the fit kept (its cutoff removed the far tail), so Mardia's limits "
        "are themselves approximate and err on the side of calling the bulk normal.");
  if (s.rows < 50) out.push_back("With fewer than 50 rows Mardia's large-sample limits are approximate.");
  return out;
}

nlohmann::json shape_json(const ellipsa_shape_test& s) {
  return {{"rows", s.rows},
          {"skewness", s.skewness},
          {"skewness_p_value", s.skewness_p_value},
          {"kurtosis", s.kurtosis},
          {"kurtosis_expected", s.kurtosis_expected},
          {"kurtosis_p_value", s.kurtosis_p_value},
          {"approximate", s.approximate == 1}};
}

}  // namespace ellipsa::cli
