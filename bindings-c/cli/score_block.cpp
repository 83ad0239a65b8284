// Scoring one block of rows through the C interface, and naming the columns the
// scored CSV appends.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numeric>

#include "commands.hpp"

namespace ellipsa::cli {

ScoreColumns score_columns(const ellipsa_model* m) {
  ScoreColumns c;
  check(ellipsa_model_describe(&c.kind, nullptr, &c.p, &c.components, m), "reading the model");
  const auto vars = model_columns(m);
  if (c.kind == ELLIPSA_KIND_MIXTURE) {
    c.names.push_back("component");
    for (int32_t k = 0; k < c.components; ++k) c.names.push_back("membership_" + std::to_string(k + 1));
    c.names.push_back("log_density");
    c.names.push_back("low_density");
  }
  for (const char* n : {"sq_distance", "p_value", "flag", "observed"}) c.names.emplace_back(n);
  for (const auto& v : vars) c.names.push_back("contrib_" + v);
  return c;
}

void ScoreBlock::score(const ellipsa_model* m, const ScoreColumns& c, const ellipsa_matrix& x, double level,
                       int32_t reference, int32_t threads) {
  const auto n = static_cast<std::size_t>(x.rows);
  const auto p = static_cast<std::size_t>(c.p);
  d2.resize(n);
  p_value.resize(n);
  flag.resize(n);
  observed.resize(n);
  contribution.resize(n * p);
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = d2.data();
  s.p_value = p_value.data();
  s.flag = flag.data();
  s.observed = observed.data();
  s.contribution = contribution.data();
  if (c.kind == ELLIPSA_KIND_MIXTURE) {
    component.resize(n);
    membership.resize(n * static_cast<std::size_t>(c.components));
    log_density.resize(n);
    low_density.resize(n);
    s.component = component.data();
    s.membership = membership.data();
    s.log_density = log_density.data();
    s.low_density = low_density.data();
  }
  check(ellipsa_model_score_v3(&s, m, &x, level, reference, threads), "scoring");
}

int32_t parse_reference(const std::string& name) {
  int32_t r = 0;
  if (ellipsa_reference_from_name(&r, name.c_str()) != ELLIPSA_OK)
    throw CliError(kExitUsage, "--reference must be model, chi2, new-rows or fitting-rows (got '" + name + "')");
  return r;
}

std::string reference_description(const ellipsa_model* m, int32_t reference) {
  int32_t r = reference;
  if (r == ELLIPSA_REFERENCE_MODEL) {
    double v = 0.0;
    check(ellipsa_model_diagnostic(&v, m, "reference"), "reading the model");
    r = static_cast<int32_t>(v);
  }
  double rows = 0.0;
  const bool gaussian = ellipsa_model_diagnostic(&rows, m, "reference_rows") == ELLIPSA_OK;
  ellipsa_method method = 0;
  check(ellipsa_model_describe(nullptr, &method, nullptr, nullptr, m), "reading the model");
  const bool robust = method == ELLIPSA_METHOD_MCD || method == ELLIPSA_METHOD_DETMCD || method == ELLIPSA_METHOD_MRCD;
  char m_text[64];
  std::snprintf(m_text, sizeof m_text, "m = %.0f reference rows", rows);
  if (r == ELLIPSA_REFERENCE_NEW_ROWS && gaussian)
    return std::string("new-rows limit (Tracy-Young-Mason phase II F, ") + m_text + ")";
  if (r == ELLIPSA_REFERENCE_FITTING_ROWS && gaussian && !robust)
    return std::string("fitting-rows limit (Tracy-Young-Mason phase I Beta, ") + m_text + ")";
  if (r == ELLIPSA_REFERENCE_FITTING_ROWS) return "fitting-rows limit (chi-square quantile, robust fit)";
  return "chi-square quantile";
}

std::string top_contributors(const ScoreBlock& b, const ScoreColumns& c, std::size_t r, int how_many) {
  const auto p = static_cast<std::size_t>(c.p);
  std::vector<std::size_t> order(p);
  std::iota(order.begin(), order.end(), 0);
  const double* row = b.contribution.data() + r * p;
  auto key = [&](std::size_t j) { return std::isnan(row[j]) ? -INFINITY : row[j]; };
  std::stable_sort(order.begin(), order.end(), [&](auto a, auto z) { return key(a) > key(z); });
  std::string out;
  const double total = b.d2[r];
  for (int i = 0; i < how_many && i < static_cast<int>(p); ++i) {
    const std::size_t j = order[static_cast<std::size_t>(i)];
    if (!(row[j] > 0.0)) break;
    char buf[64];
    std::snprintf(buf, sizeof buf, " (%.0f%%)", 100.0 * row[j] / total);
    if (!out.empty()) out += ", ";
    out += c.names[c.names.size() - p + j].substr(8) + buf;  // strip "contrib_"
  }
  return out;
}

}  // namespace ellipsa::cli
