#include "number_parse.hpp"

#include "exact_powers_of_ten.hpp"

#include <array>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <limits>
#include <string>
#include <system_error>

namespace ellipsa::cli {
namespace {

char ascii_lower(char c) noexcept { return (c >= 'A' && c <= 'Z') ? static_cast<char>(c - 'A' + 'a') : c; }

bool equals_ignoring_case(std::string_view a, std::string_view lower) noexcept {
  if (a.size() != lower.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (ascii_lower(a[i]) != lower[i]) return false;
  return true;
}

bool is_digit(char c) noexcept { return c >= '0' && c <= '9'; }

// from_chars reports result_out_of_range without a value for literals outside
// the double range. Decide overflow versus underflow from the decimal exponent
// of the leading significant digit: positive means overflow (+-inf), otherwise
// the value underflowed (+-0). Only reached for syntactically valid literals.
double out_of_range_value(std::string_view s) noexcept {
  bool negative = false;
  std::size_t i = 0;
  if (i < s.size() && s[i] == '-') {
    negative = true;
    ++i;
  }
  std::int64_t leading_exponent = 0;
  bool found_significant = false;
  std::int64_t integer_digits = 0;
  while (i < s.size() && is_digit(s[i])) {
    if (s[i] != '0' || found_significant) {
      found_significant = true;
      ++integer_digits;
    }
    ++i;
  }
  if (found_significant) {
    leading_exponent = integer_digits - 1;
  } else if (i < s.size() && s[i] == '.') {
    ++i;
    std::int64_t zeros = 0;
    while (i < s.size() && s[i] == '0') {
      ++zeros;
      ++i;
    }
    leading_exponent = -(zeros + 1);
  }
  while (i < s.size() && (is_digit(s[i]) || s[i] == '.')) ++i;
  if (i < s.size() && (s[i] == 'e' || s[i] == 'E')) {
    ++i;
    bool exponent_negative = false;
    if (i < s.size() && (s[i] == '+' || s[i] == '-')) {
      exponent_negative = s[i] == '-';
      ++i;
    }
    std::int64_t exponent = 0;
    for (; i < s.size() && is_digit(s[i]); ++i)
      exponent = exponent > 1'000'000'000 ? exponent : exponent * 10 + (s[i] - '0');  // saturate
    leading_exponent += exponent_negative ? -exponent : exponent;
  }
  const double magnitude = leading_exponent > 0 ? std::numeric_limits<double>::infinity() : 0.0;
  return negative ? -magnitude : magnitude;
}

// The common cell, [-]digits[.digits] with at most 15 digits in all, read
// exactly without std::from_chars: the digits form an integer below 10^15 <
// 2^53 and the divisor 10^k (k <= 15) is a double exactly, so the one IEEE
// division is the correctly rounded value of the decimal (Clinger 1990, "How
// to read floating point numbers accurately", the exact fast path). Returns
// false, touching nothing, for any other text; std::from_chars reads that.
bool read_plain_decimal(std::string_view s, double& out) noexcept {
  std::size_t i = 0;
  const std::size_t n = s.size();
  const bool negative = n > 0 && s[0] == '-';
  i += negative ? 1 : 0;
  std::uint64_t digits = 0;
  int count = 0;
  const std::size_t integer_start = i;
  for (; i < n && is_digit(s[i]); ++i, ++count) digits = digits * 10 + static_cast<std::uint64_t>(s[i] - '0');
  if (i == integer_start || count > 15) return false;  // ".5", "-" and long literals: from_chars
  int fraction = 0;
  if (i < n) {
    if (s[i] != '.') return false;
    const std::size_t fraction_start = ++i;
    for (; i < n && is_digit(s[i]); ++i, ++count) digits = digits * 10 + static_cast<std::uint64_t>(s[i] - '0');
    fraction = static_cast<int>(i - fraction_start);
    if (i != n || fraction == 0 || count > 15) return false;  // exponent, "1.", trailing text
  }
  const double magnitude = static_cast<double>(digits) / kExactPow10[fraction];
  out = negative ? -magnitude : magnitude;
  return true;
}

CellValue read_with_point(std::string_view s, double& out) noexcept {
  if (read_plain_decimal(s, out)) return CellValue::number;
  if (s.size() > 1 && s[0] == '+') {
    if (s[1] == '+' || s[1] == '-') return CellValue::invalid;  // "+-1" is not a number
    s.remove_prefix(1);
  }
  double value = 0.0;
  const char* const end = s.data() + s.size();
  const auto [ptr, ec] = std::from_chars(s.data(), end, value, std::chars_format::general);
  if (ptr != end) return CellValue::invalid;
  if (ec == std::errc::result_out_of_range) {
    out = out_of_range_value(s);
    return CellValue::number;
  }
  if (ec != std::errc()) return CellValue::invalid;
  if (std::isnan(value)) {
    out = std::numeric_limits<double>::quiet_NaN();
    return CellValue::missing;
  }
  out = value;
  return CellValue::number;
}

CellValue read_with_comma(std::string_view s, double& out) noexcept {
  // Numbers are short; a longer cell is not a plain number anyway, but it still
  // gets a fair reading through the heap copy.
  std::array<char, 128> small{};
  std::string large;
  char* copy = small.data();
  if (s.size() > small.size()) {
    try {
      large.resize(s.size());
    } catch (...) {
      return CellValue::invalid;
    }
    copy = large.data();
  }
  for (std::size_t i = 0; i < s.size(); ++i) {
    if (s[i] == '.') return CellValue::invalid;
    copy[i] = s[i] == ',' ? '.' : s[i];
  }
  return read_with_point(std::string_view(copy, s.size()), out);
}

}  // namespace

std::string_view trim_blanks(std::string_view text) noexcept {
  std::size_t begin = 0, end = text.size();
  while (begin < end && (text[begin] == ' ' || text[begin] == '\t')) ++begin;
  while (end > begin && (text[end - 1] == ' ' || text[end - 1] == '\t')) --end;
  return text.substr(begin, end - begin);
}

bool is_missing_marker(std::string_view t) noexcept {
  switch (t.size()) {
    case 0: return true;
    case 1: return t[0] == '-' || t[0] == '.' || t[0] == '?';
    case 2: return equals_ignoring_case(t, "na");
    case 3: return equals_ignoring_case(t, "n/a");
    case 4:
      return equals_ignoring_case(t, "#n/a") || equals_ignoring_case(t, "null") || equals_ignoring_case(t, "none");
    default: return false;
  }
}

CellValue parse_cell(std::string_view cell, char decimal, double& out) noexcept {
  const std::string_view s = trim_blanks(cell);
  if (is_missing_marker(s)) {
    out = std::numeric_limits<double>::quiet_NaN();
    return CellValue::missing;
  }
  return decimal == ',' ? read_with_comma(s, out) : read_with_point(s, out);
}

}  // namespace ellipsa::cli
