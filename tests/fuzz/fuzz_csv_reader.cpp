// libFuzzer target for the CSV reader (and, on what it accepts, the writer).
//
// Byte 0 chooses the options; the rest is the file. Beyond "no crash, no
// sanitizer report, only CsvError escapes", three oracles:
//  1. The same input read with a tiny buffer and small chunks gives exactly the
//     result (or the error message) of a 1 MiB buffer read in one chunk.
//  2. Chunks respect max_rows and lines increase.
//  3. What was read, written back with CsvWriter and read again, gives the same
//     fields and bit-identical values.
//  4. Every value read, formatted with N significant digits by the writer's
//     fast path, gives the text of std::to_chars (the standard's "%.*g").
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

#include <charconv>

#include "csv_reader.hpp"
#include "csv_writer.hpp"
#include "number_format.hpp"

using namespace ellipsa::cli;

namespace {

struct Outcome {
  std::string error;  // CsvError::what(), empty on success
  std::vector<std::string> header, selected, fields, texts;
  std::vector<std::uint64_t> value_bits;
  std::vector<std::int64_t> lines;
  char separator = 0;
  bool operator==(const Outcome&) const = default;
};

void check(bool condition, const char* what) {
  if (!condition) {
    std::fprintf(stderr, "fuzz oracle failed: %s\n", what);
    std::abort();
  }
}

Outcome read(const std::string& bytes, const CsvOptions& options, std::size_t max_rows) {
  Outcome out;
  try {
    CsvReader reader(CsvSource::from_memory(bytes, "fuzz.csv"), options);
    out.header = reader.header();
    out.separator = reader.separator();
    out.selected = reader.selected_names();
    CsvChunk chunk;
    std::int64_t last_line = 0;
    while (reader.next_chunk(chunk, max_rows)) {
      check(chunk.rows() >= 1 && chunk.rows() <= max_rows, "chunk size");
      check(chunk.cols() == out.selected.size(), "chunk width");
      for (std::size_t r = 0; r < chunk.rows(); ++r) {
        check(chunk.line(r) > last_line, "lines increase");
        last_line = chunk.line(r);
        out.lines.push_back(chunk.line(r));
        out.texts.emplace_back(chunk.row_text(r));
        for (std::size_t c = 0; c < chunk.fields_per_row(); ++c) out.fields.emplace_back(chunk.field(r, c));
        for (double v : chunk.row(r)) {
          std::uint64_t b;
          std::memcpy(&b, &v, sizeof b);
          out.value_bits.push_back(b);
        }
      }
    }
  } catch (const CsvError& e) {
    out.error = e.what();
  }
  return out;
}

std::string rewrite(const Outcome& o, char decimal) {
  char* data = nullptr;
  std::size_t size = 0;
  std::FILE* mem = open_memstream(&data, &size);
  {
    CsvWriteOptions wo;
    wo.separator = o.separator;
    wo.decimal = decimal;
    CsvWriter writer(mem, wo);
    writer.header(o.header);
    const std::size_t width = o.header.size();
    for (std::size_t i = 0; i < o.fields.size(); ++i) {
      writer.text(o.fields[i]);
      if (i % width == width - 1) writer.end_row();
    }
    writer.flush();
  }
  std::fclose(mem);
  std::string text(data, size);
  std::free(data);
  return text;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  const std::uint8_t choice = data[0];
  const std::string bytes(reinterpret_cast<const char*>(data) + 1, size - 1);

  CsvOptions options;
  options.separator = "\0,;\t"[choice & 3];
  if (choice & 4) {
    options.decimal = ',';
    if (options.separator == ',') options.separator = ';';
  }
  options.detect_rows = (choice & 8) ? 2 : 1000;
  options.keep_fields = options.keep_row_text = true;

  // The whole input fits the reference buffer (kept small so runs stay fast).
  options.buffer_size = bytes.size() + 16;
  CsvOptions tiny = options;
  tiny.buffer_size = std::size_t{1} + ((choice >> 4) & 7);
  const Outcome reference = read(bytes, options, 1 << 20);
  const Outcome chunked = read(bytes, tiny, 1 + (choice >> 7) * 2);
  // Rows before an error are delivered in earlier chunks, so on error only
  // the message must agree.
  if (reference.error.empty() && chunked.error.empty())
    check(reference == chunked, "tiny buffers and chunks change the result");
  else check(reference.error == chunked.error, "tiny buffers and chunks change the error");

  if (reference.error.empty() && !reference.header.empty()) {
    CsvOptions again = options;
    again.separator = reference.separator;
    const Outcome reread = read(rewrite(reference, options.decimal), again, 1 << 20);
    check(reread.error.empty(), "rewritten file is not readable");
    check(reread.header == reference.header, "rewritten header differs");
    check(reread.fields == reference.fields, "rewritten fields differ");
    check(reread.selected == reference.selected, "rewritten selection differs");
    check(reread.value_bits == reference.value_bits, "rewritten values differ");
  }

  const int digits = 1 + (choice >> 3) % 17;
  for (const std::uint64_t b : reference.value_bits) {
    double v;
    std::memcpy(&v, &b, sizeof v);
    char ours[kNumberTextMax], standard[64];
    const std::size_t n = format_significant(ours, v, digits);
    const auto r = std::to_chars(standard, standard + sizeof standard, v, std::chars_format::general, digits);
    check(std::string(ours, n) == std::string(standard, r.ptr), "significant-digit text differs from std::to_chars");
  }
  return 0;
}
