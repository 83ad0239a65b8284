// ellipsa inspect: a model file in readable form.
#include <cmath>
#include <cstdio>
#include <sstream>

#include "commands.hpp"

namespace ellipsa::cli {

Command add_inspect(CLI::App& parent) {
  auto path = std::make_shared<std::string>();
  auto out = std::make_shared<OutputFlags>();
  auto data = std::make_shared<std::string>();
  auto dialect = std::make_shared<DialectFlags>();
  CLI::App* app = parent.add_subcommand("inspect", "Show what a model file holds");
  app->add_option("model", *path, "Model file ('-' reads standard input)")->required();
  app->add_option(
      "--data", *data,
      "The CSV file the model was fitted on: also check whether the rows of the fit look elliptical (Mardia)");
  add_dialect_flags(*app, *dialect);
  add_output_flags(*app, *out);
  return {app, [path, out, data, dialect]() {
            const ModelPtr m = load_model_file(*path);
            int32_t kind = 0, components = 0;
            ellipsa_method method = 0;
            int64_t p = 0, used = 0, dropped = 0;
            check(ellipsa_model_describe(&kind, &method, &p, &components, m.get()), "reading the model");
            check(ellipsa_model_rows(&used, &dropped, m.get()), "reading the model");
            const auto names = model_columns(m.get());
            std::ostringstream h;
            nlohmann::json j{{"kind", kind == ELLIPSA_KIND_MIXTURE ? "mixture" : "gaussian"},
                             {"method", ellipsa_method_name(method)},
                             {"columns", names},
                             {"rows_used", used},
                             {"rows_dropped", dropped},
                             {"components", nlohmann::json::array()}};
            h << "model: " << ellipsa_method_name(method) << ", " << p << " columns, fitted on " << used << " rows";
            if (dropped > 0) h << " (" << dropped << " dropped for missing cells)";
            h << "\n";
            for (const char* name : {"shrinkage_intensity", "h", "consistency_factor", "reweight_factor",
                                     "log_likelihood", "bic", "icl", "iterations", "converged", "log_det"}) {
              double v = 0.0;
              if (ellipsa_model_diagnostic(&v, m.get(), name) == ELLIPSA_OK) {
                h << "  " << name << ": " << v << "\n";
                j[name] = v;
              }
            }
            std::vector<double> loc(static_cast<std::size_t>(p)), sc(static_cast<std::size_t>(p * p));
            for (int32_t k = 0; k < components; ++k) {
              double w = 1.0;
              check(ellipsa_model_component(loc.data(), p, sc.data(), p * p, &w, m.get(), k), "reading the model");
              if (components > 1) h << "component " << k + 1 << " (weight " << w << ")\n";
              char buf[96];
              h << "  " << std::string(24, ' ') << "   location   std.dev.\n";
              for (int64_t i = 0; i < p; ++i) {
                std::snprintf(buf, sizeof buf, "  %-24.24s %10.5g %10.5g\n", names[static_cast<std::size_t>(i)].c_str(),
                              loc[static_cast<std::size_t>(i)], std::sqrt(sc[static_cast<std::size_t>(i * p + i)]));
                h << buf;
              }
              j["components"].push_back({{"weight", w}, {"location", loc}});
            }
            if (kind == ELLIPSA_KIND_MIXTURE) {
              int64_t count = 0;
              check(ellipsa_model_selection(nullptr, 0, &count, m.get()), "reading the model");
              std::vector<ellipsa_candidate> table(static_cast<std::size_t>(count));
              for (auto& c : table) c.struct_size = sizeof(ellipsa_candidate);
              check(ellipsa_model_selection(table.data(), count, &count, m.get()), "reading the model");
              if (count > 1) {
                h << "model choice (lower BIC is better):\n     K  structure        logL          BIC          ICL\n";
                for (const auto& c : table) {
                  char buf[128];
                  std::snprintf(buf, sizeof buf, "  %s %3d  %-9s %12.4f %12.4f %12.4f\n", c.chosen ? "*" : " ",
                                c.components, ellipsa_structure_name(c.structure), c.log_likelihood, c.bic, c.icl);
                  h << buf;
                }
              }
            }
            if (!data->empty()) {
              DialectFlags d = *dialect;
              d.columns = names;
              d.exclude.clear();
              const Table t = read_table(*data, d.to_options());
              const ellipsa_matrix x = t.view();
              ellipsa_shape_test s;
              s.struct_size = sizeof s;
              check(ellipsa_model_shape(&s, m.get(), &x), "checking the shape of the rows of the fit");
              h << "bulk shape (Mardia): " << shape_numbers(s) << "\n";
              for (const auto& sentence : shape_sentences(s)) h << "  " << sentence << "\n";
              j["shape"] = shape_json(s);
            }
            if (out->json) std::fputs((j.dump(2) + "\n").c_str(), stdout);
            else std::fputs(h.str().c_str(), stdout);
            return static_cast<int>(kExitOk);
          }};
}

}  // namespace ellipsa::cli
