// ellipsa score: stream a CSV file through a model file, appending the scores
// to every row. Memory stays bounded by the chunk size, whatever the file length.
#include <sstream>

#include "atomic_output.hpp"
#include "commands.hpp"
#include "csv_writer.hpp"
#include "score_stream.hpp"

namespace ellipsa::cli {
namespace {

struct ScoreArgs {
  std::string model;
  std::string data;
  std::string output = "-";
  double level = 0.975;
  std::string reference = "model";
  bool fail_on_flag = false;
  std::string digits = "10";
  DialectFlags dialect;
  OutputFlags out;
};

constexpr std::size_t kChunkRows = 8192;

}  // namespace

Command add_score(CLI::App& parent) {
  auto a = std::make_shared<ScoreArgs>();
  CLI::App* app = parent.add_subcommand("score", "Score the rows of a CSV file against a model file");
  app->add_option("model", a->model, "Model file written by 'ellipsa fit'")->required();
  app->add_option("data", a->data, "CSV file to score ('-' reads standard input)")->required();
  app->add_option("-o,--output", a->output, "Scored CSV to write (default: standard output)");
  app->add_option("--level", a->level, "Flag rows whose distance exceeds the reference's limit at this level")
      ->capture_default_str();
  app->add_option("--reference", a->reference,
                  "Limit the flags come from: model (the one the model file records), chi2, new-rows "
                  "(rows not in the fit) or fitting-rows (the rows that made the fit)")
      ->capture_default_str();
  app->add_flag("--fail-on-flag", a->fail_on_flag, "Exit with code 5 when any row is flagged");
  add_digits_flag(*app, a->digits);
  add_dialect_flags(*app, a->dialect);
  add_output_flags(*app, a->out);
  return {
      app, [a]() {
        const int digits = parse_digits(a->digits);
        const int32_t reference = parse_reference(a->reference);
        if (a->out.json && a->output == "-")
          throw CliError(kExitUsage, "--json prints the summary on standard output: give the scores a file with -o");
        if (!(a->level > 0.0 && a->level < 1.0)) throw CliError(kExitUsage, "--level must lie in (0, 1)");
        int32_t threads = 1;  // before any output: a bad ELLIPSA_THREADS leaves nothing behind
        check(ellipsa_threads_resolve(&threads, 0), "choosing the thread count");
        const ModelPtr model = load_model_file(a->model);
        const ScoreColumns cols = score_columns(model.get());
        CsvOptions options = a->dialect.to_options();
        options.columns = model_columns(model.get());
        options.keep_row_text = true;
        CsvReader reader(a->data, options);
        std::vector<std::string> header = reader.header();
        header.insert(header.end(), cols.names.begin(), cols.names.end());

        AtomicOutput out(a->output);
        CsvWriteOptions wo;
        wo.name = out.to_stdout() ? std::string("standard output") : out.path();
        wo.separator = reader.separator();
        wo.decimal = options.decimal;
        wo.digits = digits;
        CsvWriter writer(out.stream(), wo);
        writer.header(header);

        Progress progress(progress_wanted(a->out.quiet || a->out.json));
        ScoreStreamSettings settings;
        settings.level = a->level;
        settings.reference = reference;
        settings.chunk_rows = kChunkRows;
        settings.threads = threads;
        settings.write_behind = [&out] { out.write_behind(); };
        ScoreTally tally;
        score_stream(reader, writer, model.get(), cols, settings, progress, tally);
        const int64_t rows = tally.rows, flagged = tally.flagged, unscorable = tally.unscorable;
        progress.finish();
        if (rows == 0) throw CliError(kExitData, reader.source_name() + ": the file has a header but no data rows");
        writer.flush();
        out.commit();
        std::ostringstream human;
        const std::string limit = reference_description(model.get(), reference);
        human << "scored " << rows << " rows; " << flagged << " flagged at level " << a->level << " by the " << limit;
        if (unscorable > 0) human << "; " << unscorable << " rows with no observed value";
        human << "\n";
        for (const std::string& entry : tally.first_flags) human << entry;
        if (flagged > 20) human << "  ... and " << flagged - 20 << " more\n";
        if (a->output != "-") human << "scores written to " << a->output << "\n";
        ellipsa_method method = ELLIPSA_METHOD_CLASSICAL;
        check(ellipsa_model_describe(nullptr, &method, nullptr, nullptr, model.get()), "reading the model");
        if (method == ELLIPSA_METHOD_MRCD)
          // Measured in docs/calibration.md: 97% of clean new rows flagged at
          // n = 30, p = 20; no calibrated new-rows reference exists for MRCD.
          human << "note: an mrcd profile is calibrated on its own fitting rows only; on new rows its flag "
                   "rate is not calibrated and can be far above the level when rows were few for the "
                   "columns (docs/calibration.md)\n";
        emit_summary(a->out, human.str(),
                     {{"rows", rows},
                      {"flagged", flagged},
                      {"unscorable", unscorable},
                      {"level", a->level},
                      {"limit", limit},
                      {"output", a->output}});
        return a->fail_on_flag && flagged > 0 ? static_cast<int>(kExitFlagged) : static_cast<int>(kExitOk);
      }};
}

}  // namespace ellipsa::cli
