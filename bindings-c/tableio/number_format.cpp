#include "number_format.hpp"

#include "exact_powers_of_ten.hpp"

#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>

namespace ellipsa::cli {
namespace {

constexpr std::uint64_t kIntPow10[] = {1ULL,
                                       10ULL,
                                       100ULL,
                                       1000ULL,
                                       10000ULL,
                                       100000ULL,
                                       1000000ULL,
                                       10000000ULL,
                                       100000000ULL,
                                       1000000000ULL,
                                       10000000000ULL,
                                       100000000000ULL,
                                       1000000000000ULL,
                                       10000000000000ULL,
                                       100000000000000ULL,
                                       1000000000000000ULL};
// The fast path needs the scaled value below 2^53 with room for its error
// bound to stay well under one half: 15 digits at most.
constexpr int kFastDigits = 15;

std::size_t general_via_to_chars(char* out, double value, int digits) noexcept {
  const auto r = std::to_chars(out, out + kNumberTextMax, value, std::chars_format::general, digits);
  return static_cast<std::size_t>(r.ptr - out);
}

// "00" .. "99": two digits per division halves the dependent divisions.
constexpr char kDigitPairs[] =
    "00010203040506070809101112131415161718192021222324252627282930313233343536373839"
    "40414243444546474849505152535455565758596061626364656667686970717273747576777879"
    "8081828384858687888990919293949596979899";

// The `count` low decimal digits of v, ending just before `end`.
inline void write_digits(char* end, std::uint32_t v, int count) noexcept {
  while (count >= 2) {
    const std::uint32_t pair = v % 100;
    v /= 100;
    count -= 2;
    end -= 2;
    std::memcpy(end, kDigitPairs + 2 * pair, 2);
  }
  if (count == 1) end[-1] = static_cast<char>('0' + v % 10);
}

// Writes sign, the significant digits of n (exactly `digits` of them, trailing
// zeros dropped) and the decimal exponent x in the layout of "%g". Copies are
// of fixed length (16 bytes, past the end of what is kept) so that they compile
// to plain moves rather than calls; kNumberTextMax leaves room for them.
std::size_t emit_general(char* out, bool negative, std::uint64_t n, int digits, int x) noexcept {
  char d[32];
  // Two independent 32-bit chains (the low eight digits and the rest) instead
  // of one 64-bit chain of divisions: n < 10^15.
  if (digits > 8) {
    write_digits(d + digits, static_cast<std::uint32_t>(n % 100000000U), 8);
    write_digits(d + digits - 8, static_cast<std::uint32_t>(n / 100000000U), digits - 8);
  } else {
    write_digits(d + digits, static_cast<std::uint32_t>(n), digits);
  }
  std::memset(d + digits, '0', 16);  // zeros to pad fixed notation from
  int used = digits;
  while (used > 1 && d[used - 1] == '0') --used;
  char* p = out;
  *p = '-';
  p += negative ? 1 : 0;
  if (x < -4 || x >= digits) {  // scientific, exponent of at least two digits
    p[0] = d[0];
    p[1] = '.';
    std::memcpy(p + 2, d + 1, 16);
    p += used > 1 ? used + 1 : 1;
    *p++ = 'e';
    *p++ = x < 0 ? '-' : '+';
    int e = x < 0 ? -x : x;
    if (e >= 100) {
      *p++ = static_cast<char>('0' + e / 100);
      e %= 100;
    }
    std::memcpy(p, kDigitPairs + 2 * e, 2);
    p += 2;
  } else if (x >= 0) {  // fixed, x + 1 integer digits (zero-padded when digits run out)
    std::memcpy(p, d, 16);
    p += x + 1;
    if (used > x + 1) {
      *p = '.';
      std::memcpy(p + 1, d + x + 1, 16);
      p += used - x;
    }
  } else {                         // fixed, 0.000ddd
    std::memcpy(p, "0.00000", 8);  // 8 bytes with the terminator
    p += 1 - x;
    std::memcpy(p, d, 16);
    p += used;
  }
  return static_cast<std::size_t>(p - out);
}

}  // namespace

std::size_t format_shortest(char* out, double value) noexcept {
  const auto r = std::to_chars(out, out + kNumberTextMax, value);
  return static_cast<std::size_t>(r.ptr - out);
}

std::size_t format_significant(char* out, double value, int digits) noexcept {
  if (digits < 1) digits = 1;
  if (digits > 17) digits = 17;
  const double a = std::fabs(value);
  if (digits > kFastDigits || !std::isfinite(a) || a == 0.0) return general_via_to_chars(out, value, digits);
  // Decimal exponent x of a = m 2^E (1 <= m < 2): E log10(2) <= log10(a) <
  // (E + 1) log10(2), so floor(E log10 2) is x or x - 1; the loop corrects it.
  // Subnormals (biased exponent 0) are far outside the fast range.
  std::uint64_t bits = 0;
  std::memcpy(&bits, &a, sizeof bits);
  const int biased = static_cast<int>(bits >> 52);
  if (biased == 0) return general_via_to_chars(out, value, digits);
  // floor(E log10 2) in integers: 78913 / 2^18 approximates log10 2 to 3e-6
  // relative; the shift floors. A miss by one more is caught below as well.
  int x = ((biased - 1023) * 78913) >> 18;
  for (int attempt = 0; attempt < 3; ++attempt) {
    const int k = digits - 1 - x;
    if (k > kMaxExactPow10 || k < -kMaxExactPow10) break;
    // One correctly rounded operation: |s - a 10^k| <= 2^-53 s.
    const double s = k >= 0 ? a * kExactPow10[k] : a / kExactPow10[-k];
    if (s >= kExactPow10[digits]) {  // x was one low
      ++x;
      continue;
    }
    if (s < kExactPow10[digits - 1]) {  // x was one high
      --x;
      continue;
    }
    const auto whole = static_cast<std::uint64_t>(s);        // s < 10^15: exact truncation
    const double fraction = s - static_cast<double>(whole);  // exact
    // Round to nearest only when the exact product cannot lie on the other side
    // of the half-way point (the margin is twice the error bound). Near ties,
    // and exact ties (where "%g" rounds half to even), go to std::to_chars.
    const double margin = kExactPow10[digits] * 0x1p-52;
    if (std::fabs(fraction - 0.5) <= margin) break;
    std::uint64_t n = whole + (fraction > 0.5 ? 1U : 0U);
    if (n == kIntPow10[digits]) {  // rounded up to the next power of ten
      n = kIntPow10[digits - 1];
      ++x;
    }
    if (n < kIntPow10[digits - 1]) break;  // cannot happen by the bounds above; stay safe
    return emit_general(out, value < 0.0, n, digits, x);
  }
  return general_via_to_chars(out, value, digits);
}

}  // namespace ellipsa::cli
