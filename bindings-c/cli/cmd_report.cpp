// ellipsa report: one self-contained HTML page on how the rows of a CSV file
// sit against a model file: which rows are flagged, what makes them stand out,
// and how the rest look. The numbers come through the C interface only; the
// page itself is laid out by report/html.cpp.
#include <algorithm>
#include <cmath>
#include <sstream>

#include "commands.hpp"
#include "number_parse.hpp"
#include "report/html.hpp"

namespace ellipsa::cli {
namespace {

struct ReportArgs {
  std::string model;
  std::string data;
  std::string output = "-";
  std::string title;
  double level = 0.975;
  std::vector<std::string> matrix_columns;
  DialectFlags dialect;
  OutputFlags out;
};

constexpr std::size_t kMaxMatrixColumns = 6;

double chi2_quantile(double probability, double df) {
  double q = 0.0;
  check(ellipsa_chi2_quantile(&q, probability, df), "chi-square quantile");
  return q;
}

// The first header column that holds text: not a model variable, and with a
// cell that is neither a number nor a missing marker. It names the rows (an id).
std::ptrdiff_t id_column(const Table& t, const std::vector<std::string>& variables, char decimal) {
  for (std::size_t c = 0; c < t.header.size(); ++c) {
    if (std::find(variables.begin(), variables.end(), t.header[c]) != variables.end()) continue;
    for (const auto& fields : t.fields) {
      double v = 0.0;
      if (c < fields.size() && parse_cell(fields[c], decimal, v) == CellValue::invalid)
        return static_cast<std::ptrdiff_t>(c);
    }
  }
  return -1;
}

std::string number_text(double v, const char* format = "%.4g") {
  char buf[48];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

// What the summary says about the model, most telling first (the first two
// also go on the page's "Model" tile).
std::vector<std::pair<std::string, std::string>> model_facts(const ellipsa_model* m, int32_t components) {
  std::vector<std::pair<std::string, std::string>> facts;
  int64_t used = 0, dropped = 0;
  check(ellipsa_model_rows(&used, &dropped, m), "reading the model");
  facts.emplace_back("fitted on",
                     std::to_string(used) + " rows" +
                         (dropped > 0 ? " (" + std::to_string(dropped) + " dropped for missing cells)" : ""));
  auto diagnostic = [&](const char* name, double& v) { return ellipsa_model_diagnostic(&v, m, name) == ELLIPSA_OK; };
  double v = 0.0;
  if (diagnostic("h", v)) facts.emplace_back("h", number_text(v, "%.0f") + " rows in the core subset");
  if (diagnostic("shrinkage_intensity", v)) facts.emplace_back("shrinkage", number_text(v));
  if (components > 1 || diagnostic("bic", v)) facts.emplace_back("components", std::to_string(components));
  if (diagnostic("bic", v)) facts.emplace_back("BIC", number_text(v, "%.1f"));
  if (diagnostic("icl", v)) facts.emplace_back("ICL", number_text(v, "%.1f"));
  if (diagnostic("consistency_factor", v)) facts.emplace_back("consistency factor", number_text(v));
  if (diagnostic("log_likelihood", v)) facts.emplace_back("log-likelihood", number_text(v, "%.1f"));
  return facts;
}

std::vector<ReportCandidate> model_choice(const ellipsa_model* m) {
  int64_t count = 0;
  check(ellipsa_model_selection(nullptr, 0, &count, m), "reading the model");
  std::vector<ellipsa_candidate> table(static_cast<std::size_t>(count));
  for (auto& c : table) c.struct_size = sizeof(ellipsa_candidate);
  check(ellipsa_model_selection(table.data(), count, &count, m), "reading the model");
  std::vector<ReportCandidate> out;
  for (const auto& c : table)
    out.push_back({c.components, ellipsa_structure_name(c.structure), c.bic, c.icl, c.chosen == 1});
  return out;
}

// A classical fit of the same rows, scored, for the distance-distance plot. It
// is context, not the verdict: when it is impossible (more variables than
// rows, a singular covariance) the page says why and the report goes on.
bool classical_distances(const Table& t, ReportInput& in, double level) {
  try {
    FitFlags classical;  // method "classical", divisor n-1, rows with missing cells dropped
    const auto options = make_fit_options(classical, t.columns);
    const auto x = t.view();
    ellipsa_model* raw = nullptr;
    check(ellipsa_model_fit(&raw, &x, options.get()), "classical fit");
    const ModelPtr m(raw);
    const ScoreColumns cols = score_columns(m.get());
    ScoreBlock block;
    block.score(m.get(), cols, x, level, ELLIPSA_REFERENCE_MODEL);
    for (std::size_t r = 0; r < in.rows.size(); ++r) in.rows[r].classical_d2 = block.d2[r];
    return true;
  } catch (const CliError& e) {
    in.classical_note = e.what();
    for (auto& row : in.rows) row.classical_d2 = NAN;
    return false;
  }
}

}  // namespace

Command add_report(CLI::App& parent) {
  auto a = std::make_shared<ReportArgs>();
  CLI::App* app = parent.add_subcommand(
      "report", "Write one self-contained HTML page on how the rows of a CSV file sit against a model file");
  app->add_option("model", a->model, "Model file written by 'ellipsa fit'")->required();
  app->add_option("data", a->data, "CSV file with the rows to show ('-' reads standard input)")->required();
  app->add_option("-o,--output", a->output, "HTML file to write (default: standard output)");
  app->add_option("--level", a->level, "Flag rows whose distance exceeds this chi-square quantile")
      ->capture_default_str();
  app->add_option("--title", a->title, "Heading of the page (default: names the data file)");
  app->add_option("--columns", a->matrix_columns,
                  "Variables for the scatter-plot matrix, 2 to 6 of the model's (default: up to 4 that contribute "
                  "most to the flagged rows)")
      ->delimiter(',');
  app->add_option("--separator", a->dialect.separator, "Field separator: comma, semicolon or tab (default: detected)");
  app->add_flag("--decimal-comma", a->dialect.decimal_comma,
                "Numbers use a decimal comma (then the separator is not a comma)");
  add_output_flags(*app, a->out);
  return {app, [a]() {
            if (a->out.json && a->output == "-")
              throw CliError(kExitUsage, "--json prints the summary on standard output: give the page a file with -o");
            if (!(a->level > 0.0 && a->level < 1.0)) throw CliError(kExitUsage, "--level must lie in (0, 1)");
            const ModelPtr model = load_model_file(a->model);
            const ScoreColumns cols = score_columns(model.get());
            ellipsa_method method = 0;
            check(ellipsa_model_describe(nullptr, &method, nullptr, nullptr, model.get()), "reading the model");

            ReportInput in;
            in.columns = model_columns(model.get());
            for (const auto& name : a->matrix_columns) {
              const auto it = std::find(in.columns.begin(), in.columns.end(), name);
              if (it == in.columns.end())
                throw CliError(kExitUsage, "--columns: the model has no variable '" + name + "'");
              in.matrix_columns.push_back(static_cast<std::size_t>(it - in.columns.begin()));
            }
            if (!a->matrix_columns.empty() &&
                (in.matrix_columns.size() < 2 || in.matrix_columns.size() > kMaxMatrixColumns))
              throw CliError(kExitUsage, "--columns: name 2 to 6 of the model's variables");

            CsvOptions options = a->dialect.to_options();
            options.columns = in.columns;
            const Table t = read_table(a->data, options, true);
            ScoreBlock block;
            block.score(model.get(), cols, t.view(), a->level, ELLIPSA_REFERENCE_MODEL);

            const auto p = static_cast<std::size_t>(cols.p);
            const auto n = static_cast<std::size_t>(t.rows());
            in.title = a->title.empty()
                           ? "Screening report: " + (a->data == "-" ? std::string("standard input") : a->data)
                           : a->title;
            in.model_file = a->model;
            in.data_file = a->data == "-" ? "standard input" : a->data;
            in.version = ellipsa_version();
            in.method = ellipsa_method_name(method);
            in.mixture = cols.kind == ELLIPSA_KIND_MIXTURE;
            in.p = cols.p;
            in.level = a->level;
            in.cutoff = chi2_quantile(a->level, static_cast<double>(cols.p));
            in.cutoff_2d = chi2_quantile(a->level, 2.0);
            in.facts = model_facts(model.get(), cols.components);
            // Mardia's check needs the fitting rows: shown when the data are the model's own.
            if (const auto shape = model_shape(model.get(), t.view())) {
              in.facts.emplace_back("bulk shape (Mardia)", shape_numbers(*shape));
              std::string note;
              for (const auto& sentence : shape_sentences(*shape)) note += (note.empty() ? "" : " ") + sentence;
              if (!note.empty()) in.facts.emplace_back("about the shape", note);
            }
            in.values = t.values;
            in.contribution = block.contribution;

            const auto id = id_column(t, in.columns, options.decimal);
            in.rows.resize(n);
            for (std::size_t r = 0; r < n; ++r) {
              ReportRow& row = in.rows[r];
              row.line = t.lines[r];
              if (id >= 0 && static_cast<std::size_t>(id) < t.fields[r].size())
                row.id = t.fields[r][static_cast<std::size_t>(id)];
              row.d2 = block.d2[r];
              row.p_value = block.p_value[r];
              row.observed = block.observed[r];
              row.scorable = block.flag[r] != -1;
              row.low_density = in.mixture && block.low_density[r] == 1;
              row.over_limit = block.flag[r] == 1;
              row.flagged = row.over_limit || row.low_density;
              if (in.mixture) row.component = block.component[r];
              if (row.flagged) row.top = top_contributors(block, cols, r, 3);
            }
            in.have_classical = classical_distances(t, in, a->level);

            for (int32_t k = 0; k < cols.components; ++k) {
              ReportComponent c;
              c.location.resize(p);
              c.scatter.resize(p * p);
              check(ellipsa_model_component(c.location.data(), cols.p, c.scatter.data(), cols.p * cols.p, &c.weight,
                                            model.get(), k),
                    "reading the model");
              in.components.push_back(std::move(c));
            }
            if (in.mixture) in.candidates = model_choice(model.get());

            // Q-Q points: fully observed rows, plotting positions (i - 1/2) / m.
            for (std::size_t r = 0; r < n; ++r)
              if (in.rows[r].scorable && in.rows[r].observed == cols.p) in.quantiles.push_back({0.0, in.rows[r].d2, r});
            std::stable_sort(in.quantiles.begin(), in.quantiles.end(),
                             [](const auto& x, const auto& y) { return x.observed < y.observed; });
            const double m = static_cast<double>(in.quantiles.size());
            for (std::size_t i = 0; i < in.quantiles.size(); ++i)
              in.quantiles[i].expected = chi2_quantile((static_cast<double>(i) + 0.5) / m, static_cast<double>(cols.p));

            write_text_file(a->output, render_report(in));

            int64_t flagged = 0, unscorable = 0;
            nlohmann::json lines = nlohmann::json::array();
            for (const auto& row : in.rows) {
              unscorable += !row.scorable;
              if (!row.flagged) continue;
              ++flagged;
              lines.push_back(row.line);
            }
            std::ostringstream human;
            human << "report on " << n << " rows: " << flagged << " flagged at level " << a->level << " (" << in.method
                  << " model)";
            if (!in.have_classical) human << "; no distance-distance plot: " << in.classical_note;
            human << "\n";
            if (a->output != "-") human << "report written to " << a->output << "\n";
            emit_summary(a->out, human.str(),
                         {{"rows", n},
                          {"flagged", flagged},
                          {"unscorable", unscorable},
                          {"level", a->level},
                          {"method", in.method},
                          {"flagged_lines", lines},
                          {"classical_plot", in.have_classical},
                          {"output", a->output}});
            return static_cast<int>(kExitOk);
          }};
}

}  // namespace ellipsa::cli
