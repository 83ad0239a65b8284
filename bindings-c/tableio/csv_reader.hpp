// Streaming CSV reader for the batch tool: a header line of column names, then
// data rows delivered in chunks as a row-major double buffer of the numeric
// columns, with each row's line number and, on request, its text.
//
// Dialect (see also number_parse.hpp for cells):
//  - RFC 4180 quoting: a field that starts with '"' is quoted; "" inside is one
//    quote; separators and line ends inside quotes belong to the field. A quote
//    inside an unquoted field is an ordinary character.
//  - Separator ',', ';' or tab: given, or detected as the most frequent of them
//    outside quotes in the header line (a tie is an error: name it explicitly).
//    With decimal comma the separator cannot be ','.
//  - UTF-8 with or without byte order mark (UTF-16 is refused); LF or CRLF line
//    ends; the last line end is optional; blank lines before the header and at
//    the end are ignored. A blank line between data rows is a row with too few
//    fields (error) unless the file has one column, where it is a missing cell.
//  - A record longer than CsvOptions::max_record_bytes (64 MiB) is refused.
//  - Header names are trimmed of surrounding spaces, tabs and U+FEFF (byte
//    order marks); names must be unique
//    (empty names excepted) and valid UTF-8.
//
// Columns: with `columns` empty, every column whose non-missing cells in the
// first `detect_rows` data rows all read as numbers (and that has at least one)
// is used, in file order; the others are reported in columns() with the reason.
// A later cell of a used column that is not a number is an error naming file,
// line and column. With `columns` given, exactly those are used, in that order.
//
// Errors are CsvError (csv_source.hpp). Invalid options are std::invalid_argument.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "csv_source.hpp"

namespace ellipsa::cli {

namespace detail {
class RecordStream;
struct CsvRecord;
}  // namespace detail

struct CsvOptions {
  char separator = 0;                              ///< ',', ';', '\t', or 0 to detect from the header
  char decimal = '.';                              ///< '.' or ','
  std::vector<std::string> columns;                ///< use exactly these (by name); empty = detect
  std::vector<std::string> exclude;                ///< names never used by detection (e.g. an id)
  std::size_t detect_rows = 1000;                  ///< data rows examined to detect numeric columns
  bool keep_row_text = false;                      ///< CsvChunk::row_text() available
  bool keep_fields = false;                        ///< CsvChunk::field() available
  std::size_t buffer_size = std::size_t{1} << 20;  ///< read size; small values are for tests
  /// Longest record (one row, line end excluded; a quoted field may span
  /// lines) that is buffered: a longer one is refused with a CsvError naming
  /// the file and the line where it starts, having buffered at most twice
  /// this many bytes (the buffer doubles). 64 MiB: a row of 100000 columns of 600
  /// bytes each, far beyond any measurement file; a file without line ends
  /// (binary data, a wrong encoding) stops there instead of filling memory.
  std::size_t max_record_bytes = kDefaultMaxRecordBytes;
  static constexpr std::size_t kDefaultMaxRecordBytes = std::size_t{64} << 20;
};

enum class ColumnKind {
  numeric,   ///< used (detected or requested)
  text,      ///< a non-missing cell did not read as a number
  empty,     ///< no value at all in the rows examined
  excluded,  ///< named in CsvOptions::exclude, or not among CsvOptions::columns
};

struct ColumnInfo {
  std::string name;
  std::size_t index = 0;  ///< 1-based position in the header
  ColumnKind kind = ColumnKind::numeric;
  std::string example;              ///< text: the first cell that is not a number
  std::int64_t example_line = 0;    ///< text: its line
  bool decimal_comma_hint = false;  ///< text: the example reads as a number with decimal comma
};

/// One batch of rows. Reused between calls to keep allocations away.
class CsvChunk {
 public:
  std::size_t rows() const noexcept { return lines_.size(); }
  /// Number of used (numeric) columns: the width of the value buffer.
  std::size_t cols() const noexcept { return cols_; }
  /// Row-major rows() x cols() values; missing cells are NaN.
  const double* data() const noexcept { return values_.data(); }
  std::span<const double> row(std::size_t r) const noexcept { return {values_.data() + r * cols_, cols_}; }
  double value(std::size_t r, std::size_t c) const noexcept { return values_[r * cols_ + c]; }
  /// 1-based physical line where row r starts.
  std::int64_t line(std::size_t r) const noexcept { return lines_[r]; }
  /// The row as it appears in the input, without its line end (keep_row_text).
  std::string_view row_text(std::size_t r) const noexcept;
  /// Decoded text of field c (0-based, over all header columns) of row r (keep_fields).
  std::string_view field(std::size_t r, std::size_t c) const noexcept;
  std::size_t fields_per_row() const noexcept { return fields_per_row_; }

 private:
  friend class CsvReader;
  void reset(std::size_t cols, std::size_t fields_per_row);

  std::size_t cols_ = 0;
  std::size_t fields_per_row_ = 0;
  std::vector<double> values_;
  std::vector<std::int64_t> lines_;
  std::string text_;                     ///< arena for row texts and fields
  std::vector<std::size_t> row_span_;    ///< begin, end per row
  std::vector<std::size_t> field_span_;  ///< begin, end per field per row
};

class CsvReader {
 public:
  /// Reads `path` ("-" = standard input). Throws CsvError if it cannot be opened.
  explicit CsvReader(const std::string& path, CsvOptions options = {});
  CsvReader(CsvSource source, CsvOptions options);
  ~CsvReader();
  CsvReader(const CsvReader&) = delete;
  CsvReader& operator=(const CsvReader&) = delete;

  /// Column names of the header line (read on first call).
  const std::vector<std::string>& header();
  /// The separator in use (after header()).
  char separator();
  /// Every header column with its kind (detects on first call: reads up to
  /// detect_rows rows ahead, which next_chunk() then delivers).
  const std::vector<ColumnInfo>& columns();
  /// 0-based header indices of the used columns, in buffer order.
  const std::vector<std::size_t>& selected();
  /// Names of the used columns, in buffer order.
  std::vector<std::string> selected_names();

  /// Replaces `chunk` with up to max_rows (>= 1) next rows; false when none remain.
  bool next_chunk(CsvChunk& chunk, std::size_t max_rows);

  /// Data rows delivered so far.
  std::int64_t rows_delivered() const noexcept { return delivered_; }
  const std::string& source_name() const noexcept;

 private:
  bool next_data_record(detail::CsvRecord*& record);
  void append_row(CsvChunk& chunk, std::int64_t line, std::string_view text, std::span<const std::string_view> fields,
                  bool keep_text, bool keep_fields);
  void detect();
  [[noreturn]] void fail(std::int64_t line, std::size_t column, const std::string& message) const;

  CsvOptions options_;
  std::unique_ptr<detail::RecordStream> stream_;
  std::unique_ptr<detail::CsvRecord> record_;
  std::unique_ptr<detail::CsvRecord> blank_;
  bool header_read_ = false;
  bool detected_ = false;
  char separator_ = 0;
  std::vector<std::string> header_;
  std::vector<ColumnInfo> columns_;
  std::vector<std::size_t> selected_;
  std::int64_t pending_blank_line_ = 0;  ///< first blank line not yet resolved
  std::int64_t pending_blanks_ = 0;
  std::int64_t blanks_to_emit_ = 0;  ///< one-column file: blank lines that are rows
  std::int64_t blank_next_line_ = 0;
  bool held_ = false;  ///< record_ waits behind blank rows
  CsvChunk ahead_;     ///< rows read for detection, delivered first
  std::size_t ahead_pos_ = 0;
  std::int64_t delivered_ = 0;
};

}  // namespace ellipsa::cli
