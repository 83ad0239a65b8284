// Seeded clean samples for the calibration study (flag rates and the
// small-sample bias of the MCD scatter). The generator and every transform are
// spelled out here (no std::*_distribution, whose output differs between
// standard libraries), so a seed gives the same numbers on every platform.
#pragma once
#include <cstdint>
#include <string>
#include <vector>

namespace ellipsa::calibration {

// splitmix64 (Steele, Lea & Flood 2014): small, fast, and good enough for
// Monte Carlo of this size; one stream per (study cell, replicate).
class Stream {
 public:
  explicit Stream(uint64_t seed) : state_(seed) {}
  uint64_t next();
  double uniform();     // in (0, 1), never 0 or 1
  double normal();      // standard normal by the Box-Muller transform, pairs cached
  double chi2(int df);  // sum of df squared normals (df is small here)

 private:
  uint64_t state_;
  bool have_spare_ = false;
  double spare_ = 0.0;
};

// A seed for one cell and replicate, mixed so that neighbouring cells do not
// share streams.
uint64_t cell_seed(uint64_t base, uint64_t a, uint64_t b, uint64_t c, uint64_t d);

// The shapes of clean bulk the study draws from. Every shape is centred and
// has identity covariance in the Gaussian case; the others keep their
// natural scale (rates do not depend on affine changes).
enum class Bulk {
  Gaussian,   // independent N(0, 1) columns
  SineCycle,  // column 0 = (4/3) sin(2 pi u) + N(0,1), u uniform: a cycle over time
              // plus noise, the ratio of the demo's chiller swing to its noise
  LogNormal,  // column 0 = exp(N(0, 1)): one skewed reading
  StudentT5,  // multivariate t with 5 degrees of freedom: z / sqrt(chi2_5 / 5)
};
const char* bulk_name(Bulk b);
bool bulk_from_name(const std::string& name, Bulk& out);

// n x p row-major sample of the given shape.
std::vector<double> draw(Bulk shape, int64_t n, int64_t p, Stream& s);

}  // namespace ellipsa::calibration
