// CSV writer: quoting, options, write errors, and writer -> reader exactness.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "atomic_output.hpp"
#include "csv_reader.hpp"
#include "csv_writer.hpp"

using namespace ellipsa::cli;

namespace {

// Runs `body` with a writer on a temporary stream and returns what it wrote.
template <class Body>
std::string written(CsvWriteOptions options, Body body) {
  std::FILE* f = std::tmpfile();
  {
    CsvWriter writer(f, options);
    body(writer);
    writer.flush();
  }
  std::string out;
  std::rewind(f);
  char block[4096];
  for (std::size_t n; (n = std::fread(block, 1, sizeof block, f)) > 0;) out.append(block, n);
  std::fclose(f);
  return out;
}

std::uint64_t bits(double v) {
  std::uint64_t b;
  std::memcpy(&b, &v, sizeof b);
  return b;
}

}  // namespace

TEST(CsvWriter, QuotesOnlyWhenNeeded) {
  const std::string out = written({}, [](CsvWriter& w) {
    w.header(std::vector<std::string>{"plain", "with,comma", "say \"hi\""});
    w.text("a b").text("line\nbreak").text("cr\rhere").end_row();
    w.text("").end_row();  // one empty field: must not become a blank line
  });
  EXPECT_EQ(out, "plain,\"with,comma\",\"say \"\"hi\"\"\"\na b,\"line\nbreak\",\"cr\rhere\"\n\"\"\n");
}

TEST(CsvWriter, OptionsAndSpecialValues) {
  CsvWriteOptions options;
  options.separator = ';';
  options.decimal = ',';
  options.crlf = true;
  options.missing = "";
  const std::string out = written(options, [](CsvWriter& w) {
    w.number(1.5).number(std::numeric_limits<double>::quiet_NaN()).number(-std::numeric_limits<double>::infinity());
    w.integer(-42).text("1,5").raw("x;y").end_row();
  });
  EXPECT_EQ(out, "1,5;;-inf;-42;1,5;x;y\r\n");
  // Default options: shortest round trip, "NA" for a missing value.
  const std::string plain =
      written({}, [](CsvWriter& w) { w.number(0.1).number(-0.0).number(1e300).number(std::nan("")).end_row(); });
  EXPECT_EQ(plain, "0.1,-0,1e+300,NA\n");
  CsvWriteOptions bad;
  bad.decimal = ',';
  EXPECT_THROW(CsvWriter(stdout, bad), std::invalid_argument);
}

TEST(CsvWriter, WriteErrorIsReported) {
  std::FILE* full = std::fopen("/dev/full", "wb");
  if (full == nullptr) GTEST_SKIP() << "/dev/full not available";
  {
    CsvWriter writer(full);
    writer.text("x").end_row();
    EXPECT_THROW(writer.flush(), OutputError);
  }
  std::fclose(full);
}

// Every double that is not NaN must come back with the same bits, in both
// decimal dialects: random bit patterns (all exponents, subnormals), and the edges.
TEST(CsvWriter, RoundTripIsExact) {
  std::mt19937_64 rng(7);
  std::vector<double> values = {0.0,
                                -0.0,
                                std::numeric_limits<double>::denorm_min(),
                                -std::numeric_limits<double>::denorm_min(),
                                std::numeric_limits<double>::min(),
                                std::numeric_limits<double>::max(),
                                -std::numeric_limits<double>::max(),
                                std::numeric_limits<double>::infinity(),
                                -std::numeric_limits<double>::infinity(),
                                std::numeric_limits<double>::epsilon(),
                                0.1,
                                1.0 / 3.0,
                                9007199254740993.0,
                                std::nextafter(std::numeric_limits<double>::min(), 0.0),
                                1e23,
                                5e-324};
  while (values.size() < 30000) {
    std::uint64_t b = rng();
    if (values.size() % 4 == 0) b &= 0x800FFFFFFFFFFFFFull;  // subnormal
    double v;
    std::memcpy(&v, &b, sizeof v);
    if (!std::isnan(v)) values.push_back(v);
  }
  const std::size_t p = 3;
  values.resize(values.size() / p * p);
  for (char decimal : {'.', ','}) {
    CsvWriteOptions wo;
    wo.separator = decimal == ',' ? ';' : ',';
    wo.decimal = decimal;
    const std::string text = written(wo, [&](CsvWriter& w) {
      w.header(std::vector<std::string>{"a", "b", "c"});
      for (std::size_t i = 0; i < values.size(); ++i) {
        w.number(values[i]);
        if (i % p == p - 1) w.end_row();
      }
    });
    CsvOptions ro;
    ro.decimal = decimal;
    CsvReader reader(CsvSource::from_memory(text, "rt.csv"), ro);
    ASSERT_EQ(reader.selected().size(), p);
    CsvChunk chunk;
    std::size_t k = 0;
    while (reader.next_chunk(chunk, 777))
      for (std::size_t i = 0; i < chunk.rows() * p; ++i, ++k)
        ASSERT_EQ(bits(chunk.data()[i]), bits(values[k])) << values[k] << " decimal " << decimal;
    EXPECT_EQ(k, values.size());
  }
}

// Text fields with every special character come back unchanged.
TEST(CsvWriter, TextRoundTrip) {
  std::mt19937 rng(3);
  const std::string alphabet = "ab,;\t\"\r\n x";
  std::vector<std::string> cells;
  for (int i = 0; i < 400; ++i) {
    std::string s;
    for (std::size_t n = rng() % 8; n > 0; --n) s += alphabet[rng() % alphabet.size()];
    cells.push_back(s);
  }
  for (char sep : {',', ';', '\t'}) {
    CsvWriteOptions wo;
    wo.separator = sep;
    const std::string text = written(wo, [&](CsvWriter& w) {
      w.header(std::vector<std::string>{"t", "n"});
      for (std::size_t i = 0; i < cells.size(); ++i) w.text(cells[i]).integer(static_cast<std::int64_t>(i)).end_row();
    });
    CsvOptions ro;
    ro.separator = sep;
    ro.keep_fields = true;
    ro.columns = {"n"};
    CsvReader reader(CsvSource::from_memory(text, "t.csv"), ro);
    CsvChunk chunk;
    std::size_t k = 0;
    while (reader.next_chunk(chunk, 50))
      for (std::size_t r = 0; r < chunk.rows(); ++r, ++k) {
        EXPECT_EQ(chunk.field(r, 0), cells[k]);
        EXPECT_EQ(chunk.value(r, 0), static_cast<double>(k));
      }
    EXPECT_EQ(k, cells.size());
  }
}
