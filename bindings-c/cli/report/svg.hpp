// Inline SVG for the HTML report: a small builder that escapes every piece of
// text it is given, and the plotting basics on top of it (linear scales, tick
// positions, a framed plot area with axes). No charting beyond that lives here;
// the report's plots are composed from these in report/html.cpp.
#pragma once
#include <string>
#include <string_view>
#include <vector>

namespace ellipsa::cli::svg {

// Text made safe for XML/HTML character data and attribute values: & < > " '
// become entities, control characters that XML 1.0 forbids and bytes that are
// not valid UTF-8 become U+FFFD, so no input can break the document.
std::string escape(std::string_view text);

// A number for an attribute: fixed, at most 2 decimals, no "-0".
std::string num(double v);

// A number for a tick label or a table: short, readable, e.g. 0.5, 12, 1.2e+04.
std::string label_number(double v);

// Builds one <svg> element. Classes refer to the report's inline CSS; `style`
// arguments are raw attribute text made by the caller's code (never user data).
class Builder {
 public:
  Builder(double width, double height, std::string_view aria_label);

  void line(double x1, double y1, double x2, double y2, std::string_view cls, std::string_view style = {});
  void circle(double cx, double cy, double r, std::string_view cls, std::string_view style = {},
              std::string_view title = {});
  // A diamond (square turned 45 degrees) of half-diagonal r: the flagged-row marker.
  void diamond(double cx, double cy, double r, std::string_view cls, std::string_view style = {},
               std::string_view title = {});
  void rect(double x, double y, double w, double h, std::string_view cls, std::string_view style = {},
            std::string_view title = {});
  // An open or closed polyline through the points (x0, y0, x1, y1, ...).
  void polyline(const std::vector<double>& xy, bool closed, std::string_view cls, std::string_view style = {});
  // anchor: "start", "middle" or "end"; rotate: degrees about (x, y).
  void text(double x, double y, std::string_view content, std::string_view cls, std::string_view anchor = "start",
            double rotate = 0.0);

  void set_height(double height) { height_ = height; }
  std::string finish() const;  // the whole <svg>...</svg>

 private:
  void open(std::string_view tag, std::string_view cls, std::string_view style);
  void close(std::string_view tag, std::string_view title);
  double width_, height_;
  std::string aria_;
  std::string body_;
};

// Data interval that grows to include values; padded() widens it for drawing.
struct Range {
  double lo = 0.0, hi = 0.0;
  bool empty = true;
  void include(double v);
  Range padded(double fraction) const;  // also gives a zero-width range some width
};

// Maps a data interval onto a pixel interval (which may run backwards, as y does).
struct Scale {
  double d0 = 0.0, d1 = 1.0, r0 = 0.0, r1 = 1.0;
  double operator()(double v) const { return r0 + (v - d0) / (d1 - d0) * (r1 - r0); }
};

// About `target` round tick values (steps of 1, 2 or 5 times a power of ten) inside [lo, hi].
std::vector<double> ticks(double lo, double hi, int target);

// A rectangular plot area inside a Builder, with its two scales.
struct Panel {
  double left = 0.0, top = 0.0, width = 0.0, height = 0.0;
  Scale x, y;
  Panel(double left_px, double top_px, double width_px, double height_px, Range xr, Range yr);
  double right() const { return left + width; }
  double bottom() const { return top + height; }
  bool inside(double px, double py) const {
    return px >= left - 0.5 && px <= right() + 0.5 && py >= top - 0.5 && py <= bottom() + 0.5;
  }
};

// Frame, grid lines, tick marks with labels and the two axis titles.
void draw_axes(Builder& b, const Panel& p, std::string_view x_title, std::string_view y_title, int x_ticks = 6,
               int y_ticks = 6, bool tick_labels = true);

// One legend entry: a marker drawn with the given class and style, then text.
// Line entries take their dash pattern from the class, like the plotted line.
struct LegendEntry {
  enum Kind { dot, diamond, line, swatch } kind;
  std::string cls;
  std::string style;
  std::string text;
};
// Draws the entries left to right from (x, y), starting a new row (18 px lower)
// before an entry that would pass max_x; returns the baseline of the last row.
double draw_legend(Builder& b, double x, double y, const std::vector<LegendEntry>& entries, double max_x = 1e9);

}  // namespace ellipsa::cli::svg
