// Splits a byte stream into CSV records (RFC 4180 quoting) with bounded memory.
// Internal to the CSV reader; CsvReader is the interface the subcommands use.
//
// Memory: one buffer of `buffer_size` bytes that grows (doubling) only when a
// single record does not fit in it, never past twice `max_record` (a longer
// record is refused with CsvError naming file and line), plus a scratch area for quoted fields that
// contain "" escapes. A record is re-scanned from its start after a refill, so a
// record split across reads costs at most one extra scan per doubling.
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "csv_source.hpp"

namespace ellipsa::cli::detail {

struct CsvRecord {
  std::int64_t line = 0;                 ///< physical line (1-based) where the record starts
  std::string_view text;                 ///< raw bytes of the record, without its line end
  std::vector<std::string_view> fields;  ///< decoded fields (quotes removed, "" -> ")
  bool blank() const noexcept { return text.empty(); }
};

class RecordStream {
 public:
  RecordStream(CsvSource source, std::size_t buffer_size, std::size_t max_record);

  /// Separator characters that end a field (one for data; several while the
  /// header is read to detect which one the file uses).
  void set_separators(std::string_view separators);
  /// Names used to label columns in error messages (may be null).
  void set_column_names(const std::vector<std::string>* names) noexcept { names_ = names; }

  /// Next record, or false at the end of input. Views stay valid until the next
  /// call. Throws CsvError on an unterminated quote or text after a closing quote.
  bool next(CsvRecord& record);

  /// A position to re-read the most recent record from, valid until next() is
  /// called twice (used to re-split the header once its separator is known).
  struct Mark {
    std::uint64_t offset;
    std::int64_t line;
  };
  Mark mark();
  void reset(Mark mark) noexcept;

  const std::string& name() const noexcept { return source_.name(); }
  /// Largest buffer reached (for tests of the memory bound).
  std::size_t buffer_capacity() const noexcept { return buffer_.size(); }

 private:
  struct FieldRef {
    std::size_t offset;
    std::size_t length;
    bool in_scratch;
  };
  enum class Parse { complete, need_more };

  void start();
  void refill();
  Parse parse(std::size_t& record_end, std::size_t& next_pos, std::int64_t& lines_used);
  [[noreturn]] void fail(std::int64_t line, std::size_t column, const std::string& message) const;

  CsvSource source_;
  std::vector<char> buffer_;
  std::size_t max_record_;       ///< longest record accepted, bytes
  std::size_t pos_ = 0;          ///< start of the next record in buffer_
  std::size_t filled_ = 0;       ///< bytes of buffer_ holding data
  std::uint64_t discarded_ = 0;  ///< bytes dropped before buffer_[0]
  bool eof_ = false;
  bool started_ = false;
  std::int64_t line_ = 1;  ///< physical line of the next record
  std::array<bool, 256> separator_{};
  std::array<bool, 256> stop_{};  ///< separator or '\n': ends an unquoted scan
  char single_separator_ = ',';   ///< the separator when there is one ('\0' while detecting)
  // Fields of the record being parsed: refs_[0, ref_count_). Appended through
  // add_ref, which stays inline in the scanning loop (a push_back did not).
  void add_ref(std::size_t offset, std::size_t length, bool in_scratch) {
    if (ref_count_ == refs_.size()) refs_.resize(refs_.empty() ? 16 : 2 * refs_.size());
    refs_[ref_count_++] = {offset, length, in_scratch};
  }
  std::vector<FieldRef> refs_;
  std::size_t ref_count_ = 0;
  std::string scratch_;
  const std::vector<std::string>* names_ = nullptr;
};

}  // namespace ellipsa::cli::detail
