// ellipsa screen: robust fit and scoring in one step, optionally per group
// (e.g. per mould), with a short readable summary of the flagged rows.
#include <algorithm>
#include <map>
#include <sstream>

#include "atomic_output.hpp"
#include "commands.hpp"
#include "csv_writer.hpp"

namespace ellipsa::cli {
namespace {

struct ScreenArgs {
  std::string data;
  std::string output;
  std::string by;
  double level = 0.975;
  std::string reference;  // "" = fitting-rows, or chi2 for a mixture
  bool fail_on_flag = false;
  std::string digits = "10";
  FitFlags fit;
  DialectFlags dialect;
  OutputFlags out;
};

// Removes a used column from a table (values and names).
void drop_column(Table& t, const std::string& name) {
  const auto it = std::find(t.columns.begin(), t.columns.end(), name);
  if (it == t.columns.end()) return;
  const auto j = static_cast<std::size_t>(it - t.columns.begin());
  const std::size_t p = t.columns.size();
  std::vector<double> kept;
  kept.reserve(t.values.size() / p * (p - 1));
  for (std::size_t k = 0; k < t.values.size(); ++k)
    if (k % p != j) kept.push_back(t.values[k]);
  t.values = std::move(kept);
  t.columns.erase(it);
  if (t.columns.empty()) throw CliError(kExitData, "no numeric columns left besides the --by column");
}

struct GroupResult {
  std::string name;
  std::vector<std::size_t> rows;  // rows of the table
  ModelPtr model;
  ScoreColumns cols;
  ScoreBlock block;
  std::optional<ellipsa_shape_test> shape;  // Mardia on the rows of the fit
};

}  // namespace

Command add_screen(CLI::App& parent) {
  auto a = std::make_shared<ScreenArgs>();
  a->fit.method = "mcd";
  CLI::App* app = parent.add_subcommand(
      "screen", "Robust fit and scoring in one step: which rows do not fit the bulk of the data?");
  app->add_option("data", a->data, "CSV file with a header row ('-' reads standard input)")->required();
  app->add_option("-o,--output", a->output, "Scored CSV to write (default: none, summary only)");
  app->add_option("--by", a->by, "Screen each group of this column separately (e.g. one per mould or line)");
  app->add_option("--level", a->level, "Flag rows whose robust distance exceeds the reference's limit at this level")
      ->capture_default_str();
  app->add_option("--reference", a->reference,
                  "Limit the flags come from: fitting-rows (the default: the rows screened made the fit), "
                  "chi2 or new-rows; a mixture has chi2 only (its default)");
  app->add_flag("--fail-on-flag", a->fail_on_flag, "Exit with code 5 when any row is flagged");
  add_digits_flag(*app, a->digits);
  add_fit_flags(*app, a->fit, true);
  add_dialect_flags(*app, a->dialect);
  add_output_flags(*app, a->out);
  return {app, [a]() {
            const int digits = parse_digits(a->digits);
            // A mixture's flags use the chi-square limit only (the C interface
            // refuses the Hotelling references for mixtures): it is their default.
            const bool mixture = a->fit.method == "mixture";
            if (a->reference.empty()) a->reference = mixture ? "chi2" : "fitting-rows";
            const int32_t reference = parse_reference(a->reference);
            if (mixture && reference != ELLIPSA_REFERENCE_CHI2 && reference != ELLIPSA_REFERENCE_MODEL)
              throw CliError(kExitUsage, "--reference " + a->reference +
                                             ": a mixture is screened against the chi2 limit only "
                                             "(leave --reference out, or give chi2)");
            if (!(a->level > 0.0 && a->level < 1.0)) throw CliError(kExitUsage, "--level must lie in (0, 1)");
            // The group column is checked against the header here (a usage
            // error), and taken out of the variables if it happens to be numeric.
            Table t = read_table(a->data, a->dialect.to_options(), true);
            const auto by_it = std::find(t.header.begin(), t.header.end(), a->by);
            if (!a->by.empty() && by_it == t.header.end())
              throw CliError(kExitUsage, "--by: no column named '" + a->by + "'");
            const auto by_index = static_cast<std::size_t>(by_it - t.header.begin());
            if (!a->by.empty()) drop_column(t, a->by);

            std::map<std::string, std::vector<std::size_t>> members;
            for (std::size_t r = 0; r < static_cast<std::size_t>(t.rows()); ++r)
              members[a->by.empty() ? std::string("all rows") : t.fields[r][by_index]].push_back(r);

            const auto p = t.columns.size();
            std::vector<GroupResult> groups;
            for (auto& [name, rows] : members) {
              GroupResult g;
              g.name = name;
              g.rows = rows;
              std::vector<double> values;
              values.reserve(rows.size() * p);
              for (auto r : rows)
                values.insert(values.end(), t.values.begin() + static_cast<std::ptrdiff_t>(r * p),
                              t.values.begin() + static_cast<std::ptrdiff_t>((r + 1) * p));
              const auto x =
                  ellipsa_matrix_row_major(values.data(), static_cast<int64_t>(rows.size()), static_cast<int64_t>(p));
              Progress progress(progress_wanted(a->out.quiet || a->out.json));
              const auto fit_options = make_fit_options(a->fit, t.columns, &progress);
              ellipsa_model* raw = nullptr;
              check(ellipsa_model_fit(&raw, &x, fit_options.get()),
                    a->by.empty() ? "fitting" : "fitting group " + a->by + " = " + name);
              g.model.reset(raw);
              progress.finish();
              g.cols = score_columns(g.model.get());
              g.block.score(g.model.get(), g.cols, x, a->level, reference);
              g.shape = model_shape(g.model.get(), x);
              groups.push_back(std::move(g));
            }

            // Per table row: which group and which position inside it.
            std::vector<std::pair<std::size_t, std::size_t>> where(static_cast<std::size_t>(t.rows()));
            for (std::size_t gi = 0; gi < groups.size(); ++gi)
              for (std::size_t k = 0; k < groups[gi].rows.size(); ++k) where[groups[gi].rows[k]] = {gi, k};

            if (!a->output.empty()) {
              AtomicOutput out(a->output);
              CsvWriteOptions wo;
              wo.name = out.to_stdout() ? std::string("standard output") : out.path();
              wo.digits = digits;
              CsvWriter writer(out.stream(), wo);
              std::vector<std::string> header = t.header;
              const auto& names = groups.front().cols.names;
              header.insert(header.end(), names.begin(), names.end());
              writer.header(header);
              for (std::size_t r = 0; r < static_cast<std::size_t>(t.rows()); ++r) {
                for (const auto& f : t.fields[r]) writer.text(f);
                const auto& [gi, k] = where[r];
                const auto& b = groups[gi].block;
                writer.number(b.d2[k]).number(b.p_value[k]).integer(b.flag[k]).integer(b.observed[k]);
                for (std::size_t j = 0; j < p; ++j) writer.number(b.contribution[k * p + j]);
                writer.end_row();
              }
              writer.flush();
              out.commit();
            }

            std::ostringstream human;
            nlohmann::json machine{{"method", a->fit.method},
                                   {"level", a->level},
                                   {"rows", t.rows()},
                                   {"columns", t.columns},
                                   {"groups", nlohmann::json::array()}};
            int64_t total_flagged = 0;
            bool not_converged = false;
            machine["reference"] = a->reference;
            human << "screened " << t.rows() << " rows on " << p << " columns with " << a->fit.method << " at level "
                  << a->level << (a->by.empty() ? "" : ", per " + a->by) << "\n";
            for (const auto& g : groups) {
              int64_t used = 0, dropped = 0;
              check(ellipsa_model_rows(&used, &dropped, g.model.get()), "reading the model");
              nlohmann::json flagged = nlohmann::json::array();
              std::ostringstream lines;
              for (std::size_t k = 0; k < g.rows.size(); ++k) {
                if (g.block.flag[k] != 1) continue;
                const auto r = g.rows[k];
                const std::string who = t.fields[r].empty() ? "" : t.fields[r][0];
                const std::string top = top_contributors(g.block, g.cols, k, 3);
                lines << "    line " << t.lines[r] << " (" << who << "): squared distance " << g.block.d2[k]
                      << "; most from " << top << "\n";
                flagged.push_back({{"line", t.lines[r]},
                                   {"row", r + 1},
                                   {"id", who},
                                   {"sq_distance", g.block.d2[k]},
                                   {"p_value", g.block.p_value[k]},
                                   {"top", top}});
              }
              total_flagged += static_cast<int64_t>(flagged.size());
              human << "  " << (a->by.empty() ? "" : a->by + " = ") << g.name << ": " << used << " rows used";
              if (dropped > 0)
                human << " (" << dropped << " with missing cells left out of the fit, scored on observed cells)";
              const std::string limit = reference_description(g.model.get(), reference);
              human << ", " << flagged.size() << " flagged by the " << limit << "\n" << lines.str();
              machine["groups"].push_back({{"group", g.name},
                                           {"rows_used", used},
                                           {"rows_dropped", dropped},
                                           {"limit", limit},
                                           {"flagged", flagged}});
              if (warn_not_converged(g.model.get(), "screen",
                                     a->by.empty() ? a->data : a->data + ", " + a->by + " = " + g.name)) {
                not_converged = true;
                machine["groups"].back()["converged"] = false;
              }
              if (g.shape) {
                human << "    bulk shape (Mardia): " << shape_numbers(*g.shape) << "\n";
                for (const auto& sentence : shape_sentences(*g.shape)) human << "    " << sentence << "\n";
                machine["groups"].back()["shape"] = shape_json(*g.shape);
              }
            }
            machine["flagged"] = total_flagged;
            if (!a->output.empty()) human << "scored rows written to " << a->output << "\n";
            human << "A flag is evidence to investigate, not a verdict on a part, a batch or a person.\n";
            emit_summary(a->out, human.str(), machine);
            // A mixture that did not converge (4) outranks flagged rows (5).
            if (not_converged) return static_cast<int>(kExitNumerical);
            return a->fail_on_flag && total_flagged > 0 ? static_cast<int>(kExitFlagged) : static_cast<int>(kExitOk);
          }};
}

}  // namespace ellipsa::cli
