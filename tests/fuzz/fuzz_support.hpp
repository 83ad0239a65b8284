// Shared pieces of the fuzz targets of the C interface: a reader that turns
// the fuzzer's bytes into choices and values (hostile doubles included), the
// oracle check that aborts with a message, and the checks of a fitted model
// that every target applies (symmetric positive-definite scatter, finite
// location, save -> load -> save gives the same bytes).
#pragma once
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <limits>
#include <string>
#include <vector>

#include "ellipsa.h"

// Oracle on the BLAS boundary: OpenBLAS reports an illegal argument (a
// leading dimension of 0 from a product over zero rows, say) by calling
// xerbla_, which prints a line and returns, leaving the output untouched. Here
// it is a finding: this definition takes the place of OpenBLAS's (the link
// exports it: -Wl,--export-dynamic-symbol=xerbla_) and aborts. Found an exact
// fit on zero rows (tests/capi/test_numerical_extremes.cpp,
// SpreadBeyondDoublePrecisionIsADataErrorNamingTheColumn). Not inline: each
// target includes this header from its one source file.
extern "C" __attribute__((visibility("default"), used)) void xerbla_(const char* name, const int* info, int len) {
  std::fprintf(stderr, "fuzz oracle failed: BLAS routine %.*s called with illegal argument %d\n", len, name, *info);
  std::abort();
}

namespace fuzz {

inline void check(bool condition, const char* what, const std::string& detail = {}) {
  if (!condition) {
    std::fprintf(stderr, "fuzz oracle failed: %s %s\n", what, detail.c_str());
    std::abort();
  }
}

// Reads choices from the input; past its end every read gives 0.
class Input {
 public:
  Input(const std::uint8_t* data, std::size_t size) : data_(data), size_(size) {}
  std::uint8_t byte() { return pos_ < size_ ? data_[pos_++] : 0; }
  std::uint32_t u32() {
    std::uint32_t v = 0;
    for (int i = 0; i < 4; ++i) v = (v << 8) | byte();
    return v;
  }
  std::uint64_t u64() { return (std::uint64_t{u32()} << 32) | u32(); }
  // An integer in [lo, hi].
  std::int64_t range(std::int64_t lo, std::int64_t hi) {
    const std::uint64_t span = static_cast<std::uint64_t>(hi - lo) + 1;
    return lo + static_cast<std::int64_t>((span > 255 ? u32() : byte()) % span);
  }
  // A double: mostly ordinary values near a few scales, often one of the
  // hostile ones (NaN, +-inf, +-0, subnormals, 1e308, DBL_MAX, huge offsets).
  double value() {
    const std::uint8_t kind = byte();
    static const double special[] = {std::numeric_limits<double>::quiet_NaN(),
                                     std::numeric_limits<double>::infinity(),
                                     -std::numeric_limits<double>::infinity(),
                                     0.0,
                                     -0.0,
                                     std::numeric_limits<double>::denorm_min(),
                                     4.9e-320,
                                     -2.2e-310,
                                     1e308,
                                     -1e308,
                                     std::numeric_limits<double>::max(),
                                     std::numeric_limits<double>::min(),
                                     1e-300,
                                     1e150,
                                     -1e150,
                                     1e9 + 0.5};
    if (kind < 40) return special[kind % (sizeof special / sizeof special[0])];
    if (kind < 80) {  // raw bits
      const std::uint64_t bits = u64();
      double v;
      std::memcpy(&v, &bits, sizeof v);
      return v;
    }
    // A small signed integer scaled by a power of ten (ties and duplicates are common).
    const int mantissa = static_cast<int>(byte()) - 128;
    const int exponent = static_cast<int>(kind % 9) - 4;
    return mantissa * std::pow(10.0, exponent);
  }
  bool empty() const { return pos_ >= size_; }
  std::string rest() {
    std::string s(reinterpret_cast<const char*>(data_) + pos_, size_ - pos_);
    pos_ = size_;
    return s;
  }

 private:
  const std::uint8_t* data_;
  std::size_t size_;
  std::size_t pos_ = 0;
};

inline std::string save(const ellipsa_model* m) {
  char* text = nullptr;
  std::int64_t length = 0;
  const ellipsa_status st = ellipsa_model_save(&text, &length, m);
  if (st == ELLIPSA_ERR_MEMORY) return {};
  check(st == ELLIPSA_OK, "model_save failed", ellipsa_last_error());
  check(text != nullptr && length > 0 && std::strlen(text) == static_cast<std::size_t>(length), "saved text length");
  std::string s(text, static_cast<std::size_t>(length));
  ellipsa_text_free(text);
  return s;
}

// Cholesky of a p x p row-major matrix in double (what a caller would run on
// the reported scatter): true when every pivot is positive and finite. (In
// long double, a classical scatter of condition about 1e17 that factors in
// double failed: positive definite to working precision is the promise.)
inline bool positive_definite(const std::vector<double>& s, std::int64_t p) {
  std::vector<double> l(static_cast<std::size_t>(p * p), 0.0);
  for (std::int64_t j = 0; j < p; ++j) {
    double d = s[j * p + j];
    for (std::int64_t k = 0; k < j; ++k) d -= l[j * p + k] * l[j * p + k];
    if (!(d > 0.0) || !std::isfinite(d)) return false;
    l[j * p + j] = std::sqrt(d);
    for (std::int64_t i = j + 1; i < p; ++i) {
      double v = s[i * p + j];
      for (std::int64_t k = 0; k < j; ++k) v -= l[i * p + k] * l[j * p + k];
      l[i * p + j] = v / l[j * p + j];
    }
  }
  return true;
}

// Every component of a fitted (or loaded) model: finite location, symmetric
// positive-definite scatter, weights in (0, 1].
inline void check_model(const ellipsa_model* m) {
  std::int32_t kind = 0, components = 0;
  ellipsa_method method = 0;
  std::int64_t p = 0;
  check(ellipsa_model_describe(&kind, &method, &p, &components, m) == ELLIPSA_OK, "describe");
  check(p >= 1 && components >= 1, "dimension and components");
  std::vector<double> location(static_cast<std::size_t>(p)), scatter(static_cast<std::size_t>(p * p));
  for (std::int32_t k = 0; k < components; ++k) {
    double weight = 0;
    const ellipsa_status st = ellipsa_model_component(location.data(), p, scatter.data(), p * p, &weight, m, k);
    check(st == ELLIPSA_OK, "component", ellipsa_last_error());
    check(weight > 0 && weight <= 1, "weight in (0, 1]");
    for (double v : location) check(std::isfinite(v), "finite location");
    for (std::int64_t i = 0; i < p; ++i)
      for (std::int64_t j = 0; j < p; ++j) {
        check(std::isfinite(scatter[i * p + j]), "finite scatter");
        check(scatter[i * p + j] == scatter[j * p + i], "symmetric scatter");
      }
    if (!positive_definite(scatter, p)) {
      std::string detail = "method " + std::to_string(method) + ", scatter";
      char text[32];
      for (double v : scatter) {
        std::snprintf(text, sizeof text, " %.17g", v);  // every digit, to replay the failure elsewhere
        detail += text;
      }
      check(false, "positive-definite scatter", detail);
    }
  }
}

// load(save(m)) saves to the same bytes; returns the saved text ("" when out of memory).
inline std::string check_round_trip(const ellipsa_model* m) {
  const std::string first = save(m);
  if (first.empty()) return first;
  ellipsa_model* again = nullptr;
  const ellipsa_status st = ellipsa_model_load(&again, first.data(), static_cast<std::int64_t>(first.size()));
  check(st == ELLIPSA_OK, "a saved model does not load", ellipsa_last_error());
  const std::string second = save(again);
  ellipsa_model_destroy(again);
  check(second == first, "load(save(m)) saves different bytes");
  return first;
}

}  // namespace fuzz
