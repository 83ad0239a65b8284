#include "cli_common.hpp"

#include <cmath>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <sstream>

#include "atomic_output.hpp"

namespace ellipsa::cli {

int exit_code_for(ellipsa_status s) {
  switch (s) {
    case ELLIPSA_OK: return kExitOk;
    case ELLIPSA_ERR_NULL:
    case ELLIPSA_ERR_STATE:
    case ELLIPSA_ERR_INTERNAL: return kExitInternal;
    case ELLIPSA_ERR_ARGUMENT: return kExitUsage;
    case ELLIPSA_ERR_SHAPE:
    case ELLIPSA_ERR_DATA:
    case ELLIPSA_ERR_FORMAT:
    case ELLIPSA_ERR_MEMORY:
    case ELLIPSA_ERR_CANCELLED: return kExitData;
    case ELLIPSA_NUM_SINGULAR:
    case ELLIPSA_NUM_NOT_CONVERGED:
    case ELLIPSA_NUM_EXACT_FIT: return kExitNumerical;
  }
  return kExitInternal;
}

void check(ellipsa_status s, const std::string& doing) {
  if (s == ELLIPSA_OK) return;
  throw CliError(exit_code_for(s), doing + ": " + ellipsa_last_error() + " [" + ellipsa_status_string(s) + "]");
}

CsvOptions DialectFlags::to_options() const {
  CsvOptions o;
  if (separator == "," || separator == "comma") o.separator = ',';
  else if (separator == ";" || separator == "semicolon") o.separator = ';';
  else if (separator == "tab" || separator == "\\t" || separator == "\t") o.separator = '\t';
  else if (!separator.empty()) throw CliError(kExitUsage, "--separator must be comma, semicolon or tab");
  if (decimal_comma) o.decimal = ',';
  o.columns = columns;
  o.exclude = exclude;
  return o;
}

std::string column_kind_text(const ColumnInfo& c) {
  switch (c.kind) {
    case ColumnKind::numeric: return "numeric";
    case ColumnKind::text:
      return "text (line " + std::to_string(c.example_line) + ": '" + c.example + "')" +
             (c.decimal_comma_hint ? "; looks like a decimal comma: try --decimal-comma" : "");
    case ColumnKind::empty: return "empty";
    case ColumnKind::excluded: return "excluded";
  }
  return "";
}

void refuse_infinite_cells(CsvReader& reader, const CsvChunk& chunk) {
  for (std::size_t r = 0; r < chunk.rows(); ++r)
    for (std::size_t c = 0; c < chunk.cols(); ++c)
      if (std::isinf(chunk.value(r, c))) {
        const std::size_t j = reader.selected()[c];  // 0-based header column
        throw CsvError(reader.source_name(), chunk.line(r), static_cast<std::int64_t>(j + 1), reader.header()[j],
                       "the number is infinite or beyond the range of double precision; write a finite number, "
                       "or leave the cell empty (or NA) for a missing value");
      }
}

Table read_table(const std::string& path, CsvOptions options, bool keep_fields) {
  options.keep_fields = keep_fields;
  CsvReader reader(path, options);
  Table t;
  t.header = reader.header();
  t.columns = reader.selected_names();
  for (const auto& c : reader.columns())
    if (c.kind != ColumnKind::numeric) t.skipped.push_back(c.name + ": " + column_kind_text(c));
  if (t.columns.empty()) throw CliError(kExitData, reader.source_name() + ": no numeric columns to use");
  CsvChunk chunk;
  while (reader.next_chunk(chunk, 65536)) {
    refuse_infinite_cells(reader, chunk);
    t.values.insert(t.values.end(), chunk.data(), chunk.data() + chunk.rows() * chunk.cols());
    for (std::size_t r = 0; r < chunk.rows(); ++r) {
      t.lines.push_back(chunk.line(r));
      if (keep_fields) {
        std::vector<std::string> f;
        for (std::size_t c = 0; c < chunk.fields_per_row(); ++c) f.emplace_back(chunk.field(r, c));
        t.fields.push_back(std::move(f));
      }
    }
  }
  if (t.rows() == 0) throw CliError(kExitData, reader.source_name() + ": the file has a header but no data rows");
  return t;
}

ModelPtr load_model_file(const std::string& path) {
  std::string text;
  if (path == "-") {
    std::ostringstream ss;
    ss << std::cin.rdbuf();
    text = ss.str();
  } else {
    std::ifstream in(path, std::ios::binary);
    if (!in) throw CliError(kExitData, path + ": cannot open the model file");
    std::ostringstream ss;
    ss << in.rdbuf();
    text = ss.str();
  }
  if (text.empty()) throw CliError(kExitData, path + ": the model file is empty");
  ellipsa_model* m = nullptr;
  check(ellipsa_model_load(&m, text.data(), static_cast<int64_t>(text.size())), path);
  return ModelPtr(m);
}

std::string model_text(const ellipsa_model* m) {
  char* text = nullptr;
  int64_t length = 0;
  check(ellipsa_model_save(&text, &length, m), "writing the model");
  std::string s(text, static_cast<size_t>(length));
  ellipsa_text_free(text);
  return s;
}

void write_text_file(const std::string& path, const std::string& text) {
  AtomicOutput out(path);
  if (std::fwrite(text.data(), 1, text.size(), out.stream()) != text.size())
    throw CliError(kExitData, path + ": write failed");
  out.commit();
}

std::vector<std::string> model_columns(const ellipsa_model* m) {
  int64_t p = 0;
  check(ellipsa_model_describe(nullptr, nullptr, &p, nullptr, m), "reading the model");
  std::vector<std::string> names;
  for (int64_t j = 0; j < p; ++j) {
    const char* name = nullptr;
    check(ellipsa_model_column_name(&name, m, j), "reading the model");
    names.emplace_back(name);
  }
  return names;
}

void emit_summary(const OutputFlags& f, const std::string& human, const nlohmann::json& machine) {
  if (f.json) {
    std::fputs((machine.dump(2) + "\n").c_str(), stdout);
    return;
  }
  if (!f.quiet) std::fputs(human.c_str(), stderr);
}

}  // namespace ellipsa::cli
