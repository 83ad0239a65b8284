#include "csv_reader.hpp"

#include <stdexcept>
#include <unordered_map>

#include "csv_record_stream.hpp"
#include "number_parse.hpp"

namespace ellipsa::cli {
namespace {

// A cell as it may appear inside a message: short, and without control bytes.
std::string shown_cell(std::string_view cell) {
  constexpr std::size_t kLimit = 40;
  std::string out;
  for (std::size_t i = 0; i < cell.size() && i < kLimit; ++i) {
    const auto u = static_cast<unsigned char>(cell[i]);
    if (u < 0x20 || u == 0x7f) {
      static const char hex[] = "0123456789ABCDEF";
      out += "\\x";
      out += hex[u >> 4];
      out += hex[u & 15];
    } else {
      out += cell[i];
    }
  }
  if (cell.size() > kLimit) out += "...";
  return out;
}

// Offset of the first byte that breaks UTF-8 (RFC 3629: no overlongs, no
// surrogates, nothing above U+10FFFF), or npos when `s` is valid.
std::size_t invalid_utf8_offset(std::string_view s) {
  const auto* b = reinterpret_cast<const unsigned char*>(s.data());
  std::size_t i = 0;
  while (i < s.size()) {
    const unsigned c = b[i];
    std::size_t len = 0;
    unsigned lo = 0x80, hi = 0xBF;
    if (c < 0x80) {
      ++i;
      continue;
    }
    if (c >= 0xC2 && c <= 0xDF) len = 2;
    else if (c == 0xE0) {
      len = 3;
      lo = 0xA0;
    } else if (c >= 0xE1 && c <= 0xEC) len = 3;
    else if (c == 0xED) {
      len = 3;
      hi = 0x9F;
    } else if (c >= 0xEE && c <= 0xEF) len = 3;
    else if (c == 0xF0) {
      len = 4;
      lo = 0x90;
    } else if (c >= 0xF1 && c <= 0xF3) len = 4;
    else if (c == 0xF4) {
      len = 4;
      hi = 0x8F;
    } else return i;
    if (i + len > s.size()) return i;
    if (b[i + 1] < lo || b[i + 1] > hi) return i;
    for (std::size_t k = 2; k < len; ++k)
      if (b[i + k] < 0x80 || b[i + k] > 0xBF) return i;
    i += len;
  }
  return std::string_view::npos;
}

// A column name loses the blanks and UTF-8 byte order marks (U+FEFF, an
// invisible character) around it. The file's leading marks are dropped by the
// record stream; this catches one behind blanks ("  \xEF\xBB\xBFx"), which
// otherwise made the name differ invisibly from the "x" the user types, and
// a rewritten file, where the mark now leads, read back another name
// (fuzzing found it: regression-bom-behind-blanks).
std::string_view trim_name(std::string_view name) {
  constexpr std::string_view kMark = "\xEF\xBB\xBF";
  for (;;) {
    const std::string_view t = trim_blanks(name);
    std::string_view u = t;
    while (u.starts_with(kMark)) u.remove_prefix(kMark.size());
    while (u.ends_with(kMark)) u.remove_suffix(kMark.size());
    if (u.size() == name.size()) return u;
    name = u;
  }
}

std::string separator_name(char c) { return c == '\t' ? std::string("tab") : "'" + std::string(1, c) + "'"; }

// Counts each candidate separator outside quotes (a quote opens a quoted field
// only at the start of a field, where any candidate may have ended the last one).
char detect_separator(std::string_view text, std::string_view candidates, std::string& tie) {
  std::size_t counts[256] = {};
  bool field_start = true, quoted = false;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (quoted) {
      if (c == '"') {
        if (i + 1 < text.size() && text[i + 1] == '"') ++i;
        else quoted = false;
      }
      continue;
    }
    if (c == '"' && field_start) {
      quoted = true;
      field_start = false;
    } else if (candidates.find(c) != std::string_view::npos) {
      ++counts[static_cast<unsigned char>(c)];
      field_start = true;
    } else {
      field_start = false;
    }
  }
  char best = candidates[0];
  for (char c : candidates)
    if (counts[static_cast<unsigned char>(c)] > counts[static_cast<unsigned char>(best)]) best = c;
  for (char c : candidates)
    if (c != best && counts[static_cast<unsigned char>(c)] > 0 &&
        counts[static_cast<unsigned char>(c)] == counts[static_cast<unsigned char>(best)])
      tie = separator_name(best) + " as " + separator_name(c);
  return best;
}

std::string describe_unused(const ColumnInfo& c) {
  std::string text = "column " + std::to_string(c.index) + " (\"" + c.name + "\") ";
  switch (c.kind) {
    case ColumnKind::text:
      text += "has '" + shown_cell(c.example) + "' on line " + std::to_string(c.example_line);
      if (c.decimal_comma_hint) text += " (decimal comma?)";
      return text;
    case ColumnKind::empty: return text + "has no values";
    case ColumnKind::excluded: return text + "is excluded";
    case ColumnKind::numeric: break;
  }
  return text;
}

}  // namespace

std::string_view CsvChunk::row_text(std::size_t r) const noexcept {
  if (2 * r + 1 >= row_span_.size()) return {};
  return std::string_view(text_).substr(row_span_[2 * r], row_span_[2 * r + 1] - row_span_[2 * r]);
}

std::string_view CsvChunk::field(std::size_t r, std::size_t c) const noexcept {
  const std::size_t k = 2 * (r * fields_per_row_ + c);
  if (c >= fields_per_row_ || k + 1 >= field_span_.size()) return {};
  return std::string_view(text_).substr(field_span_[k], field_span_[k + 1] - field_span_[k]);
}

void CsvChunk::reset(std::size_t cols, std::size_t fields_per_row) {
  cols_ = cols;
  fields_per_row_ = fields_per_row;
  values_.clear();
  lines_.clear();
  text_.clear();
  row_span_.clear();
  field_span_.clear();
}

CsvReader::CsvReader(const std::string& path, CsvOptions options)
    : CsvReader(CsvSource::open(path), std::move(options)) {}

CsvReader::CsvReader(CsvSource source, CsvOptions options)
    : options_(std::move(options)),
      record_(std::make_unique<detail::CsvRecord>()),
      blank_(std::make_unique<detail::CsvRecord>()) {
  const char s = options_.separator;
  if (s != 0 && s != ',' && s != ';' && s != '\t') throw std::invalid_argument("CSV separator must be ',', ';' or tab");
  if (options_.decimal != '.' && options_.decimal != ',')
    throw std::invalid_argument("decimal mark must be '.' or ','");
  if (options_.decimal == ',' && s == ',')
    throw std::invalid_argument("with decimal comma the separator must be ';' or tab");
  if (options_.detect_rows == 0) throw std::invalid_argument("detect_rows must be at least 1");
  if (options_.buffer_size == 0) throw std::invalid_argument("buffer_size must be at least 1");
  if (options_.max_record_bytes == 0) throw std::invalid_argument("max_record_bytes must be at least 1");
  stream_ = std::make_unique<detail::RecordStream>(std::move(source), options_.buffer_size, options_.max_record_bytes);
  blank_->fields.assign(1, std::string_view());
}

CsvReader::~CsvReader() = default;

const std::string& CsvReader::source_name() const noexcept { return stream_->name(); }

void CsvReader::fail(std::int64_t line, std::size_t column, const std::string& message) const {
  std::string name;
  if (column >= 1 && column <= header_.size()) name = header_[column - 1];
  throw CsvError(stream_->name(), line, static_cast<std::int64_t>(column), name, message);
}

const std::vector<std::string>& CsvReader::header() {
  if (header_read_) return header_;
  std::string candidates = options_.separator != 0   ? std::string(1, options_.separator)
                           : options_.decimal == ',' ? std::string(";\t")
                                                     : std::string(",;\t");
  stream_->set_separators(candidates);
  detail::RecordStream::Mark start{};
  do {
    start = stream_->mark();
    if (!stream_->next(*record_)) fail(0, 0, "the file is empty (no header line)");
  } while (record_->blank());
  const std::int64_t line = record_->line;
  for (std::size_t i = 0; i < record_->text.size(); ++i)
    if (record_->text[i] == '\r' && (i + 1 == record_->text.size() || record_->text[i + 1] != '\n'))
      fail(line, 0, "lines end with CR only (old Mac format); convert the file to LF or CRLF line ends");
  if (options_.separator != 0) {
    separator_ = options_.separator;
  } else {
    std::string tie;
    separator_ = detect_separator(record_->text, candidates, tie);
    if (!tie.empty())
      fail(line, 0, "cannot tell the separator: the header has as many " + tie + "; name it explicitly");
    stream_->set_separators(std::string(1, separator_));
    stream_->reset(start);
    stream_->next(*record_);
  }
  std::unordered_map<std::string_view, std::size_t> seen;
  header_.reserve(record_->fields.size());
  for (std::string_view field : record_->fields) header_.emplace_back(trim_name(field));
  for (std::size_t j = 0; j < header_.size(); ++j) {
    const std::size_t bad = invalid_utf8_offset(header_[j]);
    if (bad != std::string_view::npos)
      fail(line, j + 1,
           "the column name is not valid UTF-8 (byte " + std::to_string(bad + 1) + "); save the file as UTF-8");
    if (header_[j].empty()) continue;
    const auto [it, inserted] = seen.emplace(header_[j], j);
    if (!inserted) fail(line, j + 1, "duplicate column name (also column " + std::to_string(it->second + 1) + ")");
  }
  header_read_ = true;
  stream_->set_column_names(&header_);
  return header_;
}

char CsvReader::separator() {
  header();
  return separator_;
}

// The next row with the header's field count. Blank lines are held back until
// a non-blank row shows they are not trailing: then, with one column, each is
// a row with a missing cell; with more columns, they are an error.
bool CsvReader::next_data_record(detail::CsvRecord*& out) {
  if (blanks_to_emit_ > 0) {
    --blanks_to_emit_;
    blank_->line = blank_next_line_++;
    out = blank_.get();
    return true;
  }
  if (held_) {
    held_ = false;
    out = record_.get();
    return true;
  }
  for (;;) {
    if (!stream_->next(*record_)) return false;  // trailing blank lines are dropped
    if (record_->blank()) {
      if (pending_blanks_++ == 0) pending_blank_line_ = record_->line;
      continue;
    }
    if (record_->fields.size() != header_.size())
      fail(record_->line, 0,
           "expected " + std::to_string(header_.size()) + " fields as in the header, found " +
               std::to_string(record_->fields.size()));
    if (pending_blanks_ > 0) {
      if (header_.size() != 1)
        fail(pending_blank_line_, 0,
             "blank line between data rows (expected " + std::to_string(header_.size()) + " fields)");
      blanks_to_emit_ = pending_blanks_;
      blank_next_line_ = pending_blank_line_;
      pending_blanks_ = 0;
      held_ = true;
      return next_data_record(out);
    }
    out = record_.get();
    return true;
  }
}

void CsvReader::append_row(CsvChunk& chunk, std::int64_t line, std::string_view text,
                           std::span<const std::string_view> fields, bool keep_text, bool keep_fields) {
  const std::size_t base = chunk.values_.size();
  chunk.values_.resize(base + selected_.size());
  double* out = chunk.values_.data() + base;
  for (std::size_t k = 0; k < selected_.size(); ++k) {
    const std::size_t j = selected_[k];
    if (parse_cell(fields[j], options_.decimal, out[k]) == CellValue::invalid) {
      double ignored = 0;
      const bool comma_hint = options_.decimal == '.' && parse_cell(fields[j], ',', ignored) == CellValue::number;
      fail(line, j + 1,
           "cannot read '" + shown_cell(fields[j]) + "' as a number" +
               (comma_hint ? " (decimal comma? choose the decimal-comma option)" : ""));
    }
  }
  chunk.lines_.push_back(line);
  if (keep_text) {
    chunk.row_span_.push_back(chunk.text_.size());
    chunk.text_.append(text);
    chunk.row_span_.push_back(chunk.text_.size());
  }
  if (keep_fields) {
    for (std::string_view f : fields) {
      chunk.field_span_.push_back(chunk.text_.size());
      chunk.text_.append(f);
      chunk.field_span_.push_back(chunk.text_.size());
    }
  }
}

void CsvReader::detect() {
  if (detected_) return;
  header();
  // Read ahead: these rows decide the column kinds and are delivered first.
  ahead_.reset(0, header_.size());
  detail::CsvRecord* record = nullptr;
  while (ahead_.rows() < options_.detect_rows && next_data_record(record))
    append_row(ahead_, record->line, record->text, record->fields, true, true);
  if (ahead_.rows() == 0) fail(0, 0, "the file has a header line but no data rows");

  columns_.resize(header_.size());
  for (std::size_t j = 0; j < header_.size(); ++j) {
    columns_[j].name = header_[j];
    columns_[j].index = j + 1;
  }
  auto find_column = [&](const std::string& name, const char* role) {
    for (std::size_t j = 0; j < header_.size(); ++j)
      if (header_[j] == name) return j;
    std::string known;
    for (std::size_t j = 0; j < header_.size() && j < 20; ++j) known += (j ? ", " : "") + header_[j];
    fail(0, 0,
         std::string("no column named \"") + name + "\" (" + role + "); the header has: " + known +
             (header_.size() > 20 ? ", ..." : ""));
  };

  if (!options_.columns.empty()) {
    for (ColumnInfo& c : columns_) c.kind = ColumnKind::excluded;
    for (const std::string& name : options_.columns) {
      const std::size_t j = find_column(name, "requested");
      if (columns_[j].kind == ColumnKind::numeric) fail(0, 0, "column \"" + name + "\" is requested twice");
      columns_[j].kind = ColumnKind::numeric;
      selected_.push_back(j);
    }
  } else {
    for (const std::string& name : options_.exclude)
      columns_[find_column(name, "to exclude")].kind = ColumnKind::excluded;
    for (std::size_t j = 0; j < header_.size(); ++j) {
      ColumnInfo& c = columns_[j];
      if (c.kind == ColumnKind::excluded) continue;
      bool any_number = false;
      for (std::size_t r = 0; r < ahead_.rows(); ++r) {
        double v = 0;
        const std::string_view cell = ahead_.field(r, j);
        const CellValue kind = parse_cell(cell, options_.decimal, v);
        if (kind == CellValue::invalid) {
          c.kind = ColumnKind::text;
          c.example.assign(cell);
          c.example_line = ahead_.line(r);
          c.decimal_comma_hint = options_.decimal == '.' && parse_cell(cell, ',', v) == CellValue::number;
          break;
        }
        any_number = any_number || kind == CellValue::number;
      }
      if (c.kind == ColumnKind::text) continue;
      c.kind = any_number ? ColumnKind::numeric : ColumnKind::empty;
      if (any_number) selected_.push_back(j);
    }
    if (selected_.empty()) {
      std::string why;
      for (const ColumnInfo& c : columns_) why += (why.empty() ? "" : "; ") + describe_unused(c);
      fail(0, 0, "no numeric columns: " + why);
    }
  }
  // The read-ahead rows become a converted chunk of the selected columns.
  CsvChunk converted;
  converted.reset(selected_.size(), header_.size());
  std::vector<std::string_view> fields(header_.size());
  for (std::size_t r = 0; r < ahead_.rows(); ++r) {
    for (std::size_t j = 0; j < header_.size(); ++j) fields[j] = ahead_.field(r, j);
    append_row(converted, ahead_.line(r), ahead_.row_text(r), fields, options_.keep_row_text, options_.keep_fields);
  }
  ahead_ = std::move(converted);
  detected_ = true;
}

const std::vector<ColumnInfo>& CsvReader::columns() {
  detect();
  return columns_;
}

const std::vector<std::size_t>& CsvReader::selected() {
  detect();
  return selected_;
}

std::vector<std::string> CsvReader::selected_names() {
  detect();
  std::vector<std::string> names;
  for (std::size_t j : selected_) names.push_back(header_[j]);
  return names;
}

bool CsvReader::next_chunk(CsvChunk& chunk, std::size_t max_rows) {
  if (max_rows == 0) throw std::invalid_argument("next_chunk: max_rows must be at least 1");
  detect();
  chunk.reset(selected_.size(), header_.size());
  const std::size_t p = selected_.size();
  while (chunk.rows() < max_rows && ahead_pos_ < ahead_.rows()) {
    const std::size_t r = ahead_pos_++;
    chunk.values_.insert(chunk.values_.end(), ahead_.values_.begin() + static_cast<std::ptrdiff_t>(r * p),
                         ahead_.values_.begin() + static_cast<std::ptrdiff_t>((r + 1) * p));
    chunk.lines_.push_back(ahead_.line(r));
    if (options_.keep_row_text) {
      chunk.row_span_.push_back(chunk.text_.size());
      chunk.text_.append(ahead_.row_text(r));
      chunk.row_span_.push_back(chunk.text_.size());
    }
    if (options_.keep_fields) {
      for (std::size_t j = 0; j < header_.size(); ++j) {
        chunk.field_span_.push_back(chunk.text_.size());
        chunk.text_.append(ahead_.field(r, j));
        chunk.field_span_.push_back(chunk.text_.size());
      }
    }
  }
  if (ahead_pos_ == ahead_.rows() && ahead_.rows() > 0) ahead_ = CsvChunk();  // release
  detail::CsvRecord* record = nullptr;
  while (chunk.rows() < max_rows && next_data_record(record))
    append_row(chunk, record->line, record->text, record->fields, options_.keep_row_text, options_.keep_fields);
  delivered_ += static_cast<std::int64_t>(chunk.rows());
  return chunk.rows() > 0;
}

}  // namespace ellipsa::cli
