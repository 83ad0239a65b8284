// The calibration study: the flag rate of every method on clean data, per
// bulk shape, n, p and use (self-screening, fresh rows), through the C
// interface with the library's defaults unless an option says otherwise.
//
//   calibration_flag_rates [--bulk gaussian|sine-cycle|log-normal|t5|all]
//       [--n 30,50,...] [--p 2,5,...] [--methods classical,mcd,...] [--use self|fresh|both]
//       [--level 0.975] [--seed S] [--rows R] [--correction on|off]
//       [--consistency normal|median]
//       [--reference model|chi2|new-rows|fitting-rows]
//   calibration_flag_rates --effective-rows [--methods mcd,detmcd] [--n ...] [--p ...] [--seed S]
//
// --effective-rows: the simulation-calibrated reference of robust fits. For
// each cell, the squared distances of all scored rows are pooled and their
// level-quantile Q found; the effective reference rows m* are the m for which
// the Tracy-Young-Mason phase II limit p(m+1)(m-1)/(m(m-p)) F(level; p, m-p)
// equals Q (the F shape of Hardin & Rocke 2005 with its degrees of freedom
// fitted by simulation rather than by their asymptotic formula). Printed as
// r = m*/n per cell, and as the lines {p, n, n/m*} of
// core/mcd_reference_rows_tables.inc (a smooth curve a + b/(n - p) for n/m*,
// weighted towards small n, was tried and did worse on fresh seeds).
//
// Replicates per cell: enough fits that about R rows are scored (default
// 20000), at most 400 fits and at most 40000/n (large n is slow to fit and
// needs few fits), at least 4. Output: one Markdown table row per
// cell with the rate, its standard error from the spread of the replicate
// rates, and the number of fits the library refused.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "study_cells.hpp"

namespace cal = ellipsa::calibration;

namespace {

std::vector<long> parse_list(const std::string& s) {
  std::vector<long> out;
  std::stringstream in(s);
  std::string item;
  while (std::getline(in, item, ',')) out.push_back(std::atol(item.c_str()));
  return out;
}

std::vector<std::string> split(const std::string& s) {
  std::vector<std::string> out;
  std::stringstream in(s);
  std::string item;
  while (std::getline(in, item, ',')) out.push_back(item);
  return out;
}

int32_t reference_from(const std::string& s) {
  if (s == "model") return ELLIPSA_REFERENCE_MODEL;
  if (s == "chi2") return ELLIPSA_REFERENCE_CHI2;
  if (s == "new-rows") return ELLIPSA_REFERENCE_NEW_ROWS;
  if (s == "fitting-rows") return ELLIPSA_REFERENCE_FITTING_ROWS;
  throw std::runtime_error("unknown reference " + s);
}

// The phase II limit at a real number of reference rows m.
double phase2_limit(double m, long p, double level) {
  double f = 0.0;
  if (ellipsa_f_quantile(&f, level, static_cast<double>(p), m - static_cast<double>(p)) != ELLIPSA_OK)
    throw std::runtime_error(ellipsa_last_error());
  const double pd = static_cast<double>(p);
  return pd * (m + 1.0) * (m - 1.0) / (m * (m - pd)) * f;
}

// m* with phase2_limit(m*) = q (the limit falls from +inf near m = p to the
// chi-square quantile as m grows); kNoLimit when q is at or below that quantile.
constexpr double kMaxRatio = 1000.0;
double effective_rows(double q, long p, long n, double level) {
  double lo = static_cast<double>(p) + 1e-6, hi = kMaxRatio * static_cast<double>(n);
  if (phase2_limit(hi, p, level) >= q) return hi;
  for (int it = 0; it < 200; ++it) {
    const double mid = std::sqrt(lo * hi);
    (phase2_limit(mid, p, level) > q ? lo : hi) = mid;
  }
  return std::sqrt(lo * hi);
}

int effective_rows_table(const std::vector<std::string>& methods, const std::vector<long>& ns,
                         const std::vector<long>& ps, const std::vector<cal::Use>& uses, cal::CellSettings base,
                         long target_rows) {
  std::printf("Effective reference rows of robust fits (simulation-calibrated phase II F), level %.4g, seed %llu\n\n",
              base.level, static_cast<unsigned long long>(base.seed));
  std::printf("| method | use | p | n | fits | rows | quantile | m* | m*/n |\n|---|---|---|---|---|---|---|---|---|\n");
  std::vector<std::string> lines;
  for (const auto& name : methods)
    for (cal::Use use : uses)
      for (long p : ps)
        for (long n : ns) {
          cal::CellSettings s = base;
          if (ellipsa_method_from_name(&s.method, name.c_str()) != ELLIPSA_OK) return 2;
          if (!cal::method_applies(s.method, n, p) || n < 2 * p + 2) continue;
          const long per_fit = use == cal::Use::Self ? n : s.fresh_rows;
          const long reps = std::max(20L, std::min(400L, target_rows / per_fit));
          std::vector<double> d2 = cal::pooled_distances(cal::Bulk::Gaussian, n, p, use, reps, s);
          if (d2.size() < 1000) continue;
          const auto k = static_cast<std::ptrdiff_t>(std::floor(base.level * static_cast<double>(d2.size())));
          std::nth_element(d2.begin(), d2.begin() + k, d2.end());
          const double q = d2[static_cast<size_t>(k)];
          const double m = effective_rows(q, p, n, base.level);
          std::printf("| %s | %s | %ld | %ld | %ld | %zu | %.4f | %.2f | %.4f |\n", name.c_str(), cal::use_name(use), p,
                      n, reps, d2.size(), q, m, m / static_cast<double>(n));
          std::fflush(stdout);
          char buf[128];
          std::snprintf(buf, sizeof buf, "    {%ld, %ld, %.6f},  // m*/n = %.4f, %s %s", p, n,
                        static_cast<double>(n) / m, m / static_cast<double>(n), name.c_str(), cal::use_name(use));
          lines.push_back(buf);
        }
  std::printf("\nTable lines {p, n, n/m*}:\n\n```\n");
  for (const auto& l : lines) std::printf("%s\n", l.c_str());
  std::printf("```\n");
  return 0;
}

[[noreturn]] void usage(const char* argv0) {
  std::fprintf(stderr,
               "usage: %s [--bulk NAME|all] [--n LIST] [--p LIST] [--methods LIST] [--use self|fresh|both]\n"
               "          [--level L] [--seed S] [--rows R] [--correction on|off] [--reference NAME]\n"
               "          [--consistency normal|median]\n",
               argv0);
  std::exit(2);
}

}  // namespace

int main(int argc, char** argv) try {
  std::vector<long> ns = {30, 50, 100, 200, 1000, 10000}, ps = {2, 5, 10, 20};
  std::vector<std::string> methods = {"classical", "ledoit-wolf", "oas", "mcd", "detmcd", "mrcd"};
  std::vector<cal::Bulk> bulks = {cal::Bulk::Gaussian};
  std::vector<cal::Use> uses = {cal::Use::Self, cal::Use::Fresh};
  cal::CellSettings base;
  base.seed = 20261202;
  long target_rows = 20000;
  std::string reference_text = "default", correction_text = "default", consistency_text = "default";
  bool effective = false;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--effective-rows") {
      effective = true;
      continue;
    }
    if (i + 1 >= argc) usage(argv[0]);
    const std::string v = argv[++i];
    if (a == "--n") ns = parse_list(v);
    else if (a == "--p") ps = parse_list(v);
    else if (a == "--methods") methods = split(v);
    else if (a == "--level") base.level = std::atof(v.c_str());
    else if (a == "--seed") base.seed = std::strtoull(v.c_str(), nullptr, 10);
    else if (a == "--rows") target_rows = std::atol(v.c_str());
    else if (a == "--correction") {
      base.correction = v == "on" ? 1 : 0;
      correction_text = v;
    } else if (a == "--consistency") {
      if (v != "normal" && v != "median") usage(argv[0]);
      base.consistency = v == "median" ? ELLIPSA_CONSISTENCY_MEDIAN : ELLIPSA_CONSISTENCY_NORMAL;
      consistency_text = v;
    } else if (a == "--reference") {
      base.reference = reference_from(v);
      reference_text = v;
    } else if (a == "--use") {
      if (v == "self") uses = {cal::Use::Self};
      else if (v == "fresh") uses = {cal::Use::Fresh};
      else uses = {cal::Use::Self, cal::Use::Fresh};
    } else if (a == "--bulk") {
      if (v == "all") {
        bulks = {cal::Bulk::Gaussian, cal::Bulk::SineCycle, cal::Bulk::LogNormal, cal::Bulk::StudentT5};
      } else {
        cal::Bulk b;
        if (!cal::bulk_from_name(v, b)) usage(argv[0]);
        bulks = {b};
      }
    } else {
      usage(argv[0]);
    }
  }
  if (effective) {
    if (methods.size() == 6) methods = {"mcd", "detmcd"};
    return effective_rows_table(methods, ns, ps, uses, base, target_rows);
  }
  std::printf(
      "Flag rates on clean data, level %.4g (nominal %.2f%%), seed %llu, small-sample correction %s, "
      "consistency %s, reference %s\n\n",
      base.level, 100.0 * (1.0 - base.level), static_cast<unsigned long long>(base.seed), correction_text.c_str(),
      consistency_text.c_str(), reference_text.c_str());
  std::printf("| bulk | method | n | p | use | fits | refused | rows scored | rate %% | s.e. %% |\n");
  std::printf("|---|---|---|---|---|---|---|---|---|---|\n");
  for (cal::Bulk bulk : bulks)
    for (const auto& name : methods) {
      cal::CellSettings s = base;
      if (ellipsa_method_from_name(&s.method, name.c_str()) != ELLIPSA_OK) usage(argv[0]);
      for (long n : ns)
        for (long p : ps) {
          if (!cal::method_applies(s.method, n, p)) continue;
          for (cal::Use use : uses) {
            const long per_fit = use == cal::Use::Self ? n : s.fresh_rows;
            const long reps = std::max(4L, std::min({400L, target_rows / per_fit, 40000L / n}));
            const cal::CellResult r = cal::run_cell(bulk, n, p, use, reps, s);
            std::printf("| %s | %s | %ld | %ld | %s | %lld | %lld | %lld | %.2f | %.2f |\n", cal::bulk_name(bulk),
                        name.c_str(), n, p, cal::use_name(use), static_cast<long long>(r.replicates),
                        static_cast<long long>(r.failed), static_cast<long long>(r.rows), 100.0 * r.rate(),
                        100.0 * r.standard_error);
            std::fflush(stdout);
          }
        }
    }
  return 0;
} catch (const std::exception& e) {
  std::fprintf(stderr, "calibration_flag_rates: %s\n", e.what());
  return 1;
}
