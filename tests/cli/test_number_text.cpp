// Numbers to text and back, against the C++ standard library as reference.
// Writing: the significant-digit fast path must give, byte for byte, the text
// of std::to_chars(general, digits), which the standard defines as printf
// "%.*g" (reference: libstdc++ of the same build, cross-checked here against
// glibc's snprintf). Reading: the plain-decimal shortcut must give the same
// double, bit for bit, as std::from_chars.
#include <gtest/gtest.h>

#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>
#include <random>
#include <string>

#include "number_format.hpp"
#include "number_parse.hpp"

using ellipsa::cli::format_shortest;
using ellipsa::cli::format_significant;
using ellipsa::cli::kNumberTextMax;

namespace {

std::string ours(double v, int digits) {
  char buf[kNumberTextMax];
  return std::string(buf, format_significant(buf, v, digits));
}

std::string standard(double v, int digits) {
  char buf[64];
  const auto r = std::to_chars(buf, buf + sizeof buf, v, std::chars_format::general, digits);
  return std::string(buf, r.ptr);
}

std::string c_printf(double v, int digits) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*g", digits, v);
  return buf;
}

}  // namespace

TEST(NumberFormat, HandPickedValues) {
  // Values worked by hand from the "%g" rules (C standard 7.21.6.1).
  EXPECT_EQ(ours(0.25127978858090805, 10), "0.2512797886");
  EXPECT_EQ(ours(12.527861997883603, 10), "12.527862");
  EXPECT_EQ(ours(1291.0, 10), "1291");
  EXPECT_EQ(ours(1e-5, 10), "1e-05");
  EXPECT_EQ(ours(1.5e-4, 10), "0.00015");
  EXPECT_EQ(ours(-123456789012.0, 10), "-1.23456789e+11");
  EXPECT_EQ(ours(9.9999999996, 10), "10");
  EXPECT_EQ(ours(0.0, 10), "0");
  EXPECT_EQ(ours(-0.0, 10), "-0");
  EXPECT_EQ(ours(std::numeric_limits<double>::infinity(), 10), "inf");
  EXPECT_EQ(ours(-std::numeric_limits<double>::infinity(), 10), "-inf");
  EXPECT_EQ(ours(1e300, 10), "1e+300");
  EXPECT_EQ(ours(2.5, 1), "2");  // exact tie: round half to even
  EXPECT_EQ(ours(3.5, 1), "4");
  EXPECT_EQ(ours(0.125, 2), "0.12");
}

TEST(NumberFormat, AgreesWithStandardLibraryOnRandomDoubles) {
  std::mt19937_64 rng(20261202);
  std::uniform_int_distribution<int> decade(-320, 308);
  std::uniform_real_distribution<double> mantissa(1.0, 10.0);
  std::uniform_int_distribution<std::uint64_t> bits;
  long checked = 0;
  for (int digits = 1; digits <= 17; ++digits) {
    for (int i = 0; i < 40000; ++i) {
      double v;
      switch (i % 4) {
        case 0: v = mantissa(rng) * std::pow(10.0, decade(rng)); break;       // every magnitude
        case 1: v = mantissa(rng) * std::pow(10.0, decade(rng) % 12); break;  // the common range
        case 2: {                                                             // any bit pattern
          std::uint64_t b = bits(rng);
          std::memcpy(&v, &b, sizeof v);
          if (std::isnan(v)) v = 1.0;
          break;
        }
        default: v = std::round(mantissa(rng) * 1e4) / 8.0; break;  // dyadic: exact ties
      }
      if (i % 3 == 0) v = -v;
      ASSERT_EQ(ours(v, digits), standard(v, digits)) << "digits " << digits << " value " << c_printf(v, 17);
      ++checked;
    }
  }
  EXPECT_EQ(checked, 17L * 40000);
}

TEST(NumberFormat, AgreesAtPowersOfTenAndRoundingEdges) {
  for (int digits = 1; digits <= 17; ++digits)
    for (int e = -310; e <= 308; ++e) {
      const double p = std::pow(10.0, e);
      for (double v :
           {p, std::nextafter(p, 0.0), std::nextafter(p, INFINITY), 9.5 * p, 0.95 * p, 5.0 * p, 9.9999999999999 * p})
        ASSERT_EQ(ours(v, digits), standard(v, digits)) << "digits " << digits << " value " << c_printf(v, 17);
    }
  for (double v : {std::numeric_limits<double>::denorm_min(), std::numeric_limits<double>::min(),
                   std::numeric_limits<double>::max(), std::numeric_limits<double>::epsilon()})
    for (int digits = 1; digits <= 17; ++digits) ASSERT_EQ(ours(v, digits), standard(v, digits));
}

TEST(NumberFormat, StandardLibraryMatchesPrintf) {
  // The reference itself against glibc, so a defect in one would show.
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> u(-50.0, 50.0);
  for (int i = 0; i < 20000; ++i) {
    const double v = std::pow(10.0, u(rng)) * (i % 2 ? -1 : 1);
    const int digits = 1 + i % 17;
    ASSERT_EQ(standard(v, digits), c_printf(v, digits));
  }
}

TEST(NumberFormat, ShortestFormReadsBackExactly) {
  std::mt19937_64 rng(11);
  std::uniform_int_distribution<std::uint64_t> bits;
  for (int i = 0; i < 100000; ++i) {
    double v;
    std::uint64_t b = bits(rng);
    std::memcpy(&v, &b, sizeof v);
    if (!std::isfinite(v)) continue;
    char buf[kNumberTextMax];
    const std::size_t n = format_shortest(buf, v);
    double back = 0.0;
    std::from_chars(buf, buf + n, back);
    ASSERT_EQ(std::memcmp(&back, &v, sizeof v), 0) << std::string(buf, n);
  }
}

TEST(NumberFormat, DigitsOutsideTheRangeAreClamped) {
  EXPECT_EQ(ours(3.14159, 0), standard(3.14159, 1));
  EXPECT_EQ(ours(3.14159, 40), standard(3.14159, 17));
}

namespace {

// The reader's rule without its shortcut: std::from_chars on the text.
bool reference_read(const std::string& text, double& out) {
  const char* end = text.data() + text.size();
  const auto r = std::from_chars(text.data(), end, out, std::chars_format::general);
  return r.ec == std::errc() && r.ptr == end;
}

}  // namespace

TEST(NumberParse, PlainDecimalsMatchFromCharsBitForBit) {
  std::mt19937_64 rng(20261202);
  std::uniform_int_distribution<int> length(1, 19);
  std::uniform_int_distribution<int> digit(0, 9);
  long compared = 0;
  for (int i = 0; i < 400000; ++i) {
    std::string text = (i % 3 == 0) ? "-" : "";
    const int integer_digits = length(rng);
    for (int k = 0; k < integer_digits; ++k) text += static_cast<char>('0' + digit(rng));
    if (i % 5 != 0) {
      text += '.';
      const int fraction_digits = length(rng) % 17;  // includes "1." (no digits)
      for (int k = 0; k < fraction_digits; ++k) text += static_cast<char>('0' + digit(rng));
    }
    double expected = 0.0, got = 0.0;
    ASSERT_TRUE(reference_read(text, expected)) << text;
    ASSERT_EQ(ellipsa::cli::parse_cell(text, '.', got), ellipsa::cli::CellValue::number) << text;
    ASSERT_EQ(std::memcmp(&expected, &got, sizeof got), 0) << text;
    ++compared;
  }
  EXPECT_EQ(compared, 400000);
}

TEST(NumberParse, HardCasesMatchFromChars) {
  // Halfway and near-halfway decimals (classic hard cases for readers), the
  // largest 15-digit mantissas, signed zeros, and forms the shortcut leaves
  // to std::from_chars (exponents, ".5", "5.", 16+ digits).
  for (const std::string text : {"0.1",
                                 "0.3",
                                 "9007199254740993",
                                 "900719925474099.3",
                                 "999999999999999",
                                 "0.999999999999999",
                                 "-0",
                                 "-0.0",
                                 "0",
                                 "00012.50",
                                 "1.7976931348623157",
                                 "2.2250738585072014",
                                 "123456789012345.6",
                                 "1e5",
                                 "1.5e-300",
                                 ".5",
                                 "5.",
                                 "-.5",
                                 "0.000000000000000000001",
                                 "4.9406564584124654e-324",
                                 "8.988465674311579e+307",
                                 "1234567890123456789",
                                 "3.14159265358979323846"}) {
    double expected = 0.0, got = 0.0;
    ASSERT_TRUE(reference_read(text, expected)) << text;
    ASSERT_EQ(ellipsa::cli::parse_cell(text, '.', got), ellipsa::cli::CellValue::number) << text;
    EXPECT_EQ(std::memcmp(&expected, &got, sizeof got), 0) << text;
  }
  double v = 7.0;
  for (const char* bad : {"1.2.3", "1-2", "--1", "1,5", "0x10", "1.5x"})
    EXPECT_EQ(ellipsa::cli::parse_cell(bad, '.', v), ellipsa::cli::CellValue::invalid) << bad;
  EXPECT_EQ(v, 7.0);
}
