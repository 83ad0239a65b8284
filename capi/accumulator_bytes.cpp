// An accumulator as bytes and back (byte_codec.hpp frame, magic "ELLACCUM").
// Payload of version 1, for p columns:
//   p, rows, direct rows, skipped (i64) | shifted (u32) | 0 (u32) | weight (f64)
//   | shift (p) | relative mean (p) | cross-products, lower triangle by columns
//   (p (p + 1) / 2) | norm sums: rows (f64), centre (p), first (p), second,
//   third (p), fourth  -- all f64; the norm sums are zeros while rows = 0.
// This is MomentAccumulator::State and NormPowerSums as they are, so a loaded
// accumulator continues bit for bit like the one that was saved.
#include <cstring>
#include <memory>

#include "accumulator.hpp"
#include "boundary.hpp"
#include "byte_codec.hpp"
#include "core/error.hpp"

namespace {

namespace core = ellipsa::core;
using ellipsa::capi::ByteReader;
using ellipsa::capi::ByteWriter;

constexpr char kMagic[] = "ELLACCUM";
constexpr std::uint32_t kVersion = 1;
constexpr int64_t kMaxColumns = 100000;  // as ellipsa_accumulator_create

std::string to_bytes(const ellipsa_accumulator& a) {
  const auto s = a.moments.state();
  const Eigen::Index p = s.shift.size();
  const auto pu = static_cast<std::size_t>(p);
  ByteWriter w(kMagic, kVersion, 8 * (8 + 6 * pu + pu * (pu + 1) / 2));
  w.i64(p);
  w.i64(s.rows);
  w.i64(s.direct_rows);
  w.i64(a.skipped);
  w.u32(s.shifted ? 1u : 0u);
  w.u32(0);
  w.f64(s.weight);
  w.vector(s.shift);
  w.vector(s.relative_mean);
  for (Eigen::Index j = 0; j < p; ++j)
    for (Eigen::Index i = j; i < p; ++i) w.f64(s.lower(i, j));
  const bool has_norms = s.rows > 0;
  const Eigen::VectorXd zero = Eigen::VectorXd::Zero(p);
  w.f64(has_norms ? a.norms.rows : 0.0);
  w.vector(has_norms ? a.norms.centre : zero);
  w.vector(has_norms ? a.norms.first : zero);
  w.f64(has_norms ? a.norms.second : 0.0);
  w.vector(has_norms ? a.norms.third : zero);
  w.f64(has_norms ? a.norms.fourth : 0.0);
  return w.finish();
}

std::unique_ptr<ellipsa_accumulator> from_bytes(const char* bytes, int64_t length) {
  ByteReader r(bytes, length, kMagic, kVersion, "accumulator bytes");
  const int64_t p = r.i64("p");
  if (p < 1 || p > kMaxColumns) r.fail("p = " + std::to_string(p) + " lies outside [1, 100000]");
  const auto pu = static_cast<std::uint64_t>(p);
  // After p: 3 counts, the flag pair, the weight; 2 p; the triangle; 3 + 3 p.
  const std::uint64_t expected = 8 * (5 + 2 * pu + pu * (pu + 1) / 2 + 3 + 3 * pu);
  if (r.remaining() != expected)
    r.fail("the payload after p holds " + std::to_string(r.remaining()) + " bytes, p = " + std::to_string(p) +
           " needs " + std::to_string(expected));
  core::MomentAccumulator::State s;
  s.rows = r.i64("rows");
  s.direct_rows = r.i64("direct rows");
  const int64_t skipped = r.i64("skipped rows");
  if (skipped < 0) r.fail("a negative count of skipped rows");
  const std::uint32_t shifted = r.u32("shifted");
  if (shifted > 1) r.fail("the shifted flag is neither 0 nor 1");
  s.shifted = shifted == 1;
  if (r.u32("reserved") != 0) r.fail("a reserved field is not 0");
  s.weight = r.f64("weight");
  s.shift = r.vector(p, "shift");
  s.relative_mean = r.vector(p, "relative mean");
  s.lower = Eigen::MatrixXd::Zero(p, p);
  for (int64_t j = 0; j < p; ++j)
    for (int64_t i = j; i < p; ++i) s.lower(i, j) = r.f64("cross-products");
  core::NormPowerSums norms;
  norms.rows = r.f64("norm sums rows");
  norms.centre = r.vector(p, "norm sums centre");
  norms.first = r.vector(p, "norm sums first");
  norms.second = r.f64("norm sums second");
  norms.third = r.vector(p, "norm sums third");
  norms.fourth = r.f64("norm sums fourth");
  r.expect_end();
  if (s.weight != static_cast<double>(s.rows))
    r.fail("the weight is not the row count (an accumulator adds rows with weight 1)");
  if (norms.rows != static_cast<double>(s.rows)) r.fail("the norm sums count other rows than the moments");
  if (norms.second < 0.0 || norms.fourth < 0.0) r.fail("a negative sum of even powers");
  auto a = std::make_unique<ellipsa_accumulator>();
  a->moments = core::MomentAccumulator::from_state(s);  // checks counts, flags, diagonal
  if (s.rows > 0) a->norms = std::move(norms);
  a->skipped = skipped;
  return a;
}

}  // namespace

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
extern "C" {

ELLIPSA_API ellipsa_status ellipsa_accumulator_save(char** bytes, int64_t* length,
                                                    const ellipsa_accumulator* accumulator) {
  return guard("ellipsa_accumulator_save", [&] {
    require_not_null(bytes, "bytes");
    require_not_null(length, "length");
    require_not_null(accumulator, "accumulator");
    const std::string s = to_bytes(*accumulator);
    char* buffer = new char[s.size()];
    std::memcpy(buffer, s.data(), s.size());
    *bytes = buffer;
    *length = static_cast<int64_t>(s.size());
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_accumulator_load(ellipsa_accumulator** out, const char* bytes, int64_t length) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_accumulator_load", [&] {
    require_not_null(out, "out");
    require_not_null(bytes, "bytes");
    if (length <= 0) throw Misuse{ELLIPSA_ERR_ARGUMENT, "length must be positive"};
    *out = from_bytes(bytes, length).release();
    return ELLIPSA_OK;
  });
}

}  // extern "C"
