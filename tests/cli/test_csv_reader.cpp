// CSV reader: dialects, missing markers, numbers, errors with exact locations,
// chunk and buffer boundaries, huge fields, stdin.
#include <gtest/gtest.h>
#include <unistd.h>

#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "csv_reader.hpp"
#include "csv_writer.hpp"

using namespace ellipsa::cli;

namespace {

const std::string kData = ELLIPSA_CLI_TEST_DATA;
std::string data_file(const std::string& name) { return kData + "/" + name; }

// Everything a reader delivers, for whole-file comparisons.
struct ReadResult {
  std::vector<std::string> header;
  std::vector<std::string> selected;
  std::vector<double> values;
  std::vector<std::int64_t> lines;
  std::vector<std::string> texts;
  std::vector<std::string> fields;
  char separator = 0;
  std::size_t chunks = 0;
};

ReadResult read_all(CsvReader& reader, std::size_t max_rows = 1000) {
  ReadResult out;
  out.header = reader.header();
  out.separator = reader.separator();
  out.selected = reader.selected_names();
  CsvChunk chunk;
  while (reader.next_chunk(chunk, max_rows)) {
    ++out.chunks;
    EXPECT_LE(chunk.rows(), max_rows);
    EXPECT_EQ(chunk.cols(), out.selected.size());
    out.values.insert(out.values.end(), chunk.data(), chunk.data() + chunk.rows() * chunk.cols());
    for (std::size_t r = 0; r < chunk.rows(); ++r) {
      out.lines.push_back(chunk.line(r));
      out.texts.emplace_back(chunk.row_text(r));
      for (std::size_t c = 0; c < chunk.fields_per_row(); ++c) out.fields.emplace_back(chunk.field(r, c));
    }
  }
  return out;
}

ReadResult read_text(const std::string& text, CsvOptions options = {}, std::size_t max_rows = 1000) {
  options.keep_row_text = options.keep_fields = true;
  CsvReader reader(CsvSource::from_memory(text, "mem.csv"), options);
  return read_all(reader, max_rows);
}

std::string error_of(const std::string& path, CsvOptions options = {}) {
  try {
    CsvReader reader(path, options);
    read_all(reader);
  } catch (const CsvError& e) {
    return e.what();
  }
  return "(no error)";
}

std::string memory_error(const std::string& text, CsvOptions options = {}) {
  try {
    CsvReader reader(CsvSource::from_memory(text, "mem.csv"), options);
    read_all(reader);
  } catch (const CsvError& e) {
    return e.what();
  }
  return "(no error)";
}

// Bitwise equality that also treats NaN as equal to NaN.
bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0 || (std::isnan(a) && std::isnan(b)); }

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

void expect_values(const std::vector<double>& got, const std::vector<double>& want) {
  ASSERT_EQ(got.size(), want.size());
  for (std::size_t i = 0; i < got.size(); ++i)
    EXPECT_TRUE(same_bits(got[i], want[i])) << i << ": " << got[i] << " vs " << want[i];
}

// The shortest text that reads back to v (std::to_chars, the standard
// library's round-trip formatting), or `missing` for NaN.
std::string shortest_text(double v, const std::string& missing) {
  if (std::isnan(v)) return missing;
  char buf[32];
  const auto end = std::to_chars(buf, buf + sizeof buf, v).ptr;
  return std::string(buf, end);
}

}  // namespace

TEST(CsvDialect, CommaWithTextColumnReported) {
  CsvOptions options;
  options.keep_row_text = true;
  CsvReader reader(data_file("comma.csv"), options);
  const ReadResult r = read_all(reader);
  EXPECT_EQ(r.separator, ',');
  EXPECT_EQ(r.header, (std::vector<std::string>{"id", "x", "y"}));
  EXPECT_EQ(r.selected, (std::vector<std::string>{"x", "y"}));
  expect_values(r.values, {1.5, 2, -3, 0.04, kNaN, kNaN});
  EXPECT_EQ(r.lines, (std::vector<std::int64_t>{2, 3, 4}));
  EXPECT_EQ(r.texts, (std::vector<std::string>{"A1,1.5,2", "A2,-3,4e-2", "A3,,NA"}));
  const ColumnInfo& id = reader.columns()[0];
  EXPECT_EQ(id.kind, ColumnKind::text);
  EXPECT_EQ(id.example, "A1");
  EXPECT_EQ(id.example_line, 2);
  EXPECT_EQ(reader.selected(), (std::vector<std::size_t>{1, 2}));
  EXPECT_EQ(reader.rows_delivered(), 3);
}

TEST(CsvDialect, SemicolonDecimalCommaCrlf) {
  CsvOptions options;
  options.decimal = ',';
  options.keep_row_text = true;
  CsvReader reader(data_file("semicolon_decimal_comma_crlf.csv"), options);
  const ReadResult r = read_all(reader);
  EXPECT_EQ(r.separator, ';');
  EXPECT_EQ(r.header, (std::vector<std::string>{"id", "x", "y"}));
  expect_values(r.values, {1.5, 2, -3, 0.04, kNaN, kNaN});
  EXPECT_EQ(r.texts[0], "A1;1,5;2");  // no CR kept
}

TEST(CsvDialect, SemicolonWithoutDecimalCommaHintsAtIt) {
  CsvReader reader(data_file("semicolon_decimal_comma_crlf.csv"));
  const auto& columns = reader.columns();
  EXPECT_EQ(columns[1].kind, ColumnKind::text);
  EXPECT_TRUE(columns[1].decimal_comma_hint);
  EXPECT_EQ(reader.selected_names(), (std::vector<std::string>{"y"}));
}

TEST(CsvDialect, TabWithoutFinalNewline) {
  const ReadResult r = read_text("id\tx\ty\nA1\t1.5\t2\nA2\t-3\t4e-2\nA3\t\tNA");
  EXPECT_EQ(r.separator, '\t');
  expect_values(r.values, {1.5, 2, -3, 0.04, kNaN, kNaN});
  CsvReader reader(data_file("tab_no_final_newline.csv"));
  expect_values(read_all(reader).values, {1.5, 2, -3, 0.04, kNaN, kNaN});
}

TEST(CsvDialect, ByteOrderMarkAndTrailingBlankLines) {
  CsvReader reader(data_file("bom_trailing_blank_lines.csv"));
  const ReadResult r = read_all(reader);
  EXPECT_EQ(r.header, (std::vector<std::string>{"x", "y"}));
  expect_values(r.values, {1, 2, 3, 4});
  EXPECT_EQ(r.lines, (std::vector<std::int64_t>{2, 3}));
}

// A byte order mark behind blanks, or around any name, is not part of the
// name: it is invisible, and the user types "x" (fuzzing found the name
// "\xEF\xBB\xBFx", and a rewritten file then read back "x").
TEST(CsvDialect, ByteOrderMarksAroundNamesAreTrimmedLikeBlanks) {
  const ReadResult r = read_text("  \xEF\xBB\xBFx, \xEF\xBB\xBF y\xEF\xBB\xBF ,z\xEF\xBB\xBFw\n1,2,3\n");
  EXPECT_EQ(r.header, (std::vector<std::string>{"x", "y", "z\xEF\xBB\xBFw"}));  // inside a name it stays
  expect_values(r.values, {1, 2, 3});
}

TEST(CsvDialect, QuotedFieldsSeparatorsQuotesAndNewlines) {
  CsvOptions options;
  options.keep_fields = options.keep_row_text = true;
  CsvReader reader(data_file("quoted.csv"), options);
  const ReadResult r = read_all(reader);
  EXPECT_EQ(r.header, (std::vector<std::string>{"name", "x", "y, quoted"}));
  expect_values(r.values, {1, 2, 3, 4, 5, 6, 7, 8});
  EXPECT_EQ(r.lines, (std::vector<std::int64_t>{2, 3, 4, 6}));  // row 3 spans lines 4-5
  EXPECT_EQ(r.fields[0], "Smith, J.");
  EXPECT_EQ(r.fields[3], "say \"hi\"");
  EXPECT_EQ(r.fields[6], "two\nlines");
  EXPECT_EQ(r.texts[1], "\"say \"\"hi\"\"\",3,4");
  EXPECT_EQ(r.texts[2], "\"two\nlines\",5,6");
}

TEST(CsvDialect, QuotedNumbersAndCrlfInsideQuotes) {
  const ReadResult r = read_text("a,b\r\n\"1.5\",\"x\r\ny\"\r\n\"-2\",\"\"\r\n");
  EXPECT_EQ(r.selected, (std::vector<std::string>{"a"}));
  expect_values(r.values, {1.5, -2});
  EXPECT_EQ(r.fields[1], "x\r\ny");
  EXPECT_EQ(r.lines, (std::vector<std::int64_t>{2, 4}));
}

TEST(CsvDialect, MissingMarkers) {
  CsvReader reader(data_file("missing_markers.csv"));
  const ReadResult r = read_all(reader);
  std::vector<double> want(12, kNaN);
  want[0] = 1;
  want.insert(want.end(), {7, 8, 9});
  expect_values(r.values, want);
}

TEST(CsvDialect, ExplicitSeparatorColumnsAndExclusion) {
  CsvOptions options;
  options.separator = ';';
  options.columns = {"c", "a"};
  ReadResult r = read_text("a;b;c\n1;x;3\n4;y;6\n", options);
  EXPECT_EQ(r.selected, (std::vector<std::string>{"c", "a"}));
  expect_values(r.values, {3, 1, 6, 4});

  CsvOptions exclude;
  exclude.exclude = {"a"};
  r = read_text("a,b,c\n1,2,3\n", exclude);
  EXPECT_EQ(r.selected, (std::vector<std::string>{"b", "c"}));
  // An explicit separator that is not in the header gives one column.
  CsvOptions tab;
  tab.separator = '\t';
  CsvReader single(CsvSource::from_memory("a,b\n1,2\n", "mem.csv"), tab);
  EXPECT_EQ(single.header(), (std::vector<std::string>{"a,b"}));
}

TEST(CsvDialect, HeaderNamesTrimmedAndEmptyColumnReported) {
  CsvReader reader(CsvSource::from_memory(" x , y,\n1,2,\n3,4,\n", "mem.csv"), CsvOptions{});
  const auto& columns = reader.columns();
  EXPECT_EQ(reader.header(), (std::vector<std::string>{"x", "y", ""}));
  EXPECT_EQ(columns[2].kind, ColumnKind::empty);
  EXPECT_EQ(reader.selected_names(), (std::vector<std::string>{"x", "y"}));
}

TEST(CsvDialect, OneColumnBlankLineInsideIsMissing) {
  const ReadResult r = read_text("x\n1\n\n3\n\n\n");
  expect_values(r.values, {1, kNaN, 3});
  EXPECT_EQ(r.lines, (std::vector<std::int64_t>{2, 3, 4}));
}

TEST(CsvDialect, LeadingBlankLinesBeforeHeader) {
  const ReadResult r = read_text("\n\r\nx,y\n1,2\n");
  EXPECT_EQ(r.lines, (std::vector<std::int64_t>{4}));
}

TEST(CsvNumbers, SignsSpacesInfinitiesAndRange) {
  const ReadResult r =
      read_text("v\n +1.5 \n\t-2\ninf\n-inf\n+Infinity\n-0\n1e400\n-1e400\n1e-400\n4.9e-324\n.5\n5.\n");
  expect_values(r.values, {1.5, -2, kInf, -kInf, kInf, -0.0, kInf, -kInf, 0.0, 4.9e-324, 0.5, 5.0});
  EXPECT_TRUE(std::signbit(r.values[5]));
}

TEST(CsvNumbers, NotNumbers) {
  for (const char* cell : {"+-1", "--1", "1e", "0x10", "1,5", "1 2", "abc", "++1", "1..2", "e5"}) {
    const std::string what = memory_error(std::string("v\n1\n") + "\"" + cell + "\"\n", [] {
      CsvOptions o;
      o.detect_rows = 1;
      return o;
    }());
    EXPECT_EQ(what, std::string("mem.csv:3: column 1 (\"v\"): cannot read '") + cell + "' as a number" +
                        (std::string(cell) == "1,5" ? " (decimal comma? choose the decimal-comma option)" : ""))
        << cell;
  }
}

TEST(CsvNumbers, DecimalCommaRefusesPoint) {
  CsvOptions options;
  options.decimal = ',';
  options.detect_rows = 1;
  EXPECT_EQ(memory_error("a;b\n1,5;2\n1.234,5;3\n", options),
            "mem.csv:3: column 1 (\"a\"): cannot read '1.234,5' as a number");
}

TEST(CsvErrors, ExactMessages) {
  EXPECT_EQ(error_of(data_file("ragged.csv")),
            data_file("ragged.csv") + ":3: expected 3 fields as in the header, found 2");
  EXPECT_EQ(error_of(data_file("unterminated_quote.csv")),
            data_file("unterminated_quote.csv") +
                ":3: column 2 (\"y\"): quoted field is not closed before the end of the file");
  EXPECT_EQ(
      error_of(data_file("text_after_quote.csv")),
      data_file("text_after_quote.csv") + ":3: column 2 (\"y\"): unexpected character '5' after the closing quote");
  EXPECT_EQ(error_of(data_file("no_numeric.csv")),
            data_file("no_numeric.csv") +
                ": no numeric columns: column 1 (\"id\") has 'A' on line 2; column 2 (\"name\") has 'alpha' on line 2");
  EXPECT_EQ(error_of(data_file("empty.csv")), data_file("empty.csv") + ": the file is empty (no header line)");
  EXPECT_EQ(error_of(data_file("header_only.csv")),
            data_file("header_only.csv") + ": the file has a header line but no data rows");
  EXPECT_EQ(error_of(data_file("duplicate_names.csv")),
            data_file("duplicate_names.csv") + ":1: column 3 (\"x\"): duplicate column name (also column 1)");
  EXPECT_EQ(error_of(data_file("latin1_header.csv")),
            data_file("latin1_header.csv") +
                ":1: column 2 (\"caf\xe9\"): the column name is not valid UTF-8 (byte 4); save the file as UTF-8");
  EXPECT_EQ(error_of(data_file("blank_line_inside.csv")),
            data_file("blank_line_inside.csv") + ":3: blank line between data rows (expected 2 fields)");
  EXPECT_EQ(error_of(data_file("ambiguous_separator.csv")),
            data_file("ambiguous_separator.csv") +
                ":1: cannot tell the separator: the header has as many ',' as ';'; name it explicitly");
  EXPECT_EQ(error_of(data_file("utf16.csv")),
            data_file("utf16.csv") + ":1: the file is UTF-16 encoded; save it as UTF-8");
  EXPECT_EQ(error_of(data_file("does_not_exist.csv")),
            data_file("does_not_exist.csv") + ": cannot open: No such file or directory");
  EXPECT_EQ(memory_error("x,y\r1,2\r"),
            "mem.csv:1: lines end with CR only (old Mac format); convert the file to LF or CRLF line ends");
  EXPECT_EQ(memory_error("\n\n"), "mem.csv: the file is empty (no header line)");
  EXPECT_EQ(memory_error("\xef\xbb\xbf"), "mem.csv: the file is empty (no header line)");
}

TEST(CsvErrors, LateTextInNumericColumn) {
  CsvOptions options;
  options.detect_rows = 2;
  EXPECT_EQ(error_of(data_file("late_text.csv"), options),
            data_file("late_text.csv") + ":4: column 2 (\"hold_time\"): cannot read 'abc' as a number");
  // Detected from all rows instead, the column is text and is left out.
  CsvReader reader(data_file("late_text.csv"));
  EXPECT_EQ(reader.selected_names(), (std::vector<std::string>{"x"}));
  EXPECT_EQ(reader.columns()[1].example_line, 4);
}

TEST(CsvErrors, FieldsOfTheError) {
  CsvOptions options;
  options.detect_rows = 1;
  try {
    CsvReader reader(CsvSource::from_memory("a,b,c\n1,2,3\n4,5,x\n", "d.csv"), options);
    read_all(reader);
    FAIL() << "no error";
  } catch (const CsvError& e) {
    EXPECT_EQ(e.file(), "d.csv");
    EXPECT_EQ(e.line(), 3);
    EXPECT_EQ(e.column(), 3);
    EXPECT_EQ(e.column_name(), "c");
    EXPECT_EQ(e.message(), "cannot read 'x' as a number");
  }
}

TEST(CsvErrors, RequestedColumnsAndOptions) {
  CsvOptions options;
  options.columns = {"q"};
  EXPECT_EQ(memory_error("x,y\n1,2\n", options), "mem.csv: no column named \"q\" (requested); the header has: x, y");
  options.columns = {"x", "x"};
  EXPECT_EQ(memory_error("x,y\n1,2\n", options), "mem.csv: column \"x\" is requested twice");
  CsvOptions exclude;
  exclude.exclude = {"z"};
  EXPECT_EQ(memory_error("x,y\n1,2\n", exclude), "mem.csv: no column named \"z\" (to exclude); the header has: x, y");
  CsvOptions bad;
  bad.decimal = ',';
  bad.separator = ',';
  EXPECT_THROW(CsvReader(CsvSource::from_memory("", "m"), bad), std::invalid_argument);
  bad = {};
  bad.separator = '|';
  EXPECT_THROW(CsvReader(CsvSource::from_memory("", "m"), bad), std::invalid_argument);
  CsvReader reader(CsvSource::from_memory("x\n1\n", "m"), CsvOptions{});
  CsvChunk chunk;
  EXPECT_THROW(reader.next_chunk(chunk, 0), std::invalid_argument);
  // A control byte in a shown cell is escaped, and a long cell is shortened.
  CsvOptions one;
  one.detect_rows = 1;
  EXPECT_EQ(memory_error("x\n1\n\"a\x01" + std::string(50, 'b') + "\"\n", one),
            "mem.csv:3: column 1 (\"x\"): cannot read 'a\\x01" + std::string(38, 'b') + "...' as a number");
}

// A random file with every feature, read with tiny buffers and chunks, must
// give exactly what the writer put in.
TEST(CsvBoundaries, TinyBuffersAndChunksGiveTheSameRows) {
  std::mt19937_64 rng(20240611);
  for (int trial = 0; trial < 20; ++trial) {
    const bool crlf = trial % 2 == 1;
    const char sep = ",;\t"[trial % 3];
    const std::size_t rows = 1 + rng() % 60, p = 1 + rng() % 4;
    std::string text = crlf ? "\xef\xbb\xbflabel" : "label";
    for (std::size_t c = 0; c < p; ++c) text += sep + std::string("v") + std::to_string(c);
    text += crlf ? "\r\n" : "\n";
    std::vector<double> want;
    std::vector<std::string> labels;
    std::uniform_real_distribution<double> u(-1e6, 1e6);
    for (std::size_t r = 0; r < rows; ++r) {
      std::string label = "L" + std::to_string(r);
      if (rng() % 3 == 0) label += std::string(1, sep) + "\"q\"\nnext";
      labels.push_back(label);
      const bool quote = label.find_first_of(",;\t\"\n") != std::string::npos;
      std::string field = label;
      if (quote) {
        field = "\"";
        for (char ch : label) field += ch == '"' ? std::string("\"\"") : std::string(1, ch);
        field += "\"";
      }
      text += field;
      for (std::size_t c = 0; c < p; ++c) {
        const double v = rng() % 7 == 0 ? kNaN : u(rng);
        want.push_back(v);
        text += sep + shortest_text(v, rng() % 2 ? "" : "NA");
      }
      if (r + 1 < rows || rng() % 2) text += crlf ? "\r\n" : "\n";
    }
    for (std::size_t buffer : {1, 2, 3, 5, 7, 16, 1 << 20}) {
      for (std::size_t max_rows : {1, 3, 1000}) {
        CsvOptions options;
        options.buffer_size = buffer;
        const ReadResult r = read_text(text, options, max_rows);
        ASSERT_EQ(r.separator, sep);
        expect_values(r.values, want);
        ASSERT_EQ(r.fields.size(), rows * (p + 1));
        for (std::size_t i = 0; i < rows; ++i) EXPECT_EQ(r.fields[i * (p + 1)], labels[i]) << buffer << " " << max_rows;
        EXPECT_EQ(r.chunks, (rows + max_rows - 1) / max_rows);
      }
    }
  }
}

TEST(CsvBoundaries, HugeFields) {
  std::string big(3'000'000, 'z');
  for (std::size_t i = 0; i < big.size(); i += 1000) big[i] = '"';
  std::string quoted = "\"";
  for (char c : big) quoted += c == '"' ? std::string("\"\"") : std::string(1, c);
  quoted += "\"";
  const std::string unquoted(2'000'000, 'u');
  const std::string text = "a,b,c\n" + quoted + ",1," + unquoted + "\nx,2,y\n";
  CsvOptions options;
  options.buffer_size = 1024;
  const ReadResult r = read_text(text, options);
  ASSERT_EQ(r.fields.size(), 6u);
  EXPECT_EQ(r.fields[0], big);
  EXPECT_EQ(r.fields[2], unquoted);
  expect_values(r.values, {1, 2});
  EXPECT_EQ(r.lines, (std::vector<std::int64_t>{2, 3}));
}

TEST(CsvSources, Stdin) {
  const std::string text = "x,y\n1,2\n3,4\n";
  // "-" reads file descriptor 0: put a pipe there for the duration.
  int fds[2];
  ASSERT_EQ(::pipe(fds), 0);
  ASSERT_EQ(::write(fds[1], text.data(), text.size()), static_cast<ssize_t>(text.size()));
  ::close(fds[1]);
  const int saved = ::dup(STDIN_FILENO);
  ::dup2(fds[0], STDIN_FILENO);
  ::close(fds[0]);
  ReadResult r;
  std::string name;
  {
    CsvReader from_stdin("-");
    r = read_all(from_stdin);
    name = from_stdin.source_name();
  }
  ::dup2(saved, STDIN_FILENO);
  ::close(saved);
  expect_values(r.values, {1, 2, 3, 4});
  EXPECT_EQ(name, "<stdin>");
}

// A row longer than CsvOptions::max_record_bytes is refused with file and
// line, and the buffer never grows past twice the limit; a row just within
// the limit is read. (The CLI uses the default, 64 MiB: tests/e2e.)
namespace ellipsa::cli {
namespace {
TEST(CsvLimits, RowLongerThanTheLimitIsRefusedWithFileAndLine) {
  CsvOptions options;
  options.buffer_size = 64;
  options.max_record_bytes = 1000;
  std::string huge = "a,b\n1,2\n3,";
  huge += std::string(5000, '7');  // line 3: one field of 5000 digits, no line end
  huge += "\n4,5\n";
  try {
    CsvReader reader(CsvSource::from_memory(huge, "long.csv"), options);
    CsvChunk chunk;
    while (reader.next_chunk(chunk, 100)) {
    }
    FAIL() << "no error";
  } catch (const CsvError& e) {
    EXPECT_EQ(e.file(), "long.csv");
    EXPECT_EQ(e.line(), 3);
    EXPECT_NE(std::string(e.what()).find("long.csv:3: a row longer than 1000 bytes"), std::string::npos) << e.what();
  }
  // A file with no line end at all (garbage, a wrong encoding) stops at line 1.
  try {
    CsvReader reader(CsvSource::from_memory(std::string(100000, 'x'), "noline.csv"), options);
    CsvChunk chunk;
    reader.next_chunk(chunk, 10);
    FAIL() << "no error";
  } catch (const CsvError& e) {
    EXPECT_EQ(e.line(), 1);
  }
  // Within the limit: read.
  std::string fine = "a,b\n1," + std::string(900, '7') + "\n";
  CsvReader reader(CsvSource::from_memory(fine, "fine.csv"), options);
  CsvChunk chunk;
  ASSERT_TRUE(reader.next_chunk(chunk, 10));
  EXPECT_EQ(chunk.rows(), 1u);
  CsvOptions zero;
  zero.max_record_bytes = 0;
  EXPECT_THROW(CsvReader(CsvSource::from_memory("", "m"), zero), std::invalid_argument);
}
}  // namespace
}  // namespace ellipsa::cli
