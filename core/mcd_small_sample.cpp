#include "mcd_small_sample.hpp"

#include <algorithm>
#include <cmath>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "error.hpp"

namespace ellipsa::core {
namespace {

// Raw scatter: one fitted curve per p, factor(n) = 1 + g / (n - p)^b.
struct Curve {
  Index p;
  double g, b;
};
// Reweighted scatter: the simulated factors themselves, {p, n, factor}, sorted
// by p then n (no two-parameter curve fitted them within their standard
// errors; docs/calibration.md).
struct Point {
  Index p, n;
  double factor;
};

// Generated tables (rerun the scripts named in each, do not edit by hand):
// the runs, the simulated points and the residual errors are in
// docs/calibration.md.
#include "mcd_small_sample_tables.inc"
// Effective reference rows, by calibration_flag_rates --effective-rows.
#include "mcd_reference_rows_tables.inc"

struct Family {
  std::span<const Curve> raw_050, raw_075;
  std::span<const Point> rew_050, rew_075;
};

Family tables(McdFamily f) {
  if (f == McdFamily::Fast) return {kFastRaw050, kFastRaw075, kFastRew050, kFastRew075};
  return {kDetRaw050, kDetRaw075, kDetRew050, kDetRew075};
}

// The curve at n, interpolated linearly in p between fitted p values; the
// last p's curve beyond it, the first p's below it.
double evaluate(std::span<const Curve> curves, Index n, Index p) {
  if (curves.empty()) return 1.0;
  // Every curve is evaluated at the caller's n - p (>= 1 for the MCD's n > p):
  // (g, b) vary little with p, the n - p term carries most of the p effect.
  const double excess = std::max(static_cast<double>(n - p), 1.0);
  auto at = [excess](const Curve& c) { return 1.0 + c.g / std::pow(excess, c.b); };
  if (p <= curves.front().p) return at(curves.front());
  for (std::size_t k = 1; k < curves.size(); ++k)
    if (p <= curves[k].p) {
      const double t = static_cast<double>(p - curves[k - 1].p) / static_cast<double>(curves[k].p - curves[k - 1].p);
      return (1.0 - t) * at(curves[k - 1]) + t * at(curves[k]);
    }
  return at(curves.back());
}

// The tabulated factors of one p at x = 1 / (n - p): linear in x between the
// simulated n; beyond the largest n linear to 1 at x = 0 (n infinite); below
// the smallest n the smallest n's factor (no extrapolation towards n = p).
// With to_one false the largest n's value is kept beyond it instead.
double table_at(std::span<const Point> pts, double x, bool to_one) {
  const auto xo = [](const Point& q) { return 1.0 / static_cast<double>(q.n - q.p); };
  if (x >= xo(pts.front())) return pts.front().factor;
  for (std::size_t k = 1; k < pts.size(); ++k)
    if (x >= xo(pts[k])) {
      const double t = (x - xo(pts[k])) / (xo(pts[k - 1]) - xo(pts[k]));
      return (1.0 - t) * pts[k].factor + t * pts[k - 1].factor;
    }
  if (!to_one) return pts.back().factor;
  return 1.0 + (pts.back().factor - 1.0) * x / xo(pts.back());
}

// The table at n and p: each tabulated p evaluated at the caller's n - p,
// then linear in p between tabulated p values (constant beyond them).
double evaluate(std::span<const Point> table, Index n, Index p, bool to_one = true) {
  if (table.empty()) return 1.0;
  const double x = 1.0 / std::max(static_cast<double>(n - p), 1.0);
  std::vector<std::pair<Index, double>> nodes;  // (p, factor at x)
  for (std::size_t a = 0; a < table.size();) {
    std::size_t b = a;
    while (b < table.size() && table[b].p == table[a].p) ++b;
    nodes.emplace_back(table[a].p, table_at(table.subspan(a, b - a), x, to_one));
    a = b;
  }
  if (p <= nodes.front().first) return nodes.front().second;
  for (std::size_t k = 1; k < nodes.size(); ++k)
    if (p <= nodes[k].first) {
      const double t =
          static_cast<double>(p - nodes[k - 1].first) / static_cast<double>(nodes[k].first - nodes[k - 1].first);
      return (1.0 - t) * nodes[k - 1].second + t * nodes[k].second;
    }
  return nodes.back().second;
}

// Linear in alpha through the nodes 0.5, 0.75 and 1 (factor 1 at alpha = 1).
double in_alpha(double alpha, double at_050, double at_075) {
  if (alpha <= 0.75) {
    const double t = (alpha - 0.5) / 0.25;
    return (1.0 - t) * at_050 + t * at_075;
  }
  const double t = (alpha - 0.75) / 0.25;
  return (1.0 - t) * at_075 + t * 1.0;
}

}  // namespace

double effective_reference_rows(McdFamily family, bool new_rows, Index n, Index p) {
  const std::span<const Point> t =
      family == McdFamily::Fast
          ? (new_rows ? std::span<const Point>(kFastRowsNew) : std::span<const Point>(kFastRowsFitting))
          : (new_rows ? std::span<const Point>(kDetRowsNew) : std::span<const Point>(kDetRowsFitting));
  if (t.empty() || n <= p) return 0.0;
  // The tables hold n/m*, interpolated as such (the limit moves with 1/m*),
  // floored at 1e-3 (m* = 1000 n: the chi-square).
  const double inverse = evaluate(t, n, p, false);
  return static_cast<double>(n) / std::max(inverse, 1e-3);
}

SmallSampleFactors small_sample_factors(McdFamily family, SmallSample mode, Index n, Index p, double alpha) {
  if (!(alpha >= 0.5 && alpha <= 1.0))
    throw Error(ErrorKind::Argument,
                "small-sample factors: alpha must lie in [0.5, 1] (got " + std::to_string(alpha) + ")");
  SmallSampleFactors f;
  if (mode == SmallSample::Off || n < 2 || p < 1) return f;
  const Family t = tables(family);
  f.raw = in_alpha(alpha, evaluate(t.raw_050, n, p), evaluate(t.raw_075, n, p));
  if (mode == SmallSample::Both) f.reweighted = in_alpha(alpha, evaluate(t.rew_050, n, p), evaluate(t.rew_075, n, p));
  return f;
}

}  // namespace ellipsa::core
