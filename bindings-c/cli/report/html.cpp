// The page around the figures: styles, the at-a-glance summary, the caution,
// the list of flagged rows and the model facts. One file, no external resource.
#include "html.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "plots.hpp"
#include "svg.hpp"

namespace ellipsa::cli {

namespace {

using svg::escape;

// Points drawn per plot besides the flagged rows: enough to see the shape of
// the bulk, few enough that a file of a million rows still gives a light page.
constexpr std::size_t kMaxCalmPoints = 4000;
constexpr std::size_t kTableRowsOpen = 25;  // more go behind a "show all" fold
constexpr std::size_t kTableRowsMax = 2000;
constexpr std::size_t kBars = 15;

constexpr const char* kStyle = R"css(
:root{--ink:#1f2a33;--muted:#5d6a74;--paper:#f6f4ef;--card:#fff;--line:#dcd7cc;--flag:#c8553d;--calm:#6b8fa3;--limit:#d99a2b}
*{box-sizing:border-box}
body{margin:0;background:var(--paper);color:var(--ink);font:15px/1.45 system-ui,"DejaVu Sans","Liberation Sans",Arial,sans-serif}
main{max-width:1120px;margin:0 auto;padding:22px 26px 40px}
h1{font-size:26px;margin:0 0 4px}
h2{font-size:19px;margin:0 0 10px;border-bottom:2px solid var(--line);padding-bottom:4px}
h3{font-size:16px;margin:0 0 6px}
.sub{color:var(--muted);margin:0 0 18px;font-size:13.5px}
.glance{display:grid;grid-template-columns:repeat(auto-fit,minmax(200px,1fr));gap:12px;margin-bottom:14px}
.tile{background:var(--card);border:1px solid var(--line);border-radius:8px;padding:10px 14px}
.tile .k{display:block;font-size:12.5px;text-transform:uppercase;letter-spacing:.04em;color:var(--muted)}
.tile .v{display:block;font-size:28px;font-weight:650;margin:2px 0}
.tile .v.alert{color:var(--flag)}
.tile .n{display:block;font-size:13px;color:var(--muted)}
.caution{background:#fff6e0;border-left:5px solid var(--limit);padding:10px 14px;margin:0 0 22px;border-radius:0 6px 6px 0;font-size:14px}
section{background:var(--card);border:1px solid var(--line);border-radius:8px;padding:16px 18px;margin:0 0 18px}
.pair{display:grid;grid-template-columns:repeat(auto-fit,minmax(460px,1fr));gap:16px}
figure{margin:0}
figcaption,.note{color:var(--muted);font-size:13.5px;margin-top:6px}
.note.empty{font-style:italic}
table{border-collapse:collapse;width:100%;font-size:13.5px}
th,td{text-align:left;padding:5px 8px;border-bottom:1px solid #ebe7df;vertical-align:top}
th{font-size:12px;text-transform:uppercase;letter-spacing:.03em;color:var(--muted);border-bottom:2px solid var(--line)}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
td.id{white-space:nowrap}
tr.partial td{background:#f7f9fb}
.swatch{display:inline-block;width:10px;height:10px;border-radius:50%;margin-right:5px}
details summary{cursor:pointer;color:#2f6f9f;margin:8px 0}
dl.facts{display:grid;grid-template-columns:max-content 1fr;gap:3px 18px;margin:0;font-size:14px}
dl.facts dt{color:var(--muted)}
dl.facts dd{margin:0}
footer{color:var(--muted);font-size:12.5px;margin-top:10px}
svg{max-width:100%;height:auto;font-family:system-ui,"DejaVu Sans","Liberation Sans",Arial,sans-serif}
svg .grid{stroke:#ece8e0;stroke-width:1}
svg .tick{stroke:#6c757d;stroke-width:1}
svg .frame{fill:none;stroke:#9aa1a6;stroke-width:1}
svg .ticklabel{font-size:11px;fill:#4a5560}
svg .axistitle{font-size:12.5px;fill:var(--ink)}
svg .legend{font-size:12px;fill:var(--ink)}
svg .pt{fill:var(--calm);fill-opacity:.6;stroke:none}
svg .pt-part{fill:none !important;stroke:var(--calm);stroke-width:1.2}
svg .pt-flag{fill:var(--flag);stroke:#5a1e12;stroke-width:.8}
svg .cut{stroke:var(--limit);stroke-width:1.6;stroke-dasharray:7 4}
svg .ident{stroke:#9aa5ad;stroke-width:1.2;stroke-dasharray:2 3}
svg .ell{fill:none;stroke-width:1.7}
svg .diagcell{fill:#faf9f6;stroke:#9aa1a6}
svg .hist{fill:#b9cbd6}
svg .diagname{font-size:13px;font-weight:650;fill:var(--ink)}
svg .seg{stroke:#fff;stroke-width:.6}
svg .barlabel{font-size:12.5px;fill:var(--ink)}
svg .barvalue{font-size:12px;fill:var(--muted)}
svg .crit{fill:none;stroke-width:2}
svg .crit-icl{stroke-dasharray:6 4}
svg .critpt-icl{fill:#fff;stroke-width:1.6}
svg .chosen{fill:none;stroke:var(--flag);stroke-width:2}
@media print{body{background:#fff}section{break-inside:avoid;border-color:#bbb}}
)css";

std::string fmt(const char* format, double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

std::string p_value_plain(double p) {
  if (std::isnan(p)) return "NA";
  if (p == 0.0) return "< 1e-300";
  return fmt(p < 0.001 ? "%.1e" : "%.3f", p);
}

std::string p_value_text(double p) { return escape(p_value_plain(p)); }

std::string tile(const std::string& key, const std::string& value, const std::string& note, bool alert = false) {
  return "<div class=\"tile\"><span class=\"k\">" + escape(key) + "</span><span class=\"v" + (alert ? " alert" : "") +
         "\">" + escape(value) + "</span><span class=\"n\">" + escape(note) + "</span></div>\n";
}

// A figure, or a sentence saying why it is missing.
std::string figure(const std::string& svg_text, const std::string& caption, const std::string& missing) {
  if (svg_text.empty()) return "<p class=\"note empty\">" + escape(missing) + "</p>\n";
  return "<figure>\n" + svg_text + "<figcaption>" + escape(caption) + "</figcaption>\n</figure>\n";
}

std::string flagged_table(const ReportInput& in, const std::vector<std::size_t>& flagged) {
  std::ostringstream h;
  auto header = [&] {
    h << "<table>\n<thead><tr><th>#</th><th>line</th><th>id</th><th>squared distance</th><th>p-value</th>";
    if (in.mixture) h << "<th>component</th>";
    h << "<th>largest contributions</th><th>note</th></tr></thead>\n<tbody>\n";
  };
  header();
  const std::size_t n = std::min(flagged.size(), kTableRowsMax);
  for (std::size_t i = 0; i < n; ++i) {
    if (i == kTableRowsOpen) {
      h << "</tbody></table>\n<details><summary>show the other " << n - kTableRowsOpen << " flagged rows</summary>\n";
      header();
    }
    const ReportRow& r = in.rows[flagged[i]];
    const bool partial = r.observed < in.p;
    h << "<tr data-line=\"" << r.line << "\"" << (partial ? " class=\"partial\"" : "") << "><td class=\"num\">" << i + 1
      << "</td><td class=\"num\">" << r.line << "</td><td class=\"id\">" << escape(r.id) << "</td><td class=\"num\">"
      << escape(svg::label_number(std::round(r.d2 * 100) / 100)) << "</td><td class=\"num\">" << p_value_text(r.p_value)
      << "</td>";
    if (in.mixture)
      h << "<td><span class=\"swatch\" style=\"background:" << component_colour(static_cast<std::size_t>(r.component))
        << "\"></span>" << r.component + 1 << "</td>";
    std::string note;
    if (in.mixture)
      note = r.low_density ? (r.over_limit ? "over the limit; low density" : "low density") : "over the limit";
    if (partial)
      note += std::string(note.empty() ? "" : "; ") + "scored on " + std::to_string(r.observed) + " of " +
              std::to_string(in.p) + " values";
    h << "<td>" << escape(r.top) << "</td><td>" << escape(note) << "</td></tr>\n";
  }
  h << "</tbody></table>\n";
  if (n > kTableRowsOpen) h << "</details>\n";
  if (flagged.size() > n)
    h << "<p class=\"note\">The list stops at " << n << " rows; " << flagged.size() - n
      << " more flagged rows are not listed. Use <code>ellipsa score</code> for the complete scores.</p>\n";
  return h.str();
}

// Which variables the scatter-plot matrix shows, as its caption says it.
std::string matrix_subject(const ReportInput& in, bool any_flagged) {
  if (!in.matrix_columns.empty()) return "The variables named with --columns";
  if (in.p <= 4) return "The model's variables";
  return any_flagged ? "The four variables that carry most of the flagged rows' distances"
                     : "The four variables that carry most of the rows' distances";
}

}  // namespace

// Shared with the comparison page (report/compare.cpp), so both pages look alike.
const char* report_style() { return kStyle; }
std::string report_p_value(double p) { return p_value_text(p); }
std::string report_p_value_plain(double p) { return p_value_plain(p); }
std::string report_number(const char* format, double v) { return fmt(format, v); }
std::string report_tile(const std::string& key, const std::string& value, const std::string& note, bool alert) {
  return tile(key, value, note, alert);
}

std::string render_report(const ReportInput& in) {
  std::vector<std::size_t> flagged;
  std::size_t scorable = 0, partial = 0;
  for (std::size_t r = 0; r < in.rows.size(); ++r) {
    scorable += in.rows[r].scorable;
    partial += in.rows[r].scorable && in.rows[r].observed < in.p;
    if (in.rows[r].flagged) flagged.push_back(r);
  }
  std::stable_sort(flagged.begin(), flagged.end(),
                   [&](std::size_t a, std::size_t z) { return in.rows[a].d2 > in.rows[z].d2; });
  const auto drawn = plotted_rows(in, kMaxCalmPoints);
  const std::size_t n = in.rows.size();
  const std::string level_pct = fmt("%.4g", 100.0 * in.level) + "%";

  std::ostringstream h;
  h << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
    << "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
    << "<meta name=\"generator\" content=\"ellipsa " << escape(in.version) << "\">\n"
    << "<title>" << escape(in.title) << "</title>\n<style>" << kStyle << "</style>\n</head>\n<body>\n<main>\n";
  h << "<header>\n<h1>" << escape(in.title) << "</h1>\n<p class=\"sub\">Data: " << escape(in.data_file)
    << " &middot; model: " << escape(in.model_file) << " (" << escape(in.method) << ", " << in.p << " variables)"
    << " &middot; flagging level " << escape(level_pct) << "</p>\n</header>\n";

  // At a glance.
  const double share = n > 0 ? 100.0 * static_cast<double>(flagged.size()) / static_cast<double>(n) : 0.0;
  h << "<div class=\"glance\">\n"
    << tile("Flagged rows", std::to_string(flagged.size()),
            "of " + std::to_string(n) + " rows (" + fmt("%.1f", share) + "%)", !flagged.empty())
    << tile("Expected by chance", fmt("%.0f", (1.0 - in.level) * static_cast<double>(scorable)),
            "if every row fitted the profile (" + fmt("%.3g", 100.0 * (1.0 - in.level)) + "% of the rows)")
    << tile("Limit", fmt("%.2f", in.cutoff),
            "squared distance: chi-square quantile, " + std::to_string(in.p) + " df, level " + level_pct);
  std::string model_note;
  for (std::size_t i = 0; i < in.facts.size() && i < 2; ++i)
    model_note += (model_note.empty() ? "" : "; ") + in.facts[i].first + " " + in.facts[i].second;
  h << tile("Model", in.method, model_note) << "</div>\n";

  h << "<aside class=\"caution\"><strong>Read with care.</strong> A statistical flag is evidence to investigate, "
       "not a verdict on a part, a batch or a person. Decisions that affect safety, people or money follow the "
       "applicable regulations and qualified review.</aside>\n";

  // Flagged rows.
  h << "<section id=\"flagged\">\n<h2>Flagged rows, largest distance first</h2>\n";
  if (flagged.empty()) {
    h << "<p class=\"note empty\">No row exceeds the limit at level " << escape(level_pct) << ".</p>\n";
  } else {
    h << flagged_table(in, flagged);
    h << "<p class=\"note\">Line numbers count every line of the data file, header included. The largest contributions "
         "name the variables whose readings moved the row furthest from the profile, with their share of the squared "
         "distance (shares can add up to more than 100% when other variables pull the row back toward the centre).";
    if (in.mixture)
      h << " A mixture flags a row when its distance to its most probable component is over the limit, or when its "
           "density under the whole mixture is low: lower than that of 97.5% of the rows the model was fitted on.";
    h << "</p>\n";
  }
  if (scorable < n)
    h << "<p class=\"note\">" << n - scorable << " rows had no observed value and could not be scored.</p>\n";
  h << "</section>\n";

  // Distances.
  h << "<section id=\"distances\">\n<h2>Distances</h2>\n<div class=\"pair\">\n<div>\n<h3>Model distance against "
       "classical distance</h3>\n"
    << figure(distance_distance_plot(in, drawn),
              "Each mark is a row. Across: its distance from the plain mean and covariance of all rows shown, which "
              "unusual rows pull toward themselves. Up: its distance under the model. Rows above the dashed "
              "horizontal limit are flagged; rows that are high up but left of the vertical limit would go unnoticed "
              "by the plain statistics.",
              "No distance-distance plot: a classical fit of these rows was not possible (" + in.classical_note + ").")
    << "</div>\n<div>\n<h3>Distances against what chance would give</h3>\n"
    << figure(quantile_plot(in),
              "The sorted distances of the fully observed rows against the chi-square quantiles the model expects. "
              "If every row fitted the profile, the marks would follow the dotted line; marks that climb away at the "
              "right are rows farther out than chance explains.",
              "Too few fully observed rows for a quantile plot.")
    << "</div>\n</div>\n";
  if (drawn.size() < scorable)
    h << "<p class=\"note\">To keep the page light, the point plots show every flagged row and "
      << drawn.size() - flagged.size() << " of the " << scorable - flagged.size()
      << " other rows, evenly spaced through the file.</p>\n";
  h << "</section>\n";

  h << "<section id=\"pairs\">\n<h2>Variables in pairs</h2>\n"
    << figure(scatter_matrix(in, drawn),
              matrix_subject(in, !flagged.empty()) +
                  ", in pairs, "
                  "with a histogram of each on the diagonal. Each ellipse would hold about " +
                  level_pct +
                  " of the rows in that pair if the model holds. A row can sit inside every ellipse and still be "
                  "flagged: it then breaks a pattern among three or more variables at once.",
              "The model has one variable: there are no pairs to draw.")
    << "</section>\n";

  h << "<section id=\"contributions\">\n<h2>What makes the flagged rows stand out</h2>\n"
    << figure(contribution_bars(in, kBars),
              "How the squared distance of each flagged row splits over the variables (up to " + std::to_string(kBars) +
                  " rows, largest distance first). Long segments name the readings to check first. Variables that pull "
                  "a row back toward the centre through their correlations have negative terms and are left out of the "
                  "shares.",
              "No row was flagged.")
    << "</section>\n";

  if (in.mixture) {
    h << "<section id=\"model-choice\">\n<h2>How many components</h2>\n"
      << figure(model_choice_plot(in),
                "Every candidate mixture that was fitted, scored by BIC and by ICL (ICL adds a penalty for groups that "
                "overlap). Lower is better; the model file holds the circled candidate.",
                "The model file holds a single candidate: there is no choice to show.")
      << "</section>\n";
  }

  h << "<section id=\"model\">\n<h2>Model</h2>\n<dl class=\"facts\">\n<dt>method</dt><dd>" << escape(in.method)
    << "</dd>\n"
    << "<dt>variables</dt><dd>";
  for (std::size_t j = 0; j < in.columns.size(); ++j) h << (j ? ", " : "") << escape(in.columns[j]);
  h << "</dd>\n";
  for (const auto& [k, v] : in.facts) h << "<dt>" << escape(k) << "</dt><dd>" << escape(v) << "</dd>\n";
  h << "<dt>rows in this report</dt><dd>" << n;
  if (partial > 0) h << " (" << partial << " with missing cells, scored on their observed values)";
  h << "</dd>\n</dl>\n</section>\n";

  h << "<footer>Written by ellipsa " << escape(in.version)
    << ". This page is self-contained: it loads nothing from anywhere else. Hover over a mark to see its "
       "row.</footer>\n"
    << "</main>\n</body>\n</html>\n";
  return h.str();
}

}  // namespace ellipsa::cli
