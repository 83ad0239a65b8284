// ellipsa fit: one model from a CSV file, written as a model file (JSON).
#include <cmath>
#include <sstream>

#include "commands.hpp"

namespace ellipsa::cli {
namespace {

struct FitArgs {
  std::string data;
  std::string output = "-";
  FitFlags fit;
  DialectFlags dialect;
  OutputFlags out;
};

nlohmann::json fit_summary(const ellipsa_model* m, const Table& t, const std::string& method) {
  int64_t used = 0, dropped = 0;
  check(ellipsa_model_rows(&used, &dropped, m), "reading the model");
  nlohmann::json j{{"method", method}, {"rows_read", t.rows()}, {"rows_used", used},
                   {"rows_dropped", dropped}, {"columns", t.columns}, {"skipped_columns", t.skipped}};
  for (const char* name : {"shrinkage_intensity", "h", "consistency_factor", "log_likelihood", "bic", "icl",
                           "iterations", "converged", "log_det"}) {
    double v = 0.0;
    if (ellipsa_model_diagnostic(&v, m, name) == ELLIPSA_OK && std::isfinite(v)) j[name] = v;
  }
  return j;
}

}  // namespace

Command add_fit(CLI::App& parent) {
  auto args = std::make_shared<FitArgs>();
  CLI::App* app = parent.add_subcommand("fit", "Fit a normal profile (location and scatter, or a mixture) to a CSV file");
  app->add_option("data", args->data, "CSV file with a header row ('-' reads standard input)")->required();
  app->add_option("-o,--output", args->output, "Model file to write (default: standard output)");
  add_fit_flags(*app, args->fit, true);
  add_dialect_flags(*app, args->dialect);
  add_output_flags(*app, args->out);
  return {app, [args]() {
            if (args->out.json && args->output == "-")
              throw CliError(kExitUsage, "--json prints the summary on standard output: give the model a file with -o");
            const Table t = read_table(args->data, args->dialect.to_options());
            Progress progress(progress_wanted(args->out.quiet || args->out.json));
            const auto options = make_fit_options(args->fit, t.columns, &progress);
            ellipsa_model* raw = nullptr;
            const auto view = t.view();
            check(ellipsa_model_fit(&raw, &view, options.get()), "fitting " + args->data);
            ModelPtr m(raw);
            progress.finish();
            write_text_file(args->output, model_text(m.get()));
            const auto summary = fit_summary(m.get(), t, args->fit.method);
            std::ostringstream human;
            human << "fitted " << args->fit.method << " on " << summary["rows_used"] << " of " << t.rows()
                  << " rows, " << t.columns.size() << " columns";
            if (summary["rows_dropped"].get<int64_t>() > 0)
              human << " (" << summary["rows_dropped"] << " rows with missing cells dropped)";
            human << "\n";
            if (args->out.verbose)
              for (const auto& s : t.skipped) human << "  skipped column " << s << "\n";
            if (args->output != "-") human << "model written to " << args->output << "\n";
            emit_summary(args->out, human.str(), summary);
            return static_cast<int>(kExitOk);
          }};
}

}  // namespace ellipsa::cli
