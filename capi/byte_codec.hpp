// The binary form of mergeable statistics (accumulators, mixture E-step
// statistics) that a driver sends between processes. Layout, little-endian
// whatever the machine:
//   magic (8 bytes) | format version (u32) | reserved 0 (u32) | total length (u64)
//   | payload | FNV-1a 64 of every byte before it (u64)
// Doubles travel as their IEEE bits, so a round trip is exact. Reading checks
// the magic, the version, the length and the checksum before the payload, and
// every number the payload reads after (ByteReader); each failure is a
// core::Error(Format) whose message says what is wrong.
#pragma once
#include <Eigen/Core>
#include <cstdint>
#include <string>

namespace ellipsa::capi {

constexpr std::size_t kBytesHeader = 24;  // magic, version, reserved, length
constexpr std::size_t kBytesChecksum = 8;

// FNV-1a, 64 bits (Fowler, Noll & Vo): detects corruption, not tampering.
std::uint64_t fnv1a64(const unsigned char* data, std::size_t size);

class ByteWriter {
 public:
  // magic: exactly 8 characters. `payload` bytes are reserved up front.
  ByteWriter(const char* magic, std::uint32_t version, std::size_t payload);
  void u32(std::uint32_t v);
  void i64(std::int64_t v);
  void f64(double v);
  void vector(const Eigen::VectorXd& v);
  // Fills in the length and appends the checksum; the writer is spent.
  std::string finish();

 private:
  void u64(std::uint64_t v);
  std::string out_;
};

class ByteReader {
 public:
  // Checks the frame: `what` names the kind of bytes in messages ("accumulator
  // bytes"); versions 1..max_version are read.
  ByteReader(const char* data, std::int64_t length, const char* magic, std::uint32_t max_version, const char* what);
  std::uint32_t version() const { return version_; }
  // Payload bytes not yet read.
  std::uint64_t remaining() const { return end_ - pos_; }
  std::uint32_t u32(const char* field);
  std::int64_t i64(const char* field);
  // A finite double (else Format naming the field).
  double f64(const char* field);
  Eigen::VectorXd vector(Eigen::Index n, const char* field);
  // Format unless every payload byte was read.
  void expect_end();
  [[noreturn]] void fail(const std::string& message) const;

 private:
  void need(std::uint64_t n, const char* field);
  std::uint64_t u64();
  const unsigned char* data_;
  std::uint64_t pos_ = 0, end_ = 0;
  std::uint32_t version_ = 0;
  std::string what_;
};

}  // namespace ellipsa::capi
