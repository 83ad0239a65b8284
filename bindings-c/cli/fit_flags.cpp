// Flags and option handles shared by the fitting subcommands.
#include <charconv>
#include <cmath>
#include <cstdio>

#include "commands.hpp"

namespace ellipsa::cli {

void add_dialect_flags(CLI::App& app, DialectFlags& d) {
  app.add_option("--separator", d.separator, "Field separator: comma, semicolon or tab (default: detected)");
  app.add_flag("--decimal-comma", d.decimal_comma, "Numbers use a decimal comma (then the separator is not a comma)");
  app.add_option("--columns", d.columns, "Use exactly these columns, in this order (default: every numeric column)")
      ->delimiter(',');
  app.add_option("--exclude", d.exclude, "Never use these columns (e.g. an id that looks numeric)")->delimiter(',');
}

void add_output_flags(CLI::App& app, OutputFlags& o, const char* verbose_help) {
  app.add_flag("-q,--quiet", o.quiet, "Print nothing but errors");
  if (verbose_help != nullptr) app.add_flag("-v,--verbose", o.verbose, verbose_help);
  app.add_flag("--json", o.json, "Print a machine-readable summary (JSON) on standard output");
}

void add_digits_flag(CLI::App& app, std::string& digits) {
  app.add_option("--digits", digits,
                 "Significant digits of the computed columns: 1 to 17, or 'exact' for the shortest "
                 "text that reads back to the same number (input columns are copied as they are)")
      ->capture_default_str();
}

int parse_digits(const std::string& text) {
  if (text == "exact") return 0;
  int digits = 0;
  const auto [ptr, ec] = std::from_chars(text.data(), text.data() + text.size(), digits);
  if (ec != std::errc() || ptr != text.data() + text.size() || digits < 1 || digits > 17)
    throw CliError(kExitUsage, "--digits must be a whole number from 1 to 17, or 'exact' (got '" + text + "')");
  return digits;
}

void add_fit_flags(CLI::App& app, FitFlags& f, bool with_method) {
  if (with_method)
    app.add_option("-m,--method", f.method, "classical, ledoit-wolf, oas, mcd, detmcd, mrcd or mixture")
        ->capture_default_str();
  f.alpha_flag = app.add_option("--alpha", f.alpha,
                                "MCD family: fraction in [0.5, 1] that sets the subset size h "
                                "(default 0.5; mrcd 0.75)");
  f.seed_flag = app.add_option("--seed", f.seed, "mcd and mixture: seed of the random starts (default 0)");
  f.components_flag = app.add_option("--components", f.components, "Mixture: K, or a range KMIN-KMAX chosen by BIC")
                          ->capture_default_str();
  f.structure_flag =
      app.add_option("--structure", f.structure, "Mixture covariance: full, diagonal, tied, spherical or all")
          ->capture_default_str();
  f.restarts_flag =
      app.add_option("--restarts", f.restarts, "Mixture: EM runs from different starts")->capture_default_str();
  f.divisor_flag =
      app.add_option("--divisor", f.divisor, "Classical covariance divisor: n or n-1")->capture_default_str();
  if (with_method)
    f.small_sample_flag = app.add_option("--small-sample", f.small_sample,
                                         "mcd, detmcd: small-sample factors of the scatter, on or off "
                                         "(docs/calibration.md)")
                              ->capture_default_str();
  if (with_method)
    f.consistency_flag = app.add_option("--consistency", f.consistency,
                                        "mcd, detmcd: scaling of the raw scatter, normal (Croux-Haesbroeck "
                                        "factor) or median (Rousseeuw-Van Driessen); docs/calibration.md")
                             ->capture_default_str();
  app.add_option("--missing", f.missing, "Rows with missing cells: drop, refuse, or em (mixture only)")
      ->capture_default_str();
  f.iterations_flag = app.add_option("--max-iterations", f.max_iterations,
                                     "Mixture: EM iterations at most per run; a fit that stops there exits "
                                     "with code 4 (outputs still written)")
                          ->capture_default_str();
  f.tolerance_flag = app.add_option("--tolerance", f.tolerance,
                                    "Mixture: EM stops when the log-likelihood changes by less than this "
                                    "relative amount")
                         ->capture_default_str();
}

bool warn_not_converged(const ellipsa_model* m, const std::string& command, const std::string& what) {
  int32_t kind = 0;
  check(ellipsa_model_describe(&kind, nullptr, nullptr, nullptr, m), "reading the model");
  if (kind != ELLIPSA_KIND_MIXTURE) return false;
  double converged = 1.0, iterations = 0.0;
  check(ellipsa_model_diagnostic(&converged, m, "converged"), "reading the model");
  if (converged != 0.0) return false;
  check(ellipsa_model_diagnostic(&iterations, m, "iterations"), "reading the model");
  std::fprintf(stderr,
               "ellipsa %s: warning: %s: the mixture's EM stopped at its iteration cap (iterations: %.0f) "
               "before meeting its tolerance; its results are still given but may change with more "
               "iterations (raise --max-iterations or loosen --tolerance). Exit code 4.\n",
               command.c_str(), what.c_str(), iterations);
  return true;
}

namespace {
int32_t parse_int(const std::string& s, const char* what) {
  int32_t v = 0;
  auto [p, ec] = std::from_chars(s.data(), s.data() + s.size(), v);
  if (ec != std::errc() || p != s.data() + s.size())
    throw CliError(kExitUsage, std::string(what) + ": '" + s + "' is not a whole number");
  return v;
}
}  // namespace

OptionsPtr make_fit_options(const FitFlags& f, const std::vector<std::string>& columns, Progress* progress) {
  ellipsa_method method = 0;
  check(ellipsa_method_from_name(&method, f.method.c_str()), "--method");
  ellipsa_fit_options* raw = nullptr;
  check(ellipsa_fit_options_create(&raw, method), "creating fit options");
  OptionsPtr o(raw);
  std::vector<const char*> names;
  for (const auto& c : columns) names.push_back(c.c_str());
  check(ellipsa_fit_options_set_column_names(o.get(), names.data(), static_cast<int64_t>(names.size())),
        "column names");
  const auto given = [](const CLI::Option* flag) { return flag != nullptr && flag->count() > 0; };
  const bool mixture = method == ELLIPSA_METHOD_MIXTURE;
  if (given(f.divisor_flag)) {
    if (f.divisor != "n" && f.divisor != "n-1") throw CliError(kExitUsage, "--divisor must be n or n-1");
    check(ellipsa_fit_options_set_divisor(o.get(), f.divisor == "n" ? ELLIPSA_DIVISOR_N : ELLIPSA_DIVISOR_N_MINUS_1),
          "--divisor");
  }
  int32_t missing = 0;
  if (ellipsa_missing_from_name(&missing, f.missing.c_str()) != ELLIPSA_OK)
    throw CliError(kExitUsage, "--missing must be drop, refuse or em");
  check(ellipsa_fit_options_set_missing(o.get(), missing), "--missing");
  if (given(f.alpha_flag)) check(ellipsa_fit_options_set_alpha(o.get(), f.alpha), "--alpha");
  if (given(f.seed_flag)) check(ellipsa_fit_options_set_seed(o.get(), f.seed), "--seed");
  if (given(f.components_flag) || (mixture && f.components_default)) {
    const auto dash = f.components.find('-');
    const int32_t kmin = parse_int(f.components.substr(0, dash), "--components");
    const int32_t kmax = dash == std::string::npos ? kmin : parse_int(f.components.substr(dash + 1), "--components");
    check(ellipsa_fit_options_set_components(o.get(), kmin, kmax), "--components");
  }
  if (given(f.structure_flag) || (mixture && f.components_default)) {
    int32_t structure = 0;
    if (ellipsa_structure_from_name(&structure, f.structure.c_str()) != ELLIPSA_OK)
      throw CliError(kExitUsage, "--structure must be full, diagonal, tied, spherical or all");
    check(ellipsa_fit_options_set_structure(o.get(), structure), "--structure");
  }
  if (given(f.restarts_flag)) check(ellipsa_fit_options_set_restarts(o.get(), f.restarts), "--restarts");
  if (given(f.iterations_flag) || given(f.tolerance_flag)) {
    // One setter takes both; the one not given keeps its default.
    if (f.max_iterations < 1) throw CliError(kExitUsage, "--max-iterations must be at least 1");
    if (!(f.tolerance > 0.0 && f.tolerance < HUGE_VAL))
      throw CliError(kExitUsage, "--tolerance must be a positive number");
    check(ellipsa_fit_options_set_iterations(o.get(), f.max_iterations, f.tolerance),
          given(f.iterations_flag) ? "--max-iterations" : "--tolerance");
  }
  if (given(f.small_sample_flag)) {
    if (f.small_sample != "on" && f.small_sample != "off")
      throw CliError(kExitUsage, "--small-sample must be on or off");
    check(ellipsa_fit_options_set_small_sample(o.get(), f.small_sample == "on" ? 1 : 0), "--small-sample");
  }
  if (given(f.consistency_flag)) {
    if (f.consistency != "normal" && f.consistency != "median")
      throw CliError(kExitUsage, "--consistency must be normal or median");
    check(ellipsa_fit_options_set_consistency(
              o.get(), f.consistency == "median" ? ELLIPSA_CONSISTENCY_MEDIAN : ELLIPSA_CONSISTENCY_NORMAL),
          "--consistency");
  }
  if (!f.reference.empty()) {
    int32_t r = 0;
    if (ellipsa_reference_from_name(&r, f.reference.c_str()) != ELLIPSA_OK || r == ELLIPSA_REFERENCE_MODEL)
      throw CliError(kExitUsage, "--reference must be chi2, new-rows or fitting-rows (got '" + f.reference + "')");
    check(ellipsa_fit_options_set_reference(o.get(), r), "--reference");
  }
  if (progress != nullptr && progress->enabled())
    check(ellipsa_fit_options_set_progress(o.get(), &Progress::callback, progress), "progress");
  return o;
}

}  // namespace ellipsa::cli
