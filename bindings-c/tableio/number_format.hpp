// Decimal text of computed numbers for the CSV writer.
//
// Two forms: the shortest text that reads back to the same double (lossless,
// std::to_chars), and a fixed number of significant digits, correctly rounded
// and byte-for-byte the text of std::to_chars(..., chars_format::general, digits)
// (that is, printf "%.*g"). The second form has a fast path: scaling by an exact
// power of ten and rounding, used only when that rounding is provably the
// correctly rounded one; every other case goes to std::to_chars.
#pragma once

#include <cstddef>

namespace ellipsa::cli {

/// Size of the buffer both functions need: the longest text (e.g.
/// -2.2250738585072014e-308) plus scratch room for fixed-length copies.
inline constexpr std::size_t kNumberTextMax = 48;

/// Shortest round-trip text of `value` into out[0, kNumberTextMax); returns its length.
/// +-inf gives "inf"/"-inf", NaN "nan" (the writer prints its missing marker instead).
std::size_t format_shortest(char* out, double value) noexcept;

/// `digits` significant digits (1..17) of `value`, as printf "%.*g" writes them,
/// into out[0, kNumberTextMax) (bytes past the text may be overwritten); returns its
/// length. Digits outside 1..17 are clamped.
std::size_t format_significant(char* out, double value, int digits) noexcept;

}  // namespace ellipsa::cli
