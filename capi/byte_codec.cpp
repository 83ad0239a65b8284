// The binary frame of byte_codec.hpp.
#include "byte_codec.hpp"

#include <bit>
#include <cmath>
#include <cstring>

#include "core/error.hpp"

namespace ellipsa::capi {

std::uint64_t fnv1a64(const unsigned char* data, std::size_t size) {
  std::uint64_t h = 14695981039346656037ull;  // FNV-1a 64 offset basis
  for (std::size_t i = 0; i < size; ++i) {
    h ^= data[i];
    h *= 1099511628211ull;  // FNV 64 prime
  }
  return h;
}

namespace {

void put_le(std::string& out, std::uint64_t v, int bytes) {
  for (int i = 0; i < bytes; ++i) out.push_back(static_cast<char>((v >> (8 * i)) & 0xffu));
}

std::uint64_t get_le(const unsigned char* p, int bytes) {
  std::uint64_t v = 0;
  for (int i = 0; i < bytes; ++i) v |= static_cast<std::uint64_t>(p[i]) << (8 * i);
  return v;
}

}  // namespace

ByteWriter::ByteWriter(const char* magic, std::uint32_t version, std::size_t payload) {
  out_.reserve(kBytesHeader + payload + kBytesChecksum);
  out_.append(magic, 8);
  u32(version);
  u32(0);
  u64(0);  // length, filled in by finish()
}

void ByteWriter::u32(std::uint32_t v) { put_le(out_, v, 4); }
void ByteWriter::u64(std::uint64_t v) { put_le(out_, v, 8); }
void ByteWriter::i64(std::int64_t v) { put_le(out_, static_cast<std::uint64_t>(v), 8); }
void ByteWriter::f64(double v) { put_le(out_, std::bit_cast<std::uint64_t>(v), 8); }
void ByteWriter::vector(const Eigen::VectorXd& v) {
  for (Eigen::Index i = 0; i < v.size(); ++i) f64(v(i));
}

std::string ByteWriter::finish() {
  const std::uint64_t total = out_.size() + kBytesChecksum;
  for (int i = 0; i < 8; ++i) out_[16 + static_cast<std::size_t>(i)] = static_cast<char>((total >> (8 * i)) & 0xffu);
  u64(fnv1a64(reinterpret_cast<const unsigned char*>(out_.data()), out_.size()));
  return std::move(out_);
}

ByteReader::ByteReader(const char* data, std::int64_t length, const char* magic, std::uint32_t max_version,
                       const char* what)
    : data_(reinterpret_cast<const unsigned char*>(data)), what_(what) {
  const auto n = static_cast<std::uint64_t>(length);
  if (n < 8 || std::memcmp(data, magic, 8) != 0)
    fail("they do not start with the magic \"" + std::string(magic, 8) + "\" (not " + what_ + ", or damaged)");
  if (n < kBytesHeader + kBytesChecksum)
    fail("only " + std::to_string(n) + " bytes, fewer than the " + std::to_string(kBytesHeader + kBytesChecksum) +
         " of an empty frame (truncated)");
  version_ = static_cast<std::uint32_t>(get_le(data_ + 8, 4));
  if (version_ == 0 || version_ > max_version)
    fail("format version " + std::to_string(version_) + ", but this library reads versions 1 to " +
         std::to_string(max_version) + (version_ > max_version ? " (written by a newer ellipsa?)" : ""));
  if (get_le(data_ + 12, 4) != 0) fail("the reserved header field is not 0");
  const std::uint64_t total = get_le(data_ + 16, 8);
  if (total != n)
    fail(std::to_string(n) + " bytes given, the header says " + std::to_string(total) +
         (n < total ? " (truncated)" : " (trailing bytes)"));
  const std::uint64_t sum = get_le(data_ + n - kBytesChecksum, 8);
  if (sum != fnv1a64(data_, n - kBytesChecksum)) fail("the checksum does not match (the bytes were changed)");
  pos_ = kBytesHeader;
  end_ = n - kBytesChecksum;
}

void ByteReader::fail(const std::string& message) const {
  throw core::Error(core::ErrorKind::Format, what_ + ": " + message);
}

void ByteReader::need(std::uint64_t n, const char* field) {
  if (end_ - pos_ < n) fail(std::string("the payload ends before ") + field);
}

std::uint64_t ByteReader::u64() {
  const std::uint64_t v = get_le(data_ + pos_, 8);
  pos_ += 8;
  return v;
}

std::uint32_t ByteReader::u32(const char* field) {
  need(4, field);
  const auto v = static_cast<std::uint32_t>(get_le(data_ + pos_, 4));
  pos_ += 4;
  return v;
}

std::int64_t ByteReader::i64(const char* field) {
  need(8, field);
  return static_cast<std::int64_t>(u64());
}

double ByteReader::f64(const char* field) {
  need(8, field);
  const double v = std::bit_cast<double>(u64());
  if (!std::isfinite(v)) fail(std::string(field) + " is not a finite number");
  return v;
}

Eigen::VectorXd ByteReader::vector(Eigen::Index n, const char* field) {
  need(8 * static_cast<std::uint64_t>(n), field);
  Eigen::VectorXd v(n);
  for (Eigen::Index i = 0; i < n; ++i) v(i) = f64(field);
  return v;
}

void ByteReader::expect_end() {
  if (pos_ != end_) fail(std::to_string(end_ - pos_) + " payload bytes left over (a size field is wrong)");
}

}  // namespace ellipsa::capi
