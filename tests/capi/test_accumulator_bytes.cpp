// Accumulator state as bytes and back: the round trip is exact (same bytes,
// same later merges, same model bits), and bytes that were truncated, changed,
// written by a newer version or describe an impossible state are refused with
// ELLIPSA_ERR_FORMAT and a message, never a crash.
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <cstring>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {
void add(ellipsa_accumulator* a, const std::vector<double>& x, int64_t first, int64_t rows, int64_t p) {
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data() + first * p, rows, p);
  ASSERT_EQ(ellipsa_accumulator_add(a, &v), ELLIPSA_OK) << ellipsa_last_error();
}
std::string bytes_of(const ellipsa_accumulator* a) {
  char* b = nullptr;
  int64_t n = 0;
  EXPECT_EQ(ellipsa_accumulator_save(&b, &n, a), ELLIPSA_OK) << ellipsa_last_error();
  std::string s(b, static_cast<size_t>(n));
  ellipsa_text_free(b);
  return s;
}
ellipsa_status load(const std::string& s, Acc* out) {
  ellipsa_accumulator* a = nullptr;
  const ellipsa_status st = ellipsa_accumulator_load(&a, s.data(), static_cast<int64_t>(s.size()));
  out->reset(a);
  return st;
}
std::string model_text(const ellipsa_accumulator* a, ellipsa_method method) {
  auto o = options(method);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_from_accumulator(&m, a, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model model(m);
  return save(model.get());
}

// The frame as the header documents it: FNV-1a 64 over all bytes but the last
// 8, stored little-endian in those 8 (recomputed here to forge bytes that pass
// the checksum and must fail a later check).
uint64_t fnv1a64(const std::string& s, size_t n) {
  uint64_t h = 14695981039346656037ull;
  for (size_t i = 0; i < n; ++i) {
    h ^= static_cast<unsigned char>(s[i]);
    h *= 1099511628211ull;
  }
  return h;
}
void put_u64(std::string& s, size_t at, uint64_t v) {
  for (int i = 0; i < 8; ++i) s[at + static_cast<size_t>(i)] = static_cast<char>((v >> (8 * i)) & 0xffu);
}
void reseal(std::string& s) { put_u64(s, s.size() - 8, fnv1a64(s, s.size() - 8)); }

const int64_t kP = 3;
std::string sample_bytes() {
  const auto x = correlated_rows(500, kP, 7, 1e6);
  auto a = make_accumulator(kP);
  add(a.get(), x, 0, 500, kP);
  return bytes_of(a.get());
}
ellipsa_status load_status(const std::string& s, std::string* message) {
  Acc a;
  const ellipsa_status st = load(s, &a);
  *message = ellipsa_last_error();
  if (st != ELLIPSA_OK) EXPECT_EQ(a.get(), nullptr);
  return st;
}

}  // namespace

// Exactness: the state is copied bit for bit (doubles as IEEE bits), so the
// model of a loaded accumulator and of the original are the same bytes.
// Reference: the single-process accumulator itself (no tolerance).
TEST(AccumulatorBytes, RoundTripIsExact) {
  const int64_t n = 3000, p = 5;
  const auto x = correlated_rows(n, p, 11, 1e9);  // offset 1e9: the shift matters
  auto a = make_accumulator(p);
  add(a.get(), x, 0, 1234, p);
  const std::string b1 = bytes_of(a.get());
  // Documented size 8 (p (p + 1) / 2 + 5 p + 13).
  EXPECT_EQ(static_cast<int64_t>(b1.size()), 8 * (p * (p + 1) / 2 + 5 * p + 13));
  EXPECT_EQ(b1.compare(0, 8, "ELLACCUM"), 0);
  Acc loaded;
  ASSERT_EQ(load(b1, &loaded), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(bytes_of(loaded.get()), b1);  // save(load(b)) == b
  // The same later add on both gives the same bytes and the same model text.
  add(a.get(), x, 1234, n - 1234, p);
  add(loaded.get(), x, 1234, n - 1234, p);
  EXPECT_EQ(bytes_of(loaded.get()), bytes_of(a.get()));
  for (ellipsa_method m : {ELLIPSA_METHOD_CLASSICAL, ELLIPSA_METHOD_LEDOIT_WOLF, ELLIPSA_METHOD_OAS})
    EXPECT_EQ(model_text(loaded.get(), m), model_text(a.get(), m)) << "method " << m;
}

// A merge tree carried out through bytes (as processes would) equals the same
// tree carried out in memory, bit for bit. Reference: the in-memory merges.
TEST(AccumulatorBytes, MergeThroughBytesEqualsMergeInMemory) {
  const int64_t p = 4;
  const auto x = correlated_rows(4000, p, 23, -3e7);
  std::vector<Acc> mem, wire;
  for (int k = 0; k < 3; ++k) {
    mem.push_back(make_accumulator(p));
    add(mem.back().get(), x, 1000 * k + k * k, 1000 + k, p);  // uneven, disjoint pieces
    Acc w;
    ASSERT_EQ(load(bytes_of(mem.back().get()), &w), ELLIPSA_OK);
    wire.push_back(std::move(w));
  }
  // Tree ((0 <- 1) <- 2) in both.
  ASSERT_EQ(ellipsa_accumulator_merge(mem[0].get(), mem[1].get()), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_accumulator_merge(mem[0].get(), mem[2].get()), ELLIPSA_OK);
  Acc w01;
  ASSERT_EQ(ellipsa_accumulator_merge(wire[0].get(), wire[1].get()), ELLIPSA_OK);
  ASSERT_EQ(load(bytes_of(wire[0].get()), &w01), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_accumulator_merge(w01.get(), wire[2].get()), ELLIPSA_OK);
  EXPECT_EQ(bytes_of(w01.get()), bytes_of(mem[0].get()));
  EXPECT_EQ(model_text(w01.get(), ELLIPSA_METHOD_LEDOIT_WOLF), model_text(mem[0].get(), ELLIPSA_METHOD_LEDOIT_WOLF));
}

// An empty accumulator and one with skipped rows only survive the trip with
// their counts. Reference: what was added (counts are exact integers).
TEST(AccumulatorBytes, EmptyAndSkippedOnly) {
  auto a = make_accumulator(2);
  const double rows[] = {NAN, 1.0, 2.0, NAN};
  const ellipsa_matrix v = ellipsa_matrix_row_major(rows, 2, 2);
  ASSERT_EQ(ellipsa_accumulator_add(a.get(), &v), ELLIPSA_OK);
  Acc b;
  ASSERT_EQ(load(bytes_of(a.get()), &b), ELLIPSA_OK) << ellipsa_last_error();
  int64_t added = -1, skipped = -1;
  ASSERT_EQ(ellipsa_accumulator_rows(&added, &skipped, b.get()), ELLIPSA_OK);
  EXPECT_EQ(added, 0);
  EXPECT_EQ(skipped, 2);
  EXPECT_EQ(bytes_of(b.get()), bytes_of(a.get()));
}

TEST(AccumulatorBytes, NullAndLengthArguments) {
  auto a = make_accumulator(2);
  char* b = nullptr;
  int64_t n = 0;
  EXPECT_EQ(ellipsa_accumulator_save(nullptr, &n, a.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_save(&b, nullptr, a.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_save(&b, &n, nullptr), ELLIPSA_ERR_NULL);
  ellipsa_accumulator* out = reinterpret_cast<ellipsa_accumulator*>(&n);  // must be reset to NULL
  EXPECT_EQ(ellipsa_accumulator_load(&out, nullptr, 10), ELLIPSA_ERR_NULL);
  EXPECT_EQ(out, nullptr);
  EXPECT_EQ(ellipsa_accumulator_load(nullptr, "x", 1), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_accumulator_load(&out, "x", 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_accumulator_load(&out, "x", -5), ELLIPSA_ERR_ARGUMENT);
  ellipsa_text_free(nullptr);  // documented no-op
}

TEST(AccumulatorBytes, TruncatedBytesAreRefused) {
  const std::string good = sample_bytes();
  std::string msg;
  for (size_t keep : {size_t{0} + 1, size_t{7}, size_t{8}, size_t{31}, size_t{32}, good.size() / 2, good.size() - 1}) {
    EXPECT_EQ(load_status(good.substr(0, keep), &msg), ELLIPSA_ERR_FORMAT) << keep;
    EXPECT_NE(msg.find("ellipsa_accumulator_load"), std::string::npos) << msg;
  }
  EXPECT_EQ(load_status(good.substr(0, good.size() - 1), &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(msg.find("truncated"), std::string::npos) << msg;
  EXPECT_EQ(load_status(good + "x", &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(msg.find("trailing"), std::string::npos) << msg;
}

// Any single changed byte is refused (by the magic, version, length or
// checksum check): every position of the sample is flipped in turn.
TEST(AccumulatorBytes, EveryChangedByteIsRefused) {
  const std::string good = sample_bytes();
  std::string msg;
  for (size_t i = 0; i < good.size(); ++i) {
    std::string bad = good;
    bad[i] = static_cast<char>(bad[i] ^ 0x10);
    EXPECT_EQ(load_status(bad, &msg), ELLIPSA_ERR_FORMAT) << "byte " << i;
  }
  std::string bad = good;
  bad[100] = static_cast<char>(bad[100] ^ 1);
  EXPECT_EQ(load_status(bad, &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(msg.find("checksum"), std::string::npos) << msg;
  EXPECT_EQ(load_status(std::string(good.size(), 'E'), &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(msg.find("magic"), std::string::npos) << msg;
}

TEST(AccumulatorBytes, NewerVersionIsRefused) {
  std::string b = sample_bytes();
  b[8] = 2;  // version field (u32 at offset 8)
  reseal(b);
  std::string msg;
  EXPECT_EQ(load_status(b, &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(msg.find("newer"), std::string::npos) << msg;
  b[8] = 0;
  reseal(b);
  EXPECT_EQ(load_status(b, &msg), ELLIPSA_ERR_FORMAT);
}

// Bytes with a valid frame and checksum but an impossible payload: forged here
// by editing a field and resealing. Offsets from the documented layout:
// header 24 bytes, then p (24), rows (32), direct rows (40), skipped (48),
// shifted (56), reserved (60), weight (64), shift (72...).
TEST(AccumulatorBytes, ImpossibleStatesAreRefused) {
  const std::string good = sample_bytes();
  std::string msg;
  auto with_u64 = [&](size_t at, uint64_t v) {
    std::string b = good;
    put_u64(b, at, v);
    reseal(b);
    return b;
  };
  EXPECT_EQ(load_status(with_u64(24, 4), &msg), ELLIPSA_ERR_FORMAT);  // p that does not fit the length
  EXPECT_NE(msg.find("p = 4"), std::string::npos) << msg;
  EXPECT_EQ(load_status(with_u64(24, 0), &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_EQ(load_status(with_u64(24, uint64_t{1} << 62), &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_EQ(load_status(with_u64(32, 499), &msg), ELLIPSA_ERR_FORMAT);                        // rows != weight
  EXPECT_EQ(load_status(with_u64(40, 501), &msg), ELLIPSA_ERR_FORMAT);                        // direct rows > rows
  EXPECT_EQ(load_status(with_u64(48, static_cast<uint64_t>(-1)), &msg), ELLIPSA_ERR_FORMAT);  // skipped < 0
  EXPECT_EQ(load_status(with_u64(56, 0), &msg), ELLIPSA_ERR_FORMAT);                          // rows but no shift
  EXPECT_NE(msg.find("shift"), std::string::npos) << msg;
  EXPECT_EQ(load_status(with_u64(56, 2), &msg), ELLIPSA_ERR_FORMAT);                        // shifted flag 2
  EXPECT_EQ(load_status(with_u64(56, 1 | (uint64_t{1} << 32)), &msg), ELLIPSA_ERR_FORMAT);  // reserved 1
  EXPECT_EQ(load_status(with_u64(72, std::bit_cast<uint64_t>(std::numeric_limits<double>::quiet_NaN())), &msg),
            ELLIPSA_ERR_FORMAT);
  EXPECT_NE(msg.find("finite"), std::string::npos) << msg;
  EXPECT_EQ(load_status(with_u64(72, std::bit_cast<uint64_t>(std::numeric_limits<double>::infinity())), &msg),
            ELLIPSA_ERR_FORMAT);
  // First cross-product (the first diagonal entry) made negative.
  const size_t cross = 72 + 2 * 8 * kP;
  EXPECT_EQ(load_status(with_u64(cross, std::bit_cast<uint64_t>(-1.0)), &msg), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(msg.find("negative"), std::string::npos) << msg;
  // Sanity of the forging: the unedited bytes, resealed, still load.
  std::string same = good;
  reseal(same);
  EXPECT_EQ(load_status(same, &msg), ELLIPSA_OK) << msg;
}
