#include "plots.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <numeric>

#include "svg.hpp"

namespace ellipsa::cli {

namespace {

using svg::Builder;
using svg::LegendEntry;
using svg::Panel;
using svg::Range;

constexpr const char* kComponentColours[] = {"#2f6f9f", "#8a5fb4", "#3f8f5f", "#c0792a",
                                             "#b24a78", "#5d7a22", "#4758b8", "#8f6346"};
constexpr const char* kVariableColours[] = {"#2f6f9f", "#e3a43c", "#4f9d69", "#b8504f", "#8a6fb0",
                                            "#57aec7", "#c97ca8", "#8c7b52", "#a3b640"};
constexpr std::size_t kVariableColourCount = sizeof kVariableColours / sizeof *kVariableColours;
constexpr const char* kOtherColour = "#c4c4bd";
constexpr const char* kSingleEllipse = "#1d5f7a";

std::string fill_style(const char* colour) { return std::string("style=\"fill:") + colour + '"'; }
std::string stroke_style(const char* colour) { return std::string("style=\"stroke:") + colour + '"'; }

std::string fmt(const char* format, double v) {
  char buf[48];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

std::string row_label(const ReportRow& r) {
  std::string s = "line " + std::to_string(r.line);
  if (!r.id.empty()) s += " (" + r.id + ")";
  return s;
}

// Cuts text to about max_chars characters (not bytes: UTF-8 sequences stay whole).
std::string shorten(const std::string& s, std::size_t max_chars) {
  std::vector<std::size_t> starts;
  for (std::size_t i = 0; i < s.size(); ++i)
    if ((static_cast<unsigned char>(s[i]) & 0xC0) != 0x80) starts.push_back(i);
  if (starts.size() <= max_chars || max_chars < 2) return s;
  return s.substr(0, starts[max_chars - 1]) + "\xE2\x80\xA6";  // keep max_chars - 1, then an ellipsis
}

// A point of a row: a diamond when flagged, a ring when partly observed, else a dot.
void draw_row_point(Builder& b, const ReportInput& in, std::size_t r, double x, double y, const std::string& extra) {
  const ReportRow& row = in.rows[r];
  std::string title = row_label(row) + ": " + extra;
  if (row.flagged) title += row.low_density ? " - flagged (low density under the mixture)" : " - flagged";
  if (row.observed < in.p)
    title += " - " + std::to_string(row.observed) + " of " + std::to_string(in.p) + " values observed";
  if (row.flagged) {
    b.diamond(x, y, 4.6, "pt-flag", {}, title);
    return;
  }
  const std::string style = in.mixture ? fill_style(component_colour(static_cast<std::size_t>(row.component))) : "";
  b.circle(x, y, 2.8, row.observed < in.p ? "pt pt-part" : "pt", style, title);
}

// Unflagged first, so that the flagged rows are drawn on top.
std::vector<std::size_t> flagged_last(const ReportInput& in, const std::vector<std::size_t>& rows) {
  std::vector<std::size_t> out(rows);
  std::stable_partition(out.begin(), out.end(), [&](std::size_t r) { return !in.rows[r].flagged; });
  return out;
}

Range from_zero(Range r) {
  r.include(0.0);
  Range p = r.padded(0.04);
  p.lo = 0.0;
  return p;
}

std::vector<LegendEntry> point_legend(const ReportInput& in) {
  std::vector<LegendEntry> e;
  if (in.mixture) {
    for (std::size_t k = 0; k < in.components.size(); ++k)
      e.push_back({LegendEntry::dot, "pt", fill_style(component_colour(k)), "component " + std::to_string(k + 1)});
  } else {
    e.push_back({LegendEntry::dot, "pt", "", "row within the limit"});
  }
  e.push_back({LegendEntry::diamond, "pt-flag", "", "flagged row"});
  return e;
}

}  // namespace

const char* component_colour(std::size_t k) {
  return kComponentColours[k % (sizeof kComponentColours / sizeof *kComponentColours)];
}

std::vector<std::size_t> plotted_rows(const ReportInput& in, std::size_t limit) {
  std::size_t calm = 0;
  for (const auto& r : in.rows) calm += r.scorable && !r.flagged;
  const std::size_t stride = limit == 0 || calm <= limit ? 1 : (calm + limit - 1) / limit;
  std::vector<std::size_t> out;
  std::size_t seen = 0;
  for (std::size_t r = 0; r < in.rows.size(); ++r) {
    if (!in.rows[r].scorable) continue;
    if (in.rows[r].flagged || seen++ % stride == 0) out.push_back(r);
  }
  return out;
}

std::vector<std::size_t> matrix_variables(const ReportInput& in) {
  const auto p = static_cast<std::size_t>(in.p);
  if (!in.matrix_columns.empty()) return in.matrix_columns;
  std::vector<std::size_t> all(p);
  std::iota(all.begin(), all.end(), 0);
  if (p <= 4) return all;
  bool any_flagged = false;
  for (const auto& r : in.rows) any_flagged = any_flagged || r.flagged;
  std::vector<double> share(p, 0.0);
  for (std::size_t r = 0; r < in.rows.size(); ++r) {
    const ReportRow& row = in.rows[r];
    if (!row.scorable || (any_flagged && !row.flagged) || !(row.d2 > 0.0)) continue;
    for (std::size_t j = 0; j < p; ++j) {
      const double c = in.contribution[r * p + j];
      if (std::isfinite(c)) share[j] += c / row.d2;
    }
  }
  std::stable_sort(all.begin(), all.end(), [&](std::size_t a, std::size_t z) { return share[a] > share[z]; });
  all.resize(4);
  std::sort(all.begin(), all.end());  // model order reads more naturally
  return all;
}

std::string distance_distance_plot(const ReportInput& in, const std::vector<std::size_t>& drawn) {
  if (!in.have_classical) return "";
  const double cut = std::sqrt(in.cutoff);
  Range xr, yr;
  xr.include(cut);
  yr.include(cut);
  for (auto r : drawn) {
    xr.include(std::sqrt(in.rows[r].classical_d2));
    yr.include(std::sqrt(in.rows[r].d2));
  }
  Builder b(540, 430, "Distance-distance plot");
  const Panel pn(70, 16, 450, 320, from_zero(xr), from_zero(yr));
  svg::draw_axes(b, pn, "classical distance (sample mean and covariance)",
                 "distance under the " + in.method + " model");
  const double m = std::min(pn.x.d1, pn.y.d1);
  b.line(pn.x(0), pn.y(0), pn.x(m), pn.y(m), "ident");
  b.line(pn.x(cut), pn.top, pn.x(cut), pn.bottom(), "cut");
  b.line(pn.left, pn.y(cut), pn.right(), pn.y(cut), "cut");
  for (auto r : flagged_last(in, drawn)) {
    const double c = std::sqrt(in.rows[r].classical_d2), d = std::sqrt(in.rows[r].d2);
    if (!std::isfinite(c) || !std::isfinite(d)) continue;
    draw_row_point(b, in, r, pn.x(c), pn.y(d), "classical " + fmt("%.2f", c) + ", model " + fmt("%.2f", d));
  }
  auto legend = point_legend(in);
  legend.push_back(
      {LegendEntry::line, "cut", "", "limit " + fmt("%.2f", cut) + " (\xE2\x88\x9A" + fmt("%.2f", in.cutoff) + ")"});
  legend.push_back({LegendEntry::line, "ident", "", "equal distances"});
  const double last = svg::draw_legend(b, 20, pn.bottom() + 62, legend, 530);
  b.set_height(last + 12);
  return b.finish();
}

std::string quantile_plot(const ReportInput& in) {
  if (in.quantiles.size() < 2) return "";
  Range xr, yr;
  const double cut = std::sqrt(in.cutoff);
  yr.include(cut);
  for (const auto& q : in.quantiles) {
    xr.include(std::sqrt(q.expected));
    yr.include(std::sqrt(q.observed));
  }
  Builder b(540, 430, "Distances against chi-square quantiles");
  const Panel pn(70, 16, 450, 320, from_zero(xr), from_zero(yr));
  svg::draw_axes(b, pn, "expected distance: \xE2\x88\x9A chi-square quantile, " + std::to_string(in.p) + " df",
                 "observed distance, sorted");
  const double m = std::min(pn.x.d1, pn.y.d1);
  b.line(pn.x(0), pn.y(0), pn.x(m), pn.y(m), "ident");
  b.line(pn.left, pn.y(cut), pn.right(), pn.y(cut), "cut");
  // Thin the calm rows the way plotted_rows does, keeping every flagged row.
  std::size_t calm = 0;
  for (const auto& q : in.quantiles) calm += !in.rows[q.row].flagged;
  const std::size_t stride = calm <= 4000 ? 1 : (calm + 3999) / 4000;
  std::vector<std::size_t> order;
  std::size_t seen = 0;
  for (std::size_t i = 0; i < in.quantiles.size(); ++i)
    if (in.rows[in.quantiles[i].row].flagged || seen++ % stride == 0) order.push_back(i);
  std::stable_partition(order.begin(), order.end(),
                        [&](std::size_t i) { return !in.rows[in.quantiles[i].row].flagged; });
  for (auto i : order) {
    const auto& q = in.quantiles[i];
    const double x = std::sqrt(q.expected), y = std::sqrt(q.observed);
    draw_row_point(b, in, q.row, pn.x(x), pn.y(y), "expected " + fmt("%.2f", x) + ", observed " + fmt("%.2f", y));
  }
  auto legend = point_legend(in);
  legend.push_back(
      {LegendEntry::line, "cut", "", "limit " + fmt("%.2f", cut) + " (\xE2\x88\x9A" + fmt("%.2f", in.cutoff) + ")"});
  legend.push_back({LegendEntry::line, "ident", "", "as expected"});
  const double last = svg::draw_legend(b, 20, pn.bottom() + 62, legend, 530);
  b.set_height(last + 12);
  return b.finish();
}

std::string scatter_matrix(const ReportInput& in, const std::vector<std::size_t>& drawn) {
  const auto vars = matrix_variables(in);
  const std::size_t k = vars.size();
  const auto p = static_cast<std::size_t>(in.p);
  if (k < 2) return "";
  const double cell = k == 2 ? 320 : k == 3 ? 290 : k == 4 ? 228 : 180, gap = 10, left = 78, top = 10;
  const double span = static_cast<double>(k) * cell + static_cast<double>(k - 1) * gap;
  Builder b(left + span + 16, top + span + 120, "Scatter-plot matrix with tolerance ellipses");
  const double radius = std::sqrt(in.cutoff_2d);

  std::vector<Range> range(k);
  for (std::size_t v = 0; v < k; ++v) {
    const std::size_t j = vars[v];
    for (auto r : drawn) range[v].include(in.values[r * p + j]);
    for (const auto& c : in.components) {
      const double half = radius * std::sqrt(c.scatter[j * p + j]);
      range[v].include(c.location[j] - half);
      range[v].include(c.location[j] + half);
    }
    range[v] = range[v].padded(0.05);
  }
  const auto ordered = flagged_last(in, drawn);
  for (std::size_t i = 0; i < k; ++i) {
    for (std::size_t jj = 0; jj < k; ++jj) {
      const double px = left + static_cast<double>(jj) * (cell + gap), py = top + static_cast<double>(i) * (cell + gap);
      const Panel pn(px, py, cell, cell, range[jj], range[i]);
      const std::size_t xv = vars[jj], yv = vars[i];
      if (i == jj) {
        // Diagonal: the variable's name over a histogram of its values.
        b.rect(pn.left, pn.top, pn.width, pn.height, "diagcell");
        constexpr int kBins = 18;
        std::vector<int> count(kBins, 0);
        for (auto r : drawn) {
          const double v = in.values[r * p + xv];
          if (!std::isfinite(v)) continue;
          const int bin = std::clamp(static_cast<int>((v - pn.x.d0) / (pn.x.d1 - pn.x.d0) * kBins), 0, kBins - 1);
          ++count[static_cast<std::size_t>(bin)];
        }
        const int most = std::max(1, *std::max_element(count.begin(), count.end()));
        const double bw = pn.width / kBins;
        for (int bin = 0; bin < kBins; ++bin) {
          const double h = (pn.height - 40) * count[static_cast<std::size_t>(bin)] / most;
          b.rect(pn.left + bin * bw + 1, pn.bottom() - h, bw - 2, h, "hist");
        }
        b.text(pn.left + pn.width / 2, pn.top + 20, shorten(in.columns[xv], static_cast<std::size_t>(cell / 8)),
               "diagname", "middle");
      } else {
        svg::draw_axes(b, pn, "", "", 4, 4, false);
        for (std::size_t c = 0; c < in.components.size(); ++c) {
          const auto& comp = in.components[c];
          const double sxx = comp.scatter[xv * p + xv], syy = comp.scatter[yv * p + yv],
                       sxy = comp.scatter[xv * p + yv];
          const double l11 = std::sqrt(sxx), l21 = sxy / l11, l22sq = syy - l21 * l21;
          if (!(l11 > 0.0) || !(l22sq > 0.0)) continue;
          const double l22 = std::sqrt(l22sq);
          std::vector<double> xy;
          for (int t = 0; t < 72; ++t) {
            const double a = 2.0 * M_PI * t / 72.0, u = radius * std::cos(a), w = radius * std::sin(a);
            xy.push_back(pn.x(comp.location[xv] + l11 * u));
            xy.push_back(pn.y(comp.location[yv] + l21 * u + l22 * w));
          }
          b.polyline(xy, true, "ell", stroke_style(in.mixture ? component_colour(c) : kSingleEllipse));
        }
        for (auto r : ordered) {
          const double x = in.values[r * p + xv], y = in.values[r * p + yv];
          if (!std::isfinite(x) || !std::isfinite(y)) continue;
          draw_row_point(
              b, in, r, pn.x(x), pn.y(y),
              in.columns[xv] + " " + svg::label_number(x) + ", " + in.columns[yv] + " " + svg::label_number(y));
        }
      }
      if (i + 1 == k) {
        for (double v : svg::ticks(pn.x.d0, pn.x.d1, 4))
          b.text(pn.x(v), pn.bottom() + 15, svg::label_number(v), "ticklabel", "middle");
        b.text(pn.left + cell / 2, pn.bottom() + 33, shorten(in.columns[xv], static_cast<std::size_t>(cell / 7)),
               "axistitle", "middle");
      }
      if (jj == 0) {
        for (double v : svg::ticks(pn.y.d0, pn.y.d1, 4))
          b.text(pn.left - 5, pn.y(v) + 4, svg::label_number(v), "ticklabel", "end");
        b.text(pn.left - 56, pn.top + cell / 2, shorten(in.columns[yv], static_cast<std::size_t>(cell / 7)),
               "axistitle", "middle", -90.0);
      }
    }
  }
  auto legend = point_legend(in);
  const std::string pct = fmt("%.4g", 100.0 * in.level) + "% tolerance ellipse";
  if (in.mixture) {
    for (std::size_t c = 0; c < in.components.size(); ++c)
      legend.push_back(
          {LegendEntry::line, "ell", stroke_style(component_colour(c)),
           pct + ", component " + std::to_string(c + 1) + " (weight " + fmt("%.2f", in.components[c].weight) + ")"});
  } else {
    legend.push_back({LegendEntry::line, "ell", stroke_style(kSingleEllipse), pct + " of the model"});
  }
  const double last = svg::draw_legend(b, 20, top + span + 62, legend, left + span);
  b.set_height(last + 12);
  return b.finish();
}

std::string contribution_bars(const ReportInput& in, std::size_t how_many) {
  const auto p = static_cast<std::size_t>(in.p);
  std::vector<std::size_t> shown;
  for (std::size_t r = 0; r < in.rows.size(); ++r)
    if (in.rows[r].flagged && in.rows[r].scorable) shown.push_back(r);
  std::stable_sort(shown.begin(), shown.end(),
                   [&](std::size_t a, std::size_t z) { return in.rows[a].d2 > in.rows[z].d2; });
  if (shown.size() > how_many) shown.resize(how_many);
  if (shown.empty()) return "";

  // Shares of the positive terms: a negative term (a variable that pulls the row
  // back toward the centre, through its correlations) has no length in a stack.
  std::vector<double> share(shown.size() * p, 0.0), mean(p, 0.0);
  for (std::size_t s = 0; s < shown.size(); ++s) {
    double total = 0.0;
    for (std::size_t j = 0; j < p; ++j) {
      const double c = in.contribution[shown[s] * p + j];
      if (c > 0.0) total += c;
    }
    for (std::size_t j = 0; j < p && total > 0.0; ++j) {
      const double c = in.contribution[shown[s] * p + j];
      share[s * p + j] = c > 0.0 ? c / total : 0.0;
      mean[j] += share[s * p + j];
    }
  }
  // Colours go to the variables that matter most here; the rest share "other".
  std::vector<std::size_t> order(p);
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t z) { return mean[a] > mean[z]; });
  const std::size_t coloured = p <= kVariableColourCount ? p : kVariableColourCount - 1;
  std::vector<int> slot(p, -1);
  for (std::size_t i = 0; i < coloured; ++i) slot[order[i]] = static_cast<int>(i);
  auto colour_of = [&](std::size_t j) { return slot[j] < 0 ? kOtherColour : kVariableColours[slot[j]]; };

  const double width = 1000, label_w = 230, bar_w = 620;
  Builder b(width, 100, "Contributions to the distance of the flagged rows");
  std::vector<LegendEntry> legend;
  for (std::size_t i = 0; i < coloured; ++i)
    legend.push_back({LegendEntry::swatch, "seg", fill_style(kVariableColours[i]), in.columns[order[i]]});
  if (coloured < p) legend.push_back({LegendEntry::swatch, "seg", fill_style(kOtherColour), "other variables"});
  const double top = svg::draw_legend(b, label_w, 18, legend, width - 10) + 18;
  const double row_h = 24;
  for (std::size_t s = 0; s < shown.size(); ++s) {
    const ReportRow& row = in.rows[shown[s]];
    const double y = top + static_cast<double>(s) * row_h;
    b.text(label_w - 10, y + 13, shorten(row_label(row), 34), "barlabel", "end");
    double x = label_w;
    // Coloured variables in legend order, then the others, so stacks compare row to row.
    std::vector<std::size_t> stack(order.begin(), order.end());
    for (auto j : stack) {
      const double w = share[s * p + j] * bar_w;
      if (!(w > 0.0)) continue;
      const double c = in.contribution[shown[s] * p + j];
      b.rect(x, y, w, 17, "seg", fill_style(colour_of(j)),
             row_label(row) + ": " + in.columns[j] + " " + fmt("%.0f", 100.0 * share[s * p + j]) + "% (contribution " +
                 svg::label_number(c) + " of squared distance " + svg::label_number(row.d2) + ")");
      x += w;
    }
    b.text(label_w + bar_w + 10, y + 13, "d\xC2\xB2 " + svg::label_number(std::round(row.d2 * 10) / 10), "barvalue");
  }
  const double axis_y = top + static_cast<double>(shown.size()) * row_h + 2;
  b.line(label_w, axis_y, label_w + bar_w, axis_y, "tick");
  for (int pct = 0; pct <= 100; pct += 25) {
    const double x = label_w + bar_w * pct / 100.0;
    b.line(x, axis_y, x, axis_y + 4, "tick");
    b.text(x, axis_y + 17, std::to_string(pct) + "%", "ticklabel", "middle");
  }
  b.text(label_w + bar_w / 2, axis_y + 35, "share of the row's positive contributions", "axistitle", "middle");
  b.set_height(axis_y + 46);
  return b.finish();
}

std::string model_choice_plot(const ReportInput& in) {
  std::vector<const ReportCandidate*> ok;
  for (const auto& c : in.candidates)
    if (std::isfinite(c.bic) && std::isfinite(c.icl)) ok.push_back(&c);
  if (ok.size() < 2) return "";
  std::vector<std::string> structures;
  for (auto* c : ok)
    if (std::find(structures.begin(), structures.end(), c->structure) == structures.end())
      structures.push_back(c->structure);
  Range xr, yr;
  int kmin = 1 << 30, kmax = 0;
  for (auto* c : ok) {
    xr.include(c->components);
    yr.include(c->bic);
    yr.include(c->icl);
    kmin = std::min(kmin, c->components);
    kmax = std::max(kmax, c->components);
  }
  xr.lo -= 0.3;
  xr.hi += 0.3;
  Builder b(540, 400, "Model choice: BIC and ICL over the number of components");
  const Panel pn(86, 16, 434, 290, xr, yr.padded(0.06));
  svg::draw_axes(b, pn, "components K", "criterion (lower is better)", std::min(6, kmax - kmin + 1), 5);
  std::vector<LegendEntry> legend;
  for (std::size_t s = 0; s < structures.size(); ++s) {
    const bool single = structures.size() == 1;
    const char* bic_colour = single ? kComponentColours[0] : component_colour(s);
    const char* icl_colour = single ? kComponentColours[3] : component_colour(s);
    for (int which = 0; which < 2; ++which) {
      const char* colour = which == 0 ? bic_colour : icl_colour;
      std::vector<const ReportCandidate*> series;
      for (auto* c : ok)
        if (c->structure == structures[s]) series.push_back(c);
      std::stable_sort(series.begin(), series.end(), [](auto* a, auto* z) { return a->components < z->components; });
      std::vector<double> xy;
      for (auto* c : series) {
        xy.push_back(pn.x(c->components));
        xy.push_back(pn.y(which == 0 ? c->bic : c->icl));
      }
      const char* cls = which == 0 ? "crit" : "crit crit-icl";
      b.polyline(xy, false, cls, stroke_style(colour));
      for (auto* c : series) {
        const double v = which == 0 ? c->bic : c->icl;
        b.circle(pn.x(c->components), pn.y(v), 3.6, which == 0 ? "critpt" : "critpt critpt-icl",
                 which == 0 ? fill_style(colour) : stroke_style(colour),
                 "K = " + std::to_string(c->components) + ", " + c->structure + ": " + (which == 0 ? "BIC " : "ICL ") +
                     fmt("%.1f", v));
      }
      const std::string name = std::string(which == 0 ? "BIC" : "ICL") + (single ? "" : " (" + structures[s] + ")");
      legend.push_back({LegendEntry::line, cls, stroke_style(colour), name});
    }
  }
  std::string chosen = "chosen model";
  for (auto* c : ok)
    if (c->chosen) {
      b.circle(pn.x(c->components), pn.y(c->bic), 9, "chosen", {},
               "chosen: K = " + std::to_string(c->components) + ", " + c->structure);
      chosen += ": K = " + std::to_string(c->components) + ", " + c->structure;
    }
  legend.push_back({LegendEntry::dot, "chosen", "", chosen});
  const double last = svg::draw_legend(b, 20, pn.bottom() + 58, legend, 530);
  b.set_height(last + 12);
  return b.finish();
}

}  // namespace ellipsa::cli
