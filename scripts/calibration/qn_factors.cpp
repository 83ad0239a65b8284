// Monte Carlo of the finite-sample factors d_n of the Qn scale (Croux &
// Rousseeuw 1992): for each n, R samples x ~ N(0, 1)^n from a seeded stream;
// for each, the asymptotically consistent Qn (qn_consistency_constant() times
// the k-th smallest of the n(n-1)/2 differences |x_i - x_j|, k = C(floor(n/2)+1, 2),
// without the factor); d_n = 1 / mean(Qn), so that d_n Qn has mean 1 at the
// standard normal (the definition of a finite-sample consistency factor). The
// standard error of d_n is the delta method on the mean: se(d_n) = sd(Qn) /
// (sqrt(R) mean(Qn)^2).
//
// Above a threshold n0 the factor is fitted separately for odd and even n to
// the form d_n = n / (n + a), i.e. mean(Qn) - 1 = a / n: a weighted least
// squares fit of the one constant a (weights 1 / se(mean)^2), printed with the
// residuals d_n(fit) - d_n(simulated) and their ratio to the standard error,
// for several thresholds. The program also prints the values recalled from
// memory for the published table (n = 2..9, and n/(n+1.4) odd, n/(n+3.8) even
// above 9) beside the simulated ones: a cross-check, not an oracle.
//
//   calibration_qn_factors [--seed S] [--reps R] [--quick]
//
// Output: Markdown tables, then the lines for core/robust_scale.cpp. About 8
// minutes on one core with the default 500000 replicates; --quick: 1/20 of them.
#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "core/robust_scale.hpp"
#include "sampling.hpp"

namespace cal = ellipsa::calibration;
namespace core = ellipsa::core;

namespace {

struct SizeEstimate {
  long n;
  long reps;
  double mean;     // mean of the asymptotic Qn
  double se_mean;  // its standard error
  double factor;   // 1 / mean
  double se;       // standard error of the factor
};

SizeEstimate simulate(uint64_t seed, long n, long reps) {
  const long long h = n / 2 + 1;
  const long long k = h * (h - 1) / 2;
  const double d = core::qn_consistency_constant();
  core::ScaleWorkspace workspace;
  Eigen::VectorXd x(n);
  // Welford's running mean and variance.
  double mean = 0.0, m2 = 0.0;
  for (long rep = 0; rep < reps; ++rep) {
    cal::Stream stream(cal::cell_seed(seed, 14, static_cast<uint64_t>(n), 0, static_cast<uint64_t>(rep)));
    for (long i = 0; i < n; ++i) x(i) = stream.normal();
    const double q = d * core::pairwise_difference_order_statistic(x, k, workspace);
    const double delta = q - mean;
    mean += delta / static_cast<double>(rep + 1);
    m2 += delta * (q - mean);
  }
  SizeEstimate p;
  p.n = n;
  p.reps = reps;
  p.mean = mean;
  p.se_mean = std::sqrt(m2 / static_cast<double>(reps - 1) / static_cast<double>(reps));
  p.factor = 1.0 / mean;
  p.se = p.se_mean / (mean * mean);
  return p;
}

// Values recalled from memory for the published factors (Croux & Rousseeuw
// 1992); the printed table is not available here.
double from_memory(long n) {
  static const double small[] = {0.399, 0.994, 0.512, 0.844, 0.611, 0.857, 0.669, 0.872};
  if (n >= 2 && n <= 9) return small[n - 2];
  return n % 2 ? n / (n + 1.4) : n / (n + 3.8);
}

struct Fit {
  double a = 0.0, se_a = 0.0, b = 0.0;  // b: the 1/n^2 term of the two-constant fit
  double max_abs = 0.0, max_z = 0.0, chi2 = 0.0;
  int points = 0;
};

// mean - 1 = a / n (two = false) or a / n + b / n^2 (two = true) by weighted
// least squares over the points of the given parity with n >= n0.
Fit fit(const std::vector<SizeEstimate>& pts, long n0, int parity, bool two) {
  double s11 = 0.0, s12 = 0.0, s22 = 0.0, s1y = 0.0, s2y = 0.0;
  for (const SizeEstimate& p : pts) {
    if (p.n < n0 || p.n % 2 != parity) continue;
    const double w = 1.0 / (p.se_mean * p.se_mean), u = 1.0 / static_cast<double>(p.n), y = p.mean - 1.0;
    s11 += w * u * u;
    s12 += w * u * u * u;
    s22 += w * u * u * u * u;
    s1y += w * u * y;
    s2y += w * u * u * y;
  }
  Fit f;
  if (s11 == 0.0) return f;
  if (two) {
    const double det = s11 * s22 - s12 * s12;
    f.a = (s22 * s1y - s12 * s2y) / det;
    f.b = (s11 * s2y - s12 * s1y) / det;
    f.se_a = std::sqrt(s22 / det);
  } else {
    f.a = s1y / s11;
    f.se_a = 1.0 / std::sqrt(s11);
  }
  for (const SizeEstimate& p : pts) {
    if (p.n < n0 || p.n % 2 != parity) continue;
    const double nn = static_cast<double>(p.n);
    const double fitted = 1.0 / (1.0 + f.a / nn + f.b / (nn * nn));
    const double r = fitted - p.factor;
    f.max_abs = std::max(f.max_abs, std::abs(r));
    f.max_z = std::max(f.max_z, std::abs(r) / p.se);
    f.chi2 += (r / p.se) * (r / p.se);
    ++f.points;
  }
  return f;
}

}  // namespace

int main(int argc, char** argv) {
  uint64_t seed = 20261203;
  long reps = 500000;
  bool quick = false;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if ((a == "--seed" || a == "--reps") && i + 1 < argc) {
      const unsigned long long v = std::strtoull(argv[++i], nullptr, 10);
      if (a == "--seed") seed = v;
      else reps = static_cast<long>(v);
    } else if (a == "--quick") {
      quick = true;
    } else {
      std::fprintf(stderr, "usage: %s [--seed S] [--reps R] [--quick]\n", argv[0]);
      return 2;
    }
  }
  if (quick) reps /= 20;
  if (reps < 2) {
    std::fprintf(stderr, "--reps must be at least 2\n");
    return 2;
  }
  std::vector<long> ns;
  for (long n = 2; n <= 60; ++n) ns.push_back(n);
  for (long n : {61, 62, 63, 64, 79, 80, 99, 100, 149, 150, 199, 200, 299, 300, 499, 500, 999, 1000}) ns.push_back(n);
  std::printf("## Finite-sample factors of Qn: seed %llu, %ld replicates per n (fewer above n = 100)\n\n",
              static_cast<unsigned long long>(seed), reps);
  std::printf("| n | replicates | mean Qn | d_n = 1/mean | s.e. | n (mean - 1) | from memory | difference |\n");
  std::printf("|---|---|---|---|---|---|---|---|\n");
  std::vector<SizeEstimate> pts;
  for (long n : ns) {
    // Above n = 100 the cost grows with n while the standard error of a
    // (about 0.8 sqrt(n / R)) matters less: keep R n near 100 R.
    const long r = n <= 100 ? reps : std::max<long>(reps * 100 / n, 1000);
    const SizeEstimate p = simulate(seed, n, r);
    pts.push_back(p);
    const double m = from_memory(n);
    std::printf("| %ld | %ld | %.5f | %.5f | %.5f | %.3f | %.4f | %+.4f |\n", n, p.reps, p.mean, p.factor, p.se,
                static_cast<double>(n) * (p.mean - 1.0), m, m - p.factor);
    std::fflush(stdout);
  }
  for (bool two : {false, true}) {
    std::printf(two ? "\n### Two-constant fits d_n = 1 / (1 + a/n + b/n^2) by parity, for n >= n0\n\n"
                    : "\n### Fits d_n = n / (n + a) by parity, for n >= n0\n\n");
    std::printf("| n0 | parity | a | s.e. of a | b | points | max abs residual | max abs residual / s.e. | chi2 |\n");
    std::printf("|---|---|---|---|---|---|---|---|---|\n");
    for (long n0 : {10L, 12L, 16L, 20L, 30L, 40L, 60L}) {
      for (int parity : {1, 0}) {
        const Fit f = fit(pts, n0, parity, two);
        std::printf("| %ld | %s | %.4f | %.4f | %.3f | %d | %.5f | %.2f | %.1f |\n", n0, parity ? "odd" : "even", f.a,
                    f.se_a, f.b, f.points, f.max_abs, f.max_z, f.chi2);
      }
    }
  }
  // The core keeps the simulated factors below kTableEnd and the one-constant
  // form from there on: from n0 = 40 its residuals are a few 1e-4, below 40
  // the form misses by up to 0.01 (the fits above).
  constexpr long kTableEnd = 40;
  const Fit odd = fit(pts, kTableEnd, 1, false), even = fit(pts, kTableEnd, 0, false);
  std::printf("\nLines for core/robust_scale.cpp (d_n for n = 2..%ld, then n / (n + a) by parity):\n\n```\n",
              kTableEnd - 1);
  for (const SizeEstimate& p : pts)
    if (p.n < kTableEnd) std::printf("    %.4f,  // n = %ld, s.e. %.5f\n", p.factor, p.n, p.se);
  std::printf("constexpr double kQnOddA = %.4f;   // s.e. %.4f, max |residual| %.5f, chi2 %.1f on %d points\n", odd.a,
              odd.se_a, odd.max_abs, odd.chi2, odd.points);
  std::printf("constexpr double kQnEvenA = %.4f;  // s.e. %.4f, max |residual| %.5f, chi2 %.1f on %d points\n", even.a,
              even.se_a, even.max_abs, even.chi2, even.points);
  std::printf("```\n");
  return 0;
}
