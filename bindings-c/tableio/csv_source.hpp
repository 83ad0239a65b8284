// Where CSV bytes come from: a path, standard input ("-"), or
// bytes in memory (tests, fuzzing). Reads are large and unbuffered by stdio.
#pragma once

#include <cstddef>
#include <cstdint>
#include <stdexcept>
#include <string>

namespace ellipsa::cli {

/// A problem with the input: where it is, and what it is. The CLI maps it to
/// exit code 3. what() is the full sentence, e.g.
///   data.csv:17: column 3 ("hold_time"): cannot read 'abc' as a number
class CsvError : public std::runtime_error {
 public:
  /// line: 1-based physical line, 0 when the problem has no line (empty file,
  /// open failure). column: 1-based column index, 0 when not about one column.
  CsvError(std::string file, std::int64_t line, std::int64_t column, std::string column_name, std::string message);
  const std::string& file() const noexcept { return file_; }
  std::int64_t line() const noexcept { return line_; }
  std::int64_t column() const noexcept { return column_; }
  const std::string& column_name() const noexcept { return column_name_; }
  /// The message without the location prefix.
  const std::string& message() const noexcept { return message_; }

 private:
  std::string file_;
  std::int64_t line_;
  std::int64_t column_;
  std::string column_name_;
  std::string message_;
};

/// A readable byte stream with a display name for messages. Move-only.
class CsvSource {
 public:
  /// Opens `path` for reading; "-" is standard input (display name "<stdin>").
  /// Throws CsvError when the file cannot be opened.
  static CsvSource open(const std::string& path);
  /// Reads from a copy of `bytes` (the in-memory source of the reader's tests
  /// and fuzz target).
  static CsvSource from_memory(std::string bytes, std::string display_name);

  CsvSource(CsvSource&& other) noexcept;
  CsvSource& operator=(CsvSource&& other) noexcept;
  CsvSource(const CsvSource&) = delete;
  CsvSource& operator=(const CsvSource&) = delete;
  ~CsvSource();

  /// Fills up to `capacity` bytes; returns the count, 0 only at end of input.
  /// Throws CsvError on a read error.
  std::size_t read(char* destination, std::size_t capacity);
  const std::string& name() const noexcept { return name_; }

 private:
  enum class Kind { descriptor, memory };
  CsvSource(Kind kind, std::string name) : kind_(kind), name_(std::move(name)) {}
  void close() noexcept;

  Kind kind_;
  std::string name_;
  int fd_ = -1;
  bool owns_fd_ = false;
  std::string memory_;
  std::size_t memory_pos_ = 0;
};

}  // namespace ellipsa::cli
