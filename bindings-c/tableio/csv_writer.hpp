// CSV output that the reader (and spreadsheets, R, NumPy) read back exactly:
// numbers in the shortest form that round-trips (std::to_chars) unless a number
// of significant digits is asked for (number_format.hpp), fields quoted
// only when they hold the separator, a quote, CR or LF, and "\n" line ends
// unless CRLF is asked for.
//
// Usage:
//   CsvWriter w(out.stream(), {.separator = ','});
//   w.header(names);
//   w.raw(chunk.row_text(r)).number(d2).text("flagged").end_row();
//   w.flush();   // then AtomicOutput::commit()
#pragma once

#include <cstdint>
#include <cstdio>
#include <span>
#include <string>
#include <string_view>

namespace ellipsa::cli {

struct CsvWriteOptions {
  char separator = ',';        ///< ',', ';' or '\t'
  char decimal = '.';          ///< '.' or ',' (then the separator cannot be ',')
  bool crlf = false;           ///< "\r\n" line ends instead of "\n"
  std::string missing = "NA";  ///< written for NaN (one of the reader's missing markers)
  int digits = 0;              ///< significant digits of numbers (1..17); 0: shortest exact form
  std::string name;            ///< the output's name in error messages ("" = "output")
};

class CsvWriter {
 public:
  /// `out` stays owned by the caller. Throws std::invalid_argument on bad options.
  explicit CsvWriter(std::FILE* out, CsvWriteOptions options = {});
  /// Appends the text to `sink` instead of writing it (for rows formatted on
  /// one thread and written on another with rows()); `sink` stays owned by
  /// the caller and must outlive the writer.
  explicit CsvWriter(std::string* sink, CsvWriteOptions options = {});
  /// Writes what is still buffered, ignoring errors: call flush() to see them.
  ~CsvWriter();
  CsvWriter(const CsvWriter&) = delete;
  CsvWriter& operator=(const CsvWriter&) = delete;

  /// One row of names.
  void header(std::span<const std::string> names);
  /// A text field, quoted when needed.
  CsvWriter& text(std::string_view field);
  /// A number (options.digits significant digits or the shortest round-trip form;
  /// NaN as options.missing; +-inf as inf/-inf).
  CsvWriter& number(double value);
  CsvWriter& integer(std::int64_t value);
  /// options.missing.
  CsvWriter& missing();
  /// One or more fields already in the output dialect (e.g. CsvChunk::row_text
  /// of an input read with the same separator), copied unchanged.
  CsvWriter& raw(std::string_view fields);
  void end_row();
  /// Whole rows already formatted in this writer's dialect (by a writer with
  /// the same options and a string sink), copied unchanged. Call between rows.
  CsvWriter& rows(std::string_view formatted);
  /// Passes everything to the stream and flushes it. Throws OutputError.
  void flush();

  char separator() const noexcept { return options_.separator; }
  const CsvWriteOptions& options() const noexcept { return options_; }
  /// Bytes passed to the stream or sink so far (not counting what is buffered).
  std::uint64_t bytes_passed() const noexcept { return passed_; }

 private:
  std::string write_error() const;
  void begin_field();
  void drain_if_full();
  void write_buffer();
  // Space for `bytes` more at buffer_[used_], draining (or, for one huge
  // field, growing) the buffer first when needed.
  char* room(std::size_t bytes);
  void put(char c);
  void put(std::string_view text);

  std::FILE* out_ = nullptr;
  std::string* sink_ = nullptr;
  CsvWriteOptions options_;
  std::string buffer_;  // fixed size; buffer_[0, used_) waits to be written
  std::size_t used_ = 0;
  std::uint64_t passed_ = 0;
  std::size_t fields_in_row_ = 0;
  bool last_field_empty_ = false;
};

}  // namespace ellipsa::cli
