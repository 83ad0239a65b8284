// Registration of the subcommands. Each adds itself to the app and returns the
// action main() runs when it was chosen.
#pragma once
#include <CLI/CLI.hpp>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "cli_common.hpp"
#include "progress.hpp"

namespace ellipsa::cli {

using Action = std::function<int()>;

struct Command {
  CLI::App* app;
  Action run;
};

Command add_fit(CLI::App& parent);
Command add_score(CLI::App& parent);
Command add_screen(CLI::App& parent);
Command add_inspect(CLI::App& parent);
Command add_report(CLI::App& parent);
Command add_cluster(CLI::App& parent);
Command add_compare(CLI::App& parent);

// ---- pieces shared by fit and screen -------------------------------------
struct FitFlags {
  std::string method = "classical";
  double alpha = 0.5;
  std::uint64_t seed = 0;
  std::string components = "1";
  std::string structure = "full";
  int restarts = 5;
  std::string divisor = "n-1";
  std::string missing = "drop";
  std::string small_sample = "on";     // mcd, detmcd: small-sample factors on|off
  std::string consistency = "normal";  // mcd, detmcd: raw scatter scaling, normal|median
  std::string reference;               // fit: scoring reference recorded in the model ("" = library default)
  int max_iterations = 500;            // mixture: EM iteration cap (the library's documented default)
  double tolerance = 1e-6;             // mixture: relative log-likelihood change (the library's documented default)
  // The flags the user gave: only those are passed to the library, whose own
  // defaults (and its refusal of settings a method does not use) then apply.
  CLI::Option* alpha_flag = nullptr;
  CLI::Option* seed_flag = nullptr;
  CLI::Option* components_flag = nullptr;
  CLI::Option* structure_flag = nullptr;
  CLI::Option* restarts_flag = nullptr;
  CLI::Option* divisor_flag = nullptr;
  CLI::Option* small_sample_flag = nullptr;
  CLI::Option* consistency_flag = nullptr;
  CLI::Option* iterations_flag = nullptr;
  CLI::Option* tolerance_flag = nullptr;
  bool components_default = false;  // cluster: pass the range even when not given
};
void add_fit_flags(CLI::App& app, FitFlags& f, bool with_method);
// progress, when given and enabled, receives the fit's progress reports.
OptionsPtr make_fit_options(const FitFlags& f, const std::vector<std::string>& columns, Progress* progress = nullptr);
// A mixture whose chosen EM run stopped at its iteration cap: prints a warning
// on stderr ("ellipsa <command>: warning: <what>: ...") and returns true, so
// the command can exit with kExitNumerical after writing its outputs. False
// (and silent) for a converged mixture or a Gaussian model.
bool warn_not_converged(const ellipsa_model* m, const std::string& command, const std::string& what);
void add_dialect_flags(CLI::App& app, DialectFlags& d);
// --quiet and --json for every subcommand; --verbose only where a subcommand
// has something more to say (verbose_help says what), so no flag is accepted
// that does nothing.
void add_output_flags(CLI::App& app, OutputFlags& o, const char* verbose_help = nullptr);
// --digits of the subcommands that write scored rows: "10" by default, "1".."17",
// or "exact" (the shortest text that reads back to the same double).
void add_digits_flag(CLI::App& app, std::string& digits);
// The CsvWriteOptions::digits value of a --digits text; throws CliError (usage) otherwise.
int parse_digits(const std::string& text);

// ---- scoring output shared by score and screen ---------------------------
struct ScoreColumns {
  int32_t kind = ELLIPSA_KIND_GAUSSIAN;
  int64_t p = 0;
  int32_t components = 1;
  std::vector<std::string> names;  // appended output columns
};
ScoreColumns score_columns(const ellipsa_model* m);

// Per-row scores of a block, owned buffers wired into an ellipsa_scores.
struct ScoreBlock {
  std::vector<double> d2, p_value, contribution, membership, log_density;
  std::vector<int32_t> flag, observed, component, low_density;
  // reference: an ELLIPSA_REFERENCE_ value (ELLIPSA_REFERENCE_MODEL: the model's own);
  // threads: as ellipsa_model_score_v3 (0: the library's default rule).
  void score(const ellipsa_model* m, const ScoreColumns& c, const ellipsa_matrix& x, double level, int32_t reference,
             int32_t threads = 0);
};

// --reference NAME for scoring (model, chi2, new-rows, fitting-rows); the
// value given, as an ELLIPSA_REFERENCE_ constant.
int32_t parse_reference(const std::string& name);
// What produced the flags of scores made with `reference` against model m:
// e.g. "new-rows limit (Tracy-Young-Mason phase II, m = 176 reference rows)".
std::string reference_description(const ellipsa_model* m, int32_t reference);

// The variables that contribute most to row r's distance, as "name (share%)".
std::string top_contributors(const ScoreBlock& b, const ScoreColumns& c, std::size_t r, int how_many);

// ---- Mardia's shape check, shared by screen, inspect and report ----------
// The check of the rows a model was fitted on (x: the fitting data), or
// nothing when the library cannot compute it (e.g. a mixture, too few rows).
std::optional<ellipsa_shape_test> model_shape(const ellipsa_model* m, const ellipsa_matrix& x);
// "skewness ... (p = ...), kurtosis ... against ... (p = ...), on N rows".
std::string shape_numbers(const ellipsa_shape_test& s);
// Plain sentences when the limits should be read as approximate (empty when none).
std::vector<std::string> shape_sentences(const ellipsa_shape_test& s, double level = 0.05);
nlohmann::json shape_json(const ellipsa_shape_test& s);

}  // namespace ellipsa::cli
