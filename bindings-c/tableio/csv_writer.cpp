#include "csv_writer.hpp"

#include <algorithm>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstring>
#include <stdexcept>

#include "atomic_output.hpp"
#include "number_format.hpp"

namespace ellipsa::cli {
namespace {

constexpr std::size_t kDrainSize = std::size_t{1} << 16;

std::size_t append_number(char* out, double value, char decimal, int digits) {
  const std::size_t n = digits == 0 ? format_shortest(out, value) : format_significant(out, value, digits);
  if (decimal != '.')
    for (std::size_t i = 0; i < n; ++i)
      if (out[i] == '.') out[i] = decimal;
  return n;
}

}  // namespace

CsvWriter::CsvWriter(std::string* sink, CsvWriteOptions options)
    : CsvWriter(static_cast<std::FILE*>(nullptr), std::move(options)) {
  sink_ = sink;
}

CsvWriter::CsvWriter(std::FILE* out, CsvWriteOptions options) : out_(out), options_(std::move(options)) {
  const char s = options_.separator;
  if (s != ',' && s != ';' && s != '\t') throw std::invalid_argument("CSV separator must be ',', ';' or tab");
  if (options_.decimal != '.' && options_.decimal != ',')
    throw std::invalid_argument("decimal mark must be '.' or ','");
  if (options_.decimal == ',' && s == ',')
    throw std::invalid_argument("with decimal comma the separator must be ';' or tab");
  if (options_.digits < 0 || options_.digits > 17)
    throw std::invalid_argument("significant digits must be 1 to 17 (or 0 for the shortest exact form)");
  buffer_.resize(kDrainSize + 4096);
}

CsvWriter::~CsvWriter() {
  if (used_ > 0 && out_ != nullptr) std::fwrite(buffer_.data(), 1, used_, out_);
  if (used_ > 0 && sink_ != nullptr) sink_->append(buffer_.data(), used_);
}

char* CsvWriter::room(std::size_t bytes) {
  if (used_ + bytes > buffer_.size()) {
    write_buffer();
    if (bytes > buffer_.size()) buffer_.resize(bytes);
  }
  return buffer_.data() + used_;
}

void CsvWriter::put(char c) {
  *room(1) = c;
  ++used_;
}

void CsvWriter::put(std::string_view text) {
  std::memcpy(room(text.size()), text.data(), text.size());
  used_ += text.size();
}

void CsvWriter::begin_field() {
  if (fields_in_row_++ > 0) put(options_.separator);
}

void CsvWriter::header(std::span<const std::string> names) {
  for (const std::string& name : names) text(name);
  end_row();
}

CsvWriter& CsvWriter::text(std::string_view field) {
  begin_field();
  const char specials[] = {options_.separator, '"', '\n', '\r'};
  if (field.find_first_of(std::string_view(specials, 4)) == std::string_view::npos) {
    put(field);
  } else {
    put('"');
    for (char c : field) {
      if (c == '"') put('"');
      put(c);
    }
    put('"');
  }
  last_field_empty_ = field.empty();
  drain_if_full();
  return *this;
}

CsvWriter& CsvWriter::number(double value) {
  if (std::isnan(value)) return missing();
  begin_field();
  // Formatted straight into the buffer: no copy of the digits.
  used_ += append_number(room(kNumberTextMax), value, options_.decimal, options_.digits);
  last_field_empty_ = false;
  drain_if_full();
  return *this;
}

CsvWriter& CsvWriter::integer(std::int64_t value) {
  begin_field();
  char* at = room(24);
  const auto [end, ec] = std::to_chars(at, at + 24, value);
  (void)ec;
  used_ += static_cast<std::size_t>(end - at);
  last_field_empty_ = false;
  drain_if_full();
  return *this;
}

CsvWriter& CsvWriter::missing() {
  begin_field();
  put(options_.missing);
  last_field_empty_ = options_.missing.empty();
  drain_if_full();
  return *this;
}

CsvWriter& CsvWriter::raw(std::string_view fields) {
  begin_field();
  put(fields);
  last_field_empty_ = fields.empty();
  drain_if_full();
  return *this;
}

void CsvWriter::end_row() {
  // A row of one empty field would be a blank line, which readers skip at the
  // end of a file; the quotes keep the row.
  if (fields_in_row_ == 1 && last_field_empty_) put("\"\"");
  put(options_.crlf ? std::string_view("\r\n") : std::string_view("\n"));
  fields_in_row_ = 0;
  drain_if_full();
}

CsvWriter& CsvWriter::rows(std::string_view formatted) {
  // In pieces of the buffer's drain size, as rows formatted here would go.
  while (!formatted.empty()) {
    const std::size_t n = std::min(formatted.size(), kDrainSize);
    put(formatted.substr(0, n));
    formatted.remove_prefix(n);
    drain_if_full();
  }
  return *this;
}

void CsvWriter::drain_if_full() {
  if (used_ >= kDrainSize) write_buffer();
}

void CsvWriter::write_buffer() {
  if (used_ == 0) return;
  const std::size_t n = used_;
  used_ = 0;
  passed_ += n;
  if (sink_ != nullptr) {
    sink_->append(buffer_.data(), n);
    return;
  }
  if (std::fwrite(buffer_.data(), 1, n, out_) != n) throw OutputError(write_error());
}

// "cannot write '<name>': <cause>", so that a full disk names the file.
std::string CsvWriter::write_error() const {
  const std::string what = options_.name.empty() ? std::string("output") : "'" + options_.name + "'";
  return "cannot write " + what + ": " + std::strerror(errno);
}

void CsvWriter::flush() {
  write_buffer();
  if (out_ != nullptr && std::fflush(out_) != 0) throw OutputError(write_error());
}

}  // namespace ellipsa::cli
