#include "svg.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace ellipsa::cli::svg {

namespace {

constexpr std::string_view kReplacement = "\xEF\xBF\xBD";  // U+FFFD

// Length of the valid UTF-8 sequence starting at s[i], or 0 when it is not one
// (overlong forms, surrogates and code points above U+10FFFF are invalid).
std::size_t utf8_sequence(std::string_view s, std::size_t i) {
  const auto c = static_cast<unsigned char>(s[i]);
  if (c < 0x80) return 1;
  std::size_t len = 0;
  unsigned lo = 0x80, hi = 0xBF;
  if (c >= 0xC2 && c <= 0xDF) len = 2;
  else if (c == 0xE0) len = 3, lo = 0xA0;
  else if (c == 0xED) len = 3, hi = 0x9F;
  else if (c >= 0xE1 && c <= 0xEF) len = 3;
  else if (c == 0xF0) len = 4, lo = 0x90;
  else if (c >= 0xF1 && c <= 0xF3) len = 4;
  else if (c == 0xF4) len = 4, hi = 0x8F;
  else return 0;
  if (i + len > s.size()) return 0;
  for (std::size_t k = 1; k < len; ++k) {
    const auto d = static_cast<unsigned char>(s[i + k]);
    if (d < (k == 1 ? lo : 0x80) || d > (k == 1 ? hi : 0xBF)) return 0;
  }
  // U+FFFE and U+FFFF are not XML characters either.
  if (len == 3 && c == 0xEF && static_cast<unsigned char>(s[i + 1]) == 0xBF &&
      static_cast<unsigned char>(s[i + 2]) >= 0xBE)
    return 0;
  return len;
}

}  // namespace

std::string escape(std::string_view text) {
  std::string out;
  out.reserve(text.size() + 8);
  for (std::size_t i = 0; i < text.size();) {
    const char c = text[i];
    switch (c) {
      case '&':
        out += "&amp;";
        ++i;
        continue;
      case '<':
        out += "&lt;";
        ++i;
        continue;
      case '>':
        out += "&gt;";
        ++i;
        continue;
      case '"':
        out += "&quot;";
        ++i;
        continue;
      case '\'':
        out += "&#39;";
        ++i;
        continue;
      default: break;
    }
    const auto u = static_cast<unsigned char>(c);
    if (u < 0x20 && c != '\t' && c != '\n' && c != '\r') {
      out += kReplacement;
      ++i;
      continue;
    }
    const std::size_t len = utf8_sequence(text, i);
    if (len == 0) {
      out += kReplacement;
      ++i;
      continue;
    }
    out.append(text.substr(i, len));
    i += len;
  }
  return out;
}

std::string num(double v) {
  if (!std::isfinite(v)) return "0";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  std::string s(buf);
  while (!s.empty() && s.back() == '0') s.pop_back();
  if (!s.empty() && s.back() == '.') s.pop_back();
  if (s == "-0" || s.empty()) s = "0";
  return s;
}

std::string label_number(double v) {
  if (std::isnan(v)) return "NA";
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  if (v == 0.0) return "0";
  char buf[32];
  const double a = std::fabs(v);
  if (a >= 1e5 || a < 1e-3) std::snprintf(buf, sizeof buf, "%.3g", v);
  else std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

Builder::Builder(double width, double height, std::string_view aria_label)
    : width_(width), height_(height), aria_(escape(aria_label)) {}

void Builder::open(std::string_view tag, std::string_view cls, std::string_view style) {
  body_ += '<';
  body_ += tag;
  if (!cls.empty()) {
    body_ += " class=\"";
    body_ += cls;
    body_ += '"';
  }
  if (!style.empty()) {
    body_ += ' ';
    body_ += style;
  }
}

void Builder::close(std::string_view tag, std::string_view title) {
  if (title.empty()) {
    body_ += "/>";
  } else {
    body_ += "><title>" + escape(title) + "</title></";
    body_ += tag;
    body_ += '>';
  }
  body_ += '\n';
}

void Builder::line(double x1, double y1, double x2, double y2, std::string_view cls, std::string_view style) {
  open("line", cls, style);
  body_ += " x1=\"" + num(x1) + "\" y1=\"" + num(y1) + "\" x2=\"" + num(x2) + "\" y2=\"" + num(y2) + '"';
  close("line", {});
}

void Builder::circle(double cx, double cy, double r, std::string_view cls, std::string_view style,
                     std::string_view title) {
  open("circle", cls, style);
  body_ += " cx=\"" + num(cx) + "\" cy=\"" + num(cy) + "\" r=\"" + num(r) + '"';
  close("circle", title);
}

void Builder::diamond(double cx, double cy, double r, std::string_view cls, std::string_view style,
                      std::string_view title) {
  open("path", cls, style);
  body_ += " d=\"M" + num(cx) + ' ' + num(cy - r) + 'L' + num(cx + r) + ' ' + num(cy) + 'L' + num(cx) + ' ' +
           num(cy + r) + 'L' + num(cx - r) + ' ' + num(cy) + "Z\"";
  close("path", title);
}

void Builder::rect(double x, double y, double w, double h, std::string_view cls, std::string_view style,
                   std::string_view title) {
  open("rect", cls, style);
  body_ += " x=\"" + num(x) + "\" y=\"" + num(y) + "\" width=\"" + num(std::max(w, 0.0)) + "\" height=\"" +
           num(std::max(h, 0.0)) + '"';
  close("rect", title);
}

void Builder::polyline(const std::vector<double>& xy, bool closed, std::string_view cls, std::string_view style) {
  if (xy.size() < 4) return;
  open("path", cls, style);
  body_ += " d=\"";
  for (std::size_t i = 0; i + 1 < xy.size(); i += 2) {
    body_ += i == 0 ? 'M' : 'L';
    body_ += num(xy[i]) + ' ' + num(xy[i + 1]);
  }
  if (closed) body_ += 'Z';
  body_ += '"';
  close("path", {});
}

void Builder::text(double x, double y, std::string_view content, std::string_view cls, std::string_view anchor,
                   double rotate) {
  open("text", cls, {});
  body_ += " x=\"" + num(x) + "\" y=\"" + num(y) + '"';
  if (anchor != "start") body_ += " text-anchor=\"" + std::string(anchor) + '"';
  if (rotate != 0.0) body_ += " transform=\"rotate(" + num(rotate) + ' ' + num(x) + ' ' + num(y) + ")\"";
  body_ += '>' + escape(content) + "</text>\n";
}

std::string Builder::finish() const {
  // No xmlns: the element lives inside HTML, where the parser supplies the
  // namespace (and the page then carries no address at all).
  return "<svg width=\"" + num(width_) + "\" height=\"" + num(height_) + "\" viewBox=\"0 0 " + num(width_) + ' ' +
         num(height_) + "\" role=\"img\" aria-label=\"" + aria_ + "\">\n" + body_ + "</svg>\n";
}

void Range::include(double v) {
  if (!std::isfinite(v)) return;
  if (empty) {
    lo = hi = v;
    empty = false;
  } else {
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
}

Range Range::padded(double fraction) const {
  Range r = *this;
  if (empty) {
    r.lo = 0.0;
    r.hi = 1.0;
    r.empty = false;
    return r;
  }
  double span = hi - lo;
  if (!(span > 0.0)) span = std::max(std::fabs(lo) * 0.1, 1.0);
  r.lo -= span * fraction;
  r.hi += span * fraction;
  return r;
}

std::vector<double> ticks(double lo, double hi, int target) {
  std::vector<double> out;
  if (!(hi > lo) || !std::isfinite(lo) || !std::isfinite(hi) || target < 1) return out;
  const double raw = (hi - lo) / target;
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  double step = power;
  for (double m : {1.0, 2.0, 5.0, 10.0}) {
    step = m * power;
    if (raw <= step) break;
  }
  const double first = std::ceil(lo / step - 1e-9) * step;
  for (double v = first; v <= hi + step * 1e-9 && out.size() < 50; v += step)
    out.push_back(std::fabs(v) < step * 1e-9 ? 0.0 : v);
  // A round step can leave a single label on an axis: then try a finer one.
  if (out.size() < 3 && target < 16) return ticks(lo, hi, target * 2);
  return out;
}

Panel::Panel(double left_px, double top_px, double width_px, double height_px, Range xr, Range yr)
    : left(left_px), top(top_px), width(width_px), height(height_px) {
  x = {xr.lo, xr.hi, left, left + width};
  y = {yr.lo, yr.hi, top + height, top};
}

void draw_axes(Builder& b, const Panel& p, std::string_view x_title, std::string_view y_title, int x_ticks, int y_ticks,
               bool tick_labels) {
  for (double v : ticks(p.x.d0, p.x.d1, x_ticks)) {
    const double px = p.x(v);
    b.line(px, p.top, px, p.bottom(), "grid");
    b.line(px, p.bottom(), px, p.bottom() + 4, "tick");
    if (tick_labels) b.text(px, p.bottom() + 16, label_number(v), "ticklabel", "middle");
  }
  for (double v : ticks(p.y.d0, p.y.d1, y_ticks)) {
    const double py = p.y(v);
    b.line(p.left, py, p.right(), py, "grid");
    b.line(p.left - 4, py, p.left, py, "tick");
    if (tick_labels) b.text(p.left - 7, py + 4, label_number(v), "ticklabel", "end");
  }
  b.rect(p.left, p.top, p.width, p.height, "frame");
  if (!x_title.empty())
    b.text(p.left + p.width / 2, p.bottom() + (tick_labels ? 36 : 16), x_title, "axistitle", "middle");
  if (!y_title.empty()) {
    const double x = p.left - (tick_labels ? 44 : 10);
    const double y = p.top + p.height / 2;
    b.text(x, y, y_title, "axistitle", "middle", -90.0);
  }
}

double draw_legend(Builder& b, double x, double y, const std::vector<LegendEntry>& entries, double max_x) {
  const double x0 = x;
  for (const auto& e : entries) {
    const double marker = e.kind == LegendEntry::line ? 24 : 16;
    // Width estimate for 12 px text: about 6.6 px per character.
    const double width = marker + 6.6 * static_cast<double>(e.text.size());
    if (x > x0 && x + width > max_x) {
      x = x0;
      y += 18;
    }
    switch (e.kind) {
      case LegendEntry::dot: b.circle(x + 6, y - 4, 4, e.cls, e.style); break;
      case LegendEntry::diamond: b.diamond(x + 6, y - 4, 5, e.cls, e.style); break;
      case LegendEntry::line: b.line(x, y - 4, x + 18, y - 4, e.cls, e.style); break;
      case LegendEntry::swatch: b.rect(x, y - 10, 14, 10, e.cls, e.style); break;
    }
    b.text(x + marker, y, e.text, "legend");
    x += width + 16;
  }
  return y;
}

}  // namespace ellipsa::cli::svg
