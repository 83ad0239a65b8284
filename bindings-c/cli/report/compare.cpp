// The comparison in words (terminal) and as an HTML page. The sentences are
// the same in both, so that what a reader is told does not depend on the medium.
#include "compare.hpp"

#include <cmath>
#include <cstdio>
#include <sstream>

#include "html.hpp"
#include "svg.hpp"

namespace ellipsa::cli {
namespace {

using svg::escape;

std::string fmt(const char* format, double v) { return report_number(format, v); }
std::string p_plain(double p) { return report_p_value_plain(p); }

// "T^2 = 12.3, F(7, 292) = 1.7" and the like.
std::string statistic_text(const CompareTest& t, int which) {
  if (which == ELLIPSA_TEST_COVARIANCE_CHANGE)
    return "M = " + fmt("%.4g", t.statistic) + ", chi2(" + fmt("%.0f", t.df1) + ") = " + fmt("%.4g", t.transformed);
  std::string s = "T^2 = " + fmt("%.4g", t.statistic);
  if (which == ELLIPSA_TEST_MEAN_SHIFT)
    s += ", F(" + fmt("%.0f", t.df1) + ", " + fmt("%.0f", t.df2) + ") = " + fmt("%.4g", t.transformed);
  else s += ", " + std::to_string(t.permutations) + " relabellings";
  return s;
}

struct Line {
  const CompareTest* test;
  int which;
};

std::vector<Line> lines(const CompareSummary& s) {
  std::vector<Line> out{{&s.mean, ELLIPSA_TEST_MEAN_SHIFT}};
  if (s.robust_mean.requested) out.push_back({&s.robust_mean, ELLIPSA_TEST_ROBUST_MEAN_SHIFT});
  out.push_back({&s.covariance, ELLIPSA_TEST_COVARIANCE_CHANGE});
  return out;
}

std::vector<std::size_t> moved_variables(const CompareSummary& s) {
  std::vector<std::size_t> out;
  for (std::size_t j = 0; j < s.variables.size(); ++j)
    if (s.variables[j].p_holm < s.significance) out.push_back(j);
  return out;
}

std::string shift_text(double sd) {
  if (std::isnan(sd)) return "NA";
  if (std::isinf(sd)) return sd > 0 ? "+inf" : "-inf";
  return fmt("%+.2f", sd);
}

// The verdict and the cautions, as sentences.
std::vector<std::string> verdict(const CompareSummary& s) {
  std::vector<std::string> v;
  const std::string level = fmt("%.3g", s.significance);
  std::string what;
  auto add = [&](const std::string& x) { what += (what.empty() ? "" : "; ") + x; };
  if (s.mean.significant(s.significance)) add("its mean (p = " + p_plain(s.mean.p_value) + ")");
  if (s.robust_mean.significant(s.significance))
    add("the mean of its bulk, robustly (p = " + p_plain(s.robust_mean.p_value) + ")");
  if (s.covariance.significant(s.significance)) add("its covariance (p = " + p_plain(s.covariance.p_value) + ")");
  std::string vars;
  for (auto j : moved_variables(s))
    vars += (vars.empty() ? "" : ", ") + s.columns[j] + " (" + shift_text(s.variables[j].shift_in_sd) + " sd)";
  if (!vars.empty()) add("variables " + vars);
  if (s.moved()) v.push_back("The new batch differs from the reference at significance " + level + ": " + what + ".");
  else v.push_back("No evidence at significance " + level + " that the new batch differs from the reference.");
  if (s.mean.significant(s.significance) && s.robust_mean.requested && s.robust_mean.available &&
      !s.robust_mean.significant(s.significance))
    v.push_back(
        "The classical mean test is significant but the robust one is not: a few unusual rows may be "
        "moving the mean rather than the whole batch; screen the new batch to find them.");
  if (s.covariance.significant(s.significance))
    v.push_back(
        "A handful of unusual rows in either batch can make Box's M significant on their own: screen or "
        "score the new batch to see whether a few rows explain it before concluding that the spread changed.");
  if (!s.mean.available || !s.covariance.available || (s.robust_mean.requested && !s.robust_mean.available))
    v.push_back("Some tests could not be computed; their reasons are listed with them.");
  v.push_back(
      "Box's M is sensitive to non-normal data (skewed or heavy-tailed readings, cycles): read its p-value "
      "as approximate. All tests assume independent rows; drifting or autocorrelated process data make "
      "p-values too small.");
  v.push_back(
      "A significant difference is evidence to investigate, not a release decision for parts or a "
      "judgement of people: follow your quality procedures and applicable regulations.");
  return v;
}

}  // namespace

bool CompareSummary::moved() const {
  return mean.significant(significance) || robust_mean.significant(significance) ||
         covariance.significant(significance) || !moved_variables(*this).empty();
}

std::string compare_text(const CompareSummary& s) {
  std::ostringstream h;
  h << "compared " << s.batch_file << " (" << s.batch_used << " rows";
  if (s.batch_dropped > 0) h << ", " << s.batch_dropped << " with missing cells left out";
  h << ") with " << s.reference_file << " (" << s.reference_used << " rows";
  if (s.reference_dropped > 0) h << ", " << s.reference_dropped << " with missing cells left out";
  h << ") on " << s.columns.size() << " columns\n";
  for (const auto& l : lines(s)) {
    char buf[256];
    if (!l.test->available) {
      h << "  " << l.test->name << ": not computed: " << l.test->reason << "\n";
      continue;
    }
    std::snprintf(buf, sizeof buf, "  %-42s %-38s p = %-9s%s\n", l.test->name.c_str(),
                  statistic_text(*l.test, l.which).c_str(), p_plain(l.test->p_value).c_str(),
                  l.test->significant(s.significance) ? "  *" : "");
    h << buf;
  }
  h << "per variable (shift of the mean in reference sd; Welch t; p adjusted by Holm):\n";
  char buf[256];
  std::snprintf(buf, sizeof buf, "  %-24s %11s %11s %8s %8s %9s %9s\n", "column", "ref. mean", "new mean", "shift", "t",
                "p", "Holm p");
  h << buf;
  for (std::size_t j = 0; j < s.variables.size(); ++j) {
    const auto& v = s.variables[j];
    std::snprintf(buf, sizeof buf, "  %-24.24s %11.5g %11.5g %8s %8s %9s %9s%s\n", s.columns[j].c_str(),
                  v.reference_mean, v.batch_mean, shift_text(v.shift_in_sd).c_str(),
                  std::isnan(v.t) ? "NA" : fmt("%.2f", v.t).c_str(), p_plain(v.p_value).c_str(),
                  p_plain(v.p_holm).c_str(), v.p_holm < s.significance ? "  *" : "");
    h << buf;
  }
  h << "(* significant at " << fmt("%.3g", s.significance) << ")\n";
  for (const auto& sentence : verdict(s)) h << sentence << "\n";
  return h.str();
}

std::string compare_page(const CompareSummary& s) {
  std::ostringstream h;
  const std::string title = "Has the process moved?";
  h << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
    << "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
    << "<meta name=\"generator\" content=\"ellipsa " << escape(ellipsa_version()) << "\">\n"
    << "<title>" << escape(title) << "</title>\n<style>" << report_style() << "</style>\n</head>\n<body>\n<main>\n";
  h << "<header>\n<h1>" << escape(title) << "</h1>\n<p class=\"sub\">New batch: " << escape(s.batch_file) << " ("
    << s.batch_used << " rows) &middot; reference: " << escape(s.reference_file) << " (" << s.reference_used
    << " rows) &middot; " << s.columns.size() << " variables &middot; significance "
    << escape(fmt("%.3g", s.significance)) << "</p>\n</header>\n";
  h << "<div class=\"glance\">\n";
  for (const auto& l : lines(s)) {
    const CompareTest& t = *l.test;
    h << report_tile(t.name, t.available ? "p = " + p_plain(t.p_value) : "not computed",
                     t.available ? statistic_text(t, l.which) : t.reason, t.significant(s.significance));
  }
  const auto moved = moved_variables(s);
  h << report_tile("Variables that moved", std::to_string(moved.size()),
                   "of " + std::to_string(s.variables.size()) + ", Holm-adjusted Welch p below the level",
                   !moved.empty())
    << "</div>\n";
  const auto sentences = verdict(s);
  h << "<section id=\"verdict\">\n<h2>What the tests say</h2>\n";
  for (std::size_t i = 0; i + 1 < sentences.size(); ++i) h << "<p>" << escape(sentences[i]) << "</p>\n";
  h << "</section>\n<aside class=\"caution\"><strong>Read with care.</strong> " << escape(sentences.back())
    << "</aside>\n";
  h << "<section id=\"variables\">\n<h2>Per variable</h2>\n<table>\n<thead><tr><th>Variable</th><th>Reference mean"
       "</th><th>Reference sd</th><th>New mean</th><th>New sd</th><th>Shift (ref. sd)</th><th>Welch t</th><th>df</th>"
       "<th>p</th><th>Holm p</th></tr></thead>\n<tbody>\n";
  for (std::size_t j = 0; j < s.variables.size(); ++j) {
    const auto& v = s.variables[j];
    const bool hit = v.p_holm < s.significance;
    h << "<tr><td>" << (hit ? "<strong>" : "") << escape(s.columns[j]) << (hit ? "</strong>" : "") << "</td>";
    for (double x : {v.reference_mean, v.reference_sd, v.batch_mean, v.batch_sd})
      h << "<td class=\"num\">" << escape(fmt("%.6g", x)) << "</td>";
    h << "<td class=\"num\">" << escape(shift_text(v.shift_in_sd)) << "</td><td class=\"num\">"
      << escape(std::isnan(v.t) ? "NA" : fmt("%.3f", v.t)) << "</td><td class=\"num\">"
      << escape(std::isnan(v.df) ? "NA" : fmt("%.1f", v.df)) << "</td><td class=\"num\">" << report_p_value(v.p_value)
      << "</td><td class=\"num\">" << report_p_value(v.p_holm) << "</td></tr>\n";
  }
  h << "</tbody>\n</table>\n<p class=\"note\">Shift: difference of the means in reference standard deviations. "
       "Welch's t allows different spreads in the two batches; Holm's step-down adjustment keeps the chance of any "
       "false alarm among the variables at the significance level.</p>\n</section>\n";
  h << "<section id=\"methods\">\n<h2>How the tests work</h2>\n<dl class=\"facts\">\n"
    << "<dt>Mean</dt><dd>Hotelling's two-sample T&sup2; with the pooled covariance; exact F law for normal rows "
       "with equal covariances.</dd>\n"
    << "<dt>Mean, robust</dt><dd>The same statistic on each batch's reweighted deterministic MCD location and "
       "scatter, so that a few gross rows do not decide it; p-value from random relabellings of the pooled rows "
       "(valid when, without a shift, both batches come from the same distribution).</dd>\n"
    << "<dt>Covariance</dt><dd>Box's M with its chi-square approximation; sensitive to non-normal data.</dd>\n"
    << "<dt>Rows</dt><dd>Rows with a missing cell are left out of every test (reference: " << s.reference_dropped
    << ", new batch: " << s.batch_dropped << ").</dd>\n</dl>\n</section>\n";
  h << "<footer>ellipsa " << escape(ellipsa_version()) << "</footer>\n</main>\n</body>\n</html>\n";
  return h.str();
}

}  // namespace ellipsa::cli
