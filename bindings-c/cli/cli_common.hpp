// What every subcommand shares: exit codes, turning a library status into one,
// reading a whole table, model files, and the human/JSON summary switch.
#pragma once
#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <stdexcept>
#include <string>
#include <vector>

#include "csv_reader.hpp"
#include "ellipsa.h"

namespace ellipsa::cli {

// Documented in --help and the README; a scheduler keys on them.
enum ExitCode : int {
  kExitOk = 0,
  kExitUsage = 2,      // bad options or arguments
  kExitData = 3,       // unreadable or unusable file or data
  kExitNumerical = 4,  // singular scatter, exact fit; a mixture at its iteration cap (outranks 5)
  kExitFlagged = 5,    // --fail-on-flag and at least one row flagged
  kExitChanged = 6,    // compare --fail-on-change and some test significant
  kExitInternal = 70,  // a defect: please report
};

struct CliError : std::runtime_error {
  int code;
  CliError(int c, const std::string& m) : std::runtime_error(m), code(c) {}
};

int exit_code_for(ellipsa_status s);
// Throws CliError carrying the library's message when s is not ELLIPSA_OK.
void check(ellipsa_status s, const std::string& doing);

struct ModelDeleter {
  void operator()(ellipsa_model* m) const { ellipsa_model_destroy(m); }
};
using ModelPtr = std::unique_ptr<ellipsa_model, ModelDeleter>;
struct OptionsDeleter {
  void operator()(ellipsa_fit_options* o) const { ellipsa_fit_options_destroy(o); }
};
using OptionsPtr = std::unique_ptr<ellipsa_fit_options, OptionsDeleter>;

// Options of the CSV dialect shared by every subcommand that reads data.
struct DialectFlags {
  std::string separator;  // "", ",", ";", "tab"
  bool decimal_comma = false;
  std::vector<std::string> columns;
  std::vector<std::string> exclude;
  CsvOptions to_options() const;
};

// A whole table in memory (fitting needs every row).
struct Table {
  std::vector<std::string> columns;              // used numeric columns
  std::vector<std::string> skipped;              // header columns not used, with the reason
  std::vector<double> values;                    // row-major rows x columns.size()
  std::vector<std::int64_t> lines;               // 1-based file line of each row
  std::vector<std::vector<std::string>> fields;  // all fields per row (when asked)
  std::vector<std::string> header;
  std::int64_t rows() const { return static_cast<std::int64_t>(lines.size()); }
  ellipsa_matrix view() const {
    return ellipsa_matrix_row_major(values.data(), rows(), static_cast<int64_t>(columns.size()));
  }
};
Table read_table(const std::string& path, CsvOptions options, bool keep_fields = false);
// Refuses an infinite cell ("inf", or a number beyond the double range) with
// the file, line and column, before the library sees the chunk (it would know
// only the row within the chunk). Called on every chunk read for the library.
void refuse_infinite_cells(CsvReader& reader, const CsvChunk& chunk);

ModelPtr load_model_file(const std::string& path);
std::string model_text(const ellipsa_model* m);
// Writes text atomically to path ("-" = stdout).
void write_text_file(const std::string& path, const std::string& text);

std::vector<std::string> model_columns(const ellipsa_model* m);
std::string column_kind_text(const ColumnInfo& c);

// Output switches common to every subcommand.
struct OutputFlags {
  bool quiet = false;
  bool verbose = false;
  bool json = false;
};
// Prints the human summary to stderr (unless quiet) or the JSON summary to stdout.
void emit_summary(const OutputFlags& f, const std::string& human, const nlohmann::json& machine);

}  // namespace ellipsa::cli
