// ellipsa cluster: find the regimes in the data (a Gaussian mixture chosen by
// BIC over a range of K and structures), show the model-choice table and the
// size of each regime, and optionally write the model and the memberships.
#include <cmath>
#include <cstdio>
#include <sstream>

#include "atomic_output.hpp"
#include "commands.hpp"
#include "csv_writer.hpp"

namespace ellipsa::cli {
namespace {

struct ClusterArgs {
  std::string data;
  std::string model_out;
  std::string scores_out;
  double level = 0.975;
  std::string digits = "10";
  FitFlags fit;
  DialectFlags dialect;
  OutputFlags out;
};

}  // namespace

Command add_cluster(CLI::App& parent) {
  auto a = std::make_shared<ClusterArgs>();
  a->fit.method = "mixture";
  a->fit.components = "1-6";
  a->fit.structure = "all";
  a->fit.components_default = true;
  CLI::App* app = parent.add_subcommand(
      "cluster", "Find regimes: fit Gaussian mixtures over a range of K and structures, keep the best by BIC");
  app->add_option("data", a->data, "CSV file with a header row ('-' reads standard input)")->required();
  app->add_option("-o,--output", a->model_out, "Model file of the chosen mixture to write");
  app->add_option("--scores", a->scores_out, "CSV of every row with its component, memberships and flags");
  app->add_option("--level", a->level, "Level of the distance flag in the scores")->capture_default_str();
  add_digits_flag(*app, a->digits);
  add_fit_flags(*app, a->fit, false);
  add_dialect_flags(*app, a->dialect);
  add_output_flags(*app, a->out);
  return {
      app, [a]() {
        const int digits = parse_digits(a->digits);
        const Table t = read_table(a->data, a->dialect.to_options(), !a->scores_out.empty());
        Progress progress(progress_wanted(a->out.quiet || a->out.json));
        const auto options = make_fit_options(a->fit, t.columns, &progress);
        const auto view = t.view();
        ellipsa_model* raw = nullptr;
        check(ellipsa_model_fit(&raw, &view, options.get()), "clustering " + a->data);
        const ModelPtr m(raw);
        progress.finish();
        if (!a->model_out.empty()) write_text_file(a->model_out, model_text(m.get()));

        int64_t count = 0;
        check(ellipsa_model_selection(nullptr, 0, &count, m.get()), "reading the model");
        std::vector<ellipsa_candidate> table(static_cast<std::size_t>(count));
        for (auto& c : table) c.struct_size = sizeof(ellipsa_candidate);
        check(ellipsa_model_selection(table.data(), count, &count, m.get()), "reading the model");

        const ScoreColumns cols = score_columns(m.get());
        ScoreBlock block;
        block.score(m.get(), cols, view, a->level, ELLIPSA_REFERENCE_MODEL);
        std::vector<int64_t> sizes(static_cast<std::size_t>(cols.components), 0);
        int64_t low = 0;
        for (std::size_t r = 0; r < static_cast<std::size_t>(t.rows()); ++r) {
          if (block.component[r] >= 0) ++sizes[static_cast<std::size_t>(block.component[r])];
          if (block.low_density[r] == 1) ++low;
        }

        std::ostringstream h;
        nlohmann::json j{{"rows", t.rows()},
                         {"columns", t.columns},
                         {"candidates", nlohmann::json::array()},
                         {"components", nlohmann::json::array()},
                         {"low_density_rows", low}};
        h << "model choice over " << count << " candidates (lower BIC is better; * = chosen):\n"
          << "     K  structure      log-lik          BIC          ICL  converged\n";
        for (std::size_t i = 0; i < table.size(); ++i) {
          const auto& c = table[i];
          const char* reason = nullptr;
          check(ellipsa_candidate_explain(&reason, m.get(), static_cast<int64_t>(i)), "reading the model");
          char buf[160];
          if (*reason != '\0')  // a candidate that could not be fitted: its reason instead of numbers
            std::snprintf(buf, sizeof buf, "  %s %3d  %-9s  not fitted: ", c.chosen ? "*" : " ", c.components,
                          ellipsa_structure_name(c.structure));
          else
            std::snprintf(buf, sizeof buf, "  %s %3d  %-9s %12.3f %12.3f %12.3f  %s", c.chosen ? "*" : " ",
                          c.components, ellipsa_structure_name(c.structure), c.log_likelihood, c.bic, c.icl,
                          c.converged ? "yes" : "no (iteration cap)");
          h << buf << reason << "\n";
          j["candidates"].push_back(
              {{"components", c.components},
               {"structure", ellipsa_structure_name(c.structure)},
               {"log_likelihood",
                std::isfinite(c.log_likelihood) ? nlohmann::json(c.log_likelihood) : nlohmann::json()},
               {"bic", std::isfinite(c.bic) ? nlohmann::json(c.bic) : nlohmann::json()},
               {"icl", std::isfinite(c.icl) ? nlohmann::json(c.icl) : nlohmann::json()},
               {"converged", c.converged == 1},
               {"chosen", c.chosen == 1}});
          if (*reason != '\0') j["candidates"].back()["reason"] = reason;
        }
        const auto p = static_cast<std::size_t>(cols.p);
        std::vector<double> loc(p);
        for (int32_t k = 0; k < cols.components; ++k) {
          double w = 0.0;
          check(ellipsa_model_component(loc.data(), cols.p, nullptr, 0, &w, m.get(), k), "reading the model");
          h << "component " << k + 1 << ": weight " << w << ", " << sizes[static_cast<std::size_t>(k)]
            << " rows most likely here; centre";
          for (std::size_t c = 0; c < p; ++c) h << (c ? ", " : " ") << t.columns[c] << " " << loc[c];
          h << "\n";
          j["components"].push_back({{"weight", w}, {"rows", sizes[static_cast<std::size_t>(k)]}, {"location", loc}});
        }
        h << low << " rows have a log-density below the model's 2.5% cutoff\n";
        if (!a->model_out.empty()) h << "model written to " << a->model_out << "\n";

        if (!a->scores_out.empty()) {
          AtomicOutput out(a->scores_out);
          CsvWriteOptions wo;
          wo.name = out.to_stdout() ? std::string("standard output") : out.path();
          wo.digits = digits;
          CsvWriter w(out.stream(), wo);
          std::vector<std::string> header = t.header;
          header.insert(header.end(), cols.names.begin(), cols.names.end());
          w.header(header);
          const auto K = static_cast<std::size_t>(cols.components);
          for (std::size_t r = 0; r < static_cast<std::size_t>(t.rows()); ++r) {
            for (const auto& f : t.fields[r]) w.text(f);
            w.integer(block.component[r] + 1);
            for (std::size_t k = 0; k < K; ++k) w.number(block.membership[r * K + k]);
            w.number(block.log_density[r]).integer(block.low_density[r]);
            w.number(block.d2[r]).number(block.p_value[r]).integer(block.flag[r]).integer(block.observed[r]);
            for (std::size_t c = 0; c < p; ++c) w.number(block.contribution[r * p + c]);
            w.end_row();
          }
          w.flush();
          out.commit();
          h << "memberships written to " << a->scores_out << "\n";
        }
        double converged = 0.0;
        check(ellipsa_model_diagnostic(&converged, m.get(), "converged"), "reading the model");
        j["converged"] = converged != 0.0;
        emit_summary(a->out, h.str(), j);
        return warn_not_converged(m.get(), "cluster", a->data) ? static_cast<int>(kExitNumerical)
                                                               : static_cast<int>(kExitOk);
      }};
}

}  // namespace ellipsa::cli
