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

// What a fit read and produced, whichever way the rows were read.
struct Fitted {
  ModelPtr model;
  int64_t rows_read = 0;
  std::vector<std::string> columns;
  std::vector<std::string> skipped;
};

struct AccumulatorDeleter {
  void operator()(ellipsa_accumulator* a) const { ellipsa_accumulator_destroy(a); }
};

// Classical and shrinkage fits stream: one pass over the file in chunks,
// memory O(p^2) whatever its length (the C interface's accumulator).
Fitted fit_streaming(const FitArgs& a, Progress& progress) {
  CsvReader reader(a.data, a.dialect.to_options());
  Fitted f;
  f.columns = reader.selected_names();
  for (const auto& c : reader.columns())
    if (c.kind != ColumnKind::numeric) f.skipped.push_back(c.name + ": " + column_kind_text(c));
  if (f.columns.empty()) throw CliError(kExitData, reader.source_name() + ": no numeric columns to use");
  ellipsa_accumulator* raw = nullptr;
  check(ellipsa_accumulator_create(&raw, static_cast<int64_t>(f.columns.size())), "streaming fit");
  std::unique_ptr<ellipsa_accumulator, AccumulatorDeleter> acc(raw);
  CsvChunk chunk;
  while (reader.next_chunk(chunk, 65536)) {
    refuse_infinite_cells(reader, chunk);
    const auto x =
        ellipsa_matrix_row_major(chunk.data(), static_cast<int64_t>(chunk.rows()), static_cast<int64_t>(chunk.cols()));
    check(ellipsa_accumulator_add(acc.get(), &x), reader.source_name());
    f.rows_read += static_cast<int64_t>(chunk.rows());
    progress.rows("reading", f.rows_read);
  }
  if (f.rows_read == 0) throw CliError(kExitData, reader.source_name() + ": the file has a header but no data rows");
  const auto options = make_fit_options(a.fit, f.columns);
  ellipsa_model* m = nullptr;
  check(ellipsa_model_from_accumulator(&m, acc.get(), options.get()), "fitting " + a.data);
  f.model.reset(m);
  return f;
}

// The other methods need every row at once (memory: 8 bytes x rows x columns).
Fitted fit_in_memory(const FitArgs& a, Progress& progress) {
  const Table t = read_table(a.data, a.dialect.to_options());
  const auto options = make_fit_options(a.fit, t.columns, &progress);
  ellipsa_model* raw = nullptr;
  const auto view = t.view();
  check(ellipsa_model_fit(&raw, &view, options.get()), "fitting " + a.data);
  return {ModelPtr(raw), t.rows(), t.columns, t.skipped};
}

nlohmann::json fit_summary(const Fitted& f, const std::string& method) {
  const ellipsa_model* m = f.model.get();
  int64_t used = 0, dropped = 0;
  check(ellipsa_model_rows(&used, &dropped, m), "reading the model");
  nlohmann::json j{{"method", method},        {"rows_read", f.rows_read}, {"rows_used", used},
                   {"rows_dropped", dropped}, {"columns", f.columns},     {"skipped_columns", f.skipped}};
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
  CLI::App* app =
      parent.add_subcommand("fit", "Fit a normal profile (location and scatter, or a mixture) to a CSV file");
  app->add_option("data", args->data, "CSV file with a header row ('-' reads standard input)")->required();
  app->add_option("-o,--output", args->output, "Model file to write (default: standard output)");
  add_fit_flags(*app, args->fit, true);
  app->add_option("--reference", args->fit.reference,
                  "Scoring reference recorded in the model: chi2, new-rows or fitting-rows "
                  "(default: new-rows when the fit has rows enough; docs/calibration.md)");
  add_dialect_flags(*app, args->dialect);
  add_output_flags(*app, args->out, "Also list the columns left out of the fit and why");
  return {app, [args]() {
            if (args->out.json && args->output == "-")
              throw CliError(kExitUsage, "--json prints the summary on standard output: give the model a file with -o");
            Progress progress(progress_wanted(args->out.quiet || args->out.json));
            const std::string& method = args->fit.method;
            const bool streams = method == "classical" || method == "ledoit-wolf" || method == "oas";
            const Fitted f = streams ? fit_streaming(*args, progress) : fit_in_memory(*args, progress);
            progress.finish();
            write_text_file(args->output, model_text(f.model.get()));
            const auto summary = fit_summary(f, args->fit.method);
            std::ostringstream human;
            human << "fitted " << args->fit.method << " on " << summary["rows_used"] << " of " << f.rows_read
                  << " rows, " << f.columns.size() << " columns";
            if (summary["rows_dropped"].get<int64_t>() > 0)
              human << " (" << summary["rows_dropped"] << " rows with missing cells dropped)";
            human << "\n";
            if (args->out.verbose)
              for (const auto& s : f.skipped) human << "  skipped column " << s << "\n";
            if (args->output != "-") human << "model written to " << args->output << "\n";
            emit_summary(args->out, human.str(), summary);
            // A mixture that stopped at its iteration cap is still written; the
            // exit code says it did not converge.
            return warn_not_converged(f.model.get(), "fit", args->data) ? static_cast<int>(kExitNumerical)
                                                                        : static_cast<int>(kExitOk);
          }};
}

}  // namespace ellipsa::cli
