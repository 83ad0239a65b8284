#include "sampling.hpp"

#include <cmath>

namespace ellipsa::calibration {

uint64_t Stream::next() {
  uint64_t z = (state_ += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

double Stream::uniform() {
  // 53 random bits, shifted by half a unit so that 0 and 1 never occur.
  return (static_cast<double>(next() >> 11) + 0.5) * 0x1.0p-53;
}

double Stream::normal() {
  if (have_spare_) {
    have_spare_ = false;
    return spare_;
  }
  const double r = std::sqrt(-2.0 * std::log(uniform()));
  const double t = 2.0 * M_PI * uniform();
  spare_ = r * std::sin(t);
  have_spare_ = true;
  return r * std::cos(t);
}

double Stream::chi2(int df) {
  double s = 0.0;
  for (int k = 0; k < df; ++k) {
    const double z = normal();
    s += z * z;
  }
  return s;
}

uint64_t cell_seed(uint64_t base, uint64_t a, uint64_t b, uint64_t c, uint64_t d) {
  Stream s(base);
  uint64_t h = s.next();
  for (uint64_t v : {a, b, c, d}) {
    Stream t(h ^ (v * 0xd1b54a32d192ed03ULL));
    h = t.next();
  }
  return h;
}

const char* bulk_name(Bulk b) {
  switch (b) {
    case Bulk::Gaussian: return "gaussian";
    case Bulk::SineCycle: return "sine-cycle";
    case Bulk::LogNormal: return "log-normal";
    case Bulk::StudentT5: return "t5";
  }
  return "?";
}

bool bulk_from_name(const std::string& name, Bulk& out) {
  for (Bulk b : {Bulk::Gaussian, Bulk::SineCycle, Bulk::LogNormal, Bulk::StudentT5})
    if (name == bulk_name(b)) {
      out = b;
      return true;
    }
  return false;
}

std::vector<double> draw(Bulk shape, int64_t n, int64_t p, Stream& s) {
  std::vector<double> x(static_cast<size_t>(n * p));
  for (int64_t i = 0; i < n; ++i) {
    double* row = x.data() + i * p;
    for (int64_t j = 0; j < p; ++j) row[j] = s.normal();
    switch (shape) {
      case Bulk::Gaussian: break;
      case Bulk::SineCycle: row[0] += (4.0 / 3.0) * std::sin(2.0 * M_PI * s.uniform()); break;
      case Bulk::LogNormal: row[0] = std::exp(row[0]); break;
      case Bulk::StudentT5: {
        const double w = std::sqrt(s.chi2(5) / 5.0);
        for (int64_t j = 0; j < p; ++j) row[j] /= w;
        break;
      }
    }
  }
  return x;
}

}  // namespace ellipsa::calibration
