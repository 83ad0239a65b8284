#include "csv_record_stream.hpp"

#include <algorithm>
#include <cstdint>
#include <cstring>
#include <utility>

namespace ellipsa::cli::detail {
namespace {

constexpr std::size_t kMinimumBuffer = 4;  // room for a byte order mark

std::string printable_char(char c) {
  const auto u = static_cast<unsigned char>(c);
  if (u >= 0x20 && u < 0x7f) return std::string(1, c);
  static const char hex[] = "0123456789ABCDEF";
  return std::string("\\x") + hex[u >> 4] + hex[u & 15];
}

constexpr std::uint64_t kOnes = 0x0101010101010101ULL;
constexpr std::uint64_t kHighs = 0x8080808080808080ULL;

// Bytes of v equal to c get their high bit set in the result, others 0 (the
// exact form of the zero-byte test: no false positives from borrows).
std::uint64_t bytes_equal(std::uint64_t v, char c) noexcept {
  const std::uint64_t x = v ^ (kOnes * static_cast<unsigned char>(c));
  return ~(((x & ~kHighs) + ~kHighs) | x | ~kHighs);
}

// First index in [i, n) whose byte is `separator` or '\n', or n: eight bytes
// per step, then byte by byte for the tail.
std::size_t scan_to_stop(const char* b, std::size_t i, std::size_t n, char separator) noexcept {
  while (i + 8 <= n) {
    std::uint64_t v;
    std::memcpy(&v, b + i, 8);
    const std::uint64_t hit = bytes_equal(v, separator) | bytes_equal(v, '\n');
    if (hit != 0) return i + static_cast<std::size_t>(__builtin_ctzll(hit) >> 3);
    i += 8;
  }
  while (i < n && b[i] != separator && b[i] != '\n') ++i;
  return i;
}

}  // namespace

RecordStream::RecordStream(CsvSource source, std::size_t buffer_size, std::size_t max_record)
    : source_(std::move(source)), buffer_(std::max(buffer_size, kMinimumBuffer)), max_record_(max_record) {
  set_separators(",");
}

void RecordStream::set_separators(std::string_view separators) {
  separator_.fill(false);
  stop_.fill(false);
  single_separator_ = separators.size() == 1 ? separators[0] : '\0';
  for (char c : separators) {
    separator_[static_cast<unsigned char>(c)] = true;
    stop_[static_cast<unsigned char>(c)] = true;
  }
  stop_[static_cast<unsigned char>('\n')] = true;
}

RecordStream::Mark RecordStream::mark() {
  if (!started_) start();
  return {discarded_ + pos_, line_};
}

void RecordStream::reset(Mark mark) noexcept {
  pos_ = static_cast<std::size_t>(mark.offset - discarded_);
  line_ = mark.line;
}

void RecordStream::fail(std::int64_t line, std::size_t column, const std::string& message) const {
  std::string column_name;
  if (names_ != nullptr && column >= 1 && column <= names_->size()) column_name = (*names_)[column - 1];
  throw CsvError(source_.name(), line, static_cast<std::int64_t>(column), column_name, message);
}

// Moves the unread tail to the front (or doubles the buffer when one record
// fills all of it) and reads until the buffer is full or the input ends.
void RecordStream::refill() {
  if (pos_ > 0) {
    std::memmove(buffer_.data(), buffer_.data() + pos_, filled_ - pos_);
    filled_ -= pos_;
    discarded_ += pos_;
    pos_ = 0;
  } else if (filled_ == buffer_.size()) {
    buffer_.resize(buffer_.size() * 2);
  }
  while (filled_ < buffer_.size()) {
    const std::size_t n = source_.read(buffer_.data() + filled_, buffer_.size() - filled_);
    if (n == 0) {
      eof_ = true;
      break;
    }
    filled_ += n;
  }
}

void RecordStream::start() {
  started_ = true;
  refill();
  const auto* b = reinterpret_cast<const unsigned char*>(buffer_.data());
  if (filled_ >= 2 && ((b[0] == 0xFF && b[1] == 0xFE) || (b[0] == 0xFE && b[1] == 0xFF)))
    fail(1, 0, "the file is UTF-16 encoded; save it as UTF-8");
  // UTF-8 byte order marks are not part of the first column name, however
  // many: a file passed through two tools that each add one starts with two.
  // (Fuzzing found it: a kept U+FEFF made the name differ invisibly and
  // a rewritten file read back another name; regression-double-bom.)
  for (;;) {
    while (filled_ - pos_ < 3 && !eof_) refill();
    b = reinterpret_cast<const unsigned char*>(buffer_.data()) + pos_;
    if (filled_ - pos_ < 3 || b[0] != 0xEF || b[1] != 0xBB || b[2] != 0xBF) break;
    pos_ += 3;
  }
}

bool RecordStream::next(CsvRecord& record) {
  if (!started_) start();
  for (;;) {
    if (pos_ == filled_) {
      if (eof_) return false;
      refill();
      continue;
    }
    std::size_t record_end = 0, next_pos = 0;
    std::int64_t lines_used = 0;
    // A record is refused as soon as more than max_record_ of its bytes are
    // buffered, so the buffer stays below twice the limit (it doubles).
    const Parse parsed = parse(record_end, next_pos, lines_used);
    const std::size_t length = parsed == Parse::need_more ? filled_ - pos_ : record_end - pos_;
    if (length > max_record_)
      fail(line_, 0,
           "a row longer than " + std::to_string(max_record_) + " bytes starts here; the reader's limit is " +
               std::to_string(max_record_) + " bytes per row (is a line end missing, or the file not text?)");
    if (parsed == Parse::need_more) {
      refill();
      continue;
    }
    const char* b = buffer_.data();
    record.line = line_;
    record.text = std::string_view(b + pos_, record_end - pos_);
    record.fields.resize(ref_count_);
    for (std::size_t i = 0; i < ref_count_; ++i) {
      const FieldRef& r = refs_[i];
      record.fields[i] = std::string_view((r.in_scratch ? scratch_.data() : b) + r.offset, r.length);
    }
    line_ += lines_used;
    pos_ = next_pos;
    return true;
  }
}

// One record from pos_. Fields are recorded in refs_ (offsets, not pointers, as
// scratch_ may move while it grows). need_more when the record (or the meaning
// of its last byte) reaches past the data read so far.
RecordStream::Parse RecordStream::parse(std::size_t& record_end, std::size_t& next_pos, std::int64_t& lines_used) {
  const char* b = buffer_.data();
  const std::size_t n = filled_;
  std::size_t i = pos_;
  std::int64_t newlines = 0;
  ref_count_ = 0;
  scratch_.clear();
  for (;;) {
    if (i < n && b[i] == '"') {
      // Quoted field: runs to the next quote that is not doubled.
      const std::int64_t quote_line = line_ + newlines;
      const std::size_t open = i;
      std::size_t segment = i + 1;
      std::size_t scratch_start = scratch_.size();
      bool escaped = false;
      std::size_t close = 0;
      for (std::size_t j = segment;;) {
        const void* q = j < n ? std::memchr(b + j, '"', n - j) : nullptr;
        if (q == nullptr) {
          if (!eof_) return Parse::need_more;
          fail(quote_line, ref_count_ + 1, "quoted field is not closed before the end of the file");
        }
        const std::size_t at = static_cast<std::size_t>(static_cast<const char*>(q) - b);
        if (at + 1 == n && !eof_) return Parse::need_more;  // "" or closing? next byte decides
        if (at + 1 < n && b[at + 1] == '"') {
          escaped = true;
          scratch_.append(b + segment, at + 1 - segment);  // keeps one quote
          segment = j = at + 2;
          continue;
        }
        close = at;
        break;
      }
      newlines += std::count(b + open + 1, b + close, '\n');
      if (escaped) {
        scratch_.append(b + segment, close - segment);
        add_ref(scratch_start, scratch_.size() - scratch_start, true);
      } else {
        add_ref(open + 1, close - open - 1, false);
      }
      i = close + 1;
      if (i == n) {
        if (!eof_) return Parse::need_more;
        record_end = next_pos = n;
        break;
      }
      const char c = b[i];
      if (separator_[static_cast<unsigned char>(c)]) {
        ++i;
        continue;
      }
      if (c == '\n') {
        record_end = i;
        next_pos = i + 1;
        ++newlines;
        break;
      }
      if (c == '\r') {
        if (i + 1 == n) {
          if (!eof_) return Parse::need_more;
          record_end = i;
          next_pos = n;
          break;
        }
        if (b[i + 1] == '\n') {
          record_end = i;
          next_pos = i + 2;
          ++newlines;
          break;
        }
      }
      fail(line_ + newlines, ref_count_, "unexpected character '" + printable_char(c) + "' after the closing quote");
    }
    // Unquoted field: runs to a separator or the end of the line.
    const std::size_t start = i;
    if (single_separator_ != '\0' && single_separator_ != '\n') {
      i = scan_to_stop(b, i, n, single_separator_);
    } else {
      while (i < n && !stop_[static_cast<unsigned char>(b[i])]) ++i;
    }
    if (i < n && b[i] != '\n') {  // separator
      add_ref(start, i - start, false);
      ++i;
      continue;
    }
    if (i == n && !eof_) return Parse::need_more;
    std::size_t end = i;
    if (end > start && b[end - 1] == '\r') --end;  // CRLF, or a lone CR before end of file
    add_ref(start, end - start, false);
    record_end = end;
    if (i < n) {
      next_pos = i + 1;
      ++newlines;
    } else {
      next_pos = n;
    }
    break;
  }
  lines_used = newlines;
  return Parse::complete;
}

}  // namespace ellipsa::cli::detail
