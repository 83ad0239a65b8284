// ellipsa compare: has the process moved? A new batch against a reference
// batch of the same columns: the mean (classical and robust), the covariance,
// and each variable, with a plain verdict at a stated significance level.
#include <cmath>
#include <cstdio>
#include <memory>
#include <sstream>

#include "commands.hpp"
#include "report/compare.hpp"

namespace ellipsa::cli {
namespace {

struct CompareArgs {
  std::string reference, batch;
  double significance = 0.05;
  int permutations = 199;
  std::uint64_t seed = 0;
  double alpha = 0.75;
  bool no_robust = false;
  bool fail_on_change = false;
  std::string html;
  DialectFlags dialect;
  OutputFlags out;
};

struct ComparisonDeleter {
  void operator()(ellipsa_comparison* c) const { ellipsa_comparison_destroy(c); }
};

// One test: its numbers, or the library's reason why it could not be computed.
CompareTest read_test(const ellipsa_comparison* c, int32_t which, const char* name) {
  CompareTest t;
  t.name = name;
  ellipsa_test_result r;
  r.struct_size = sizeof r;
  const ellipsa_status s = ellipsa_comparison_test(&r, c, which);
  if (s == ELLIPSA_ERR_STATE) return t;  // not requested
  t.requested = true;
  if (s != ELLIPSA_OK) {
    if (s != ELLIPSA_ERR_DATA && s != ELLIPSA_NUM_SINGULAR && s != ELLIPSA_NUM_EXACT_FIT)
      check(s, "reading the comparison");
    t.reason = ellipsa_last_error();
    return t;
  }
  t.available = true;
  t.statistic = r.statistic;
  t.transformed = r.transformed;
  t.df1 = r.df1;
  t.df2 = r.df2;
  t.p_value = r.p_value;
  t.permutations = r.permutations_used;
  return t;
}

nlohmann::json test_json(const CompareTest& t) {
  if (!t.available) return {{"available", false}, {"reason", t.reason}};
  return {{"available", true},
          {"statistic", t.statistic},
          {"transformed", t.transformed},
          {"df1", t.df1},
          {"df2", std::isnan(t.df2) ? nlohmann::json() : nlohmann::json(t.df2)},
          {"p_value", t.p_value}};
}

}  // namespace

Command add_compare(CLI::App& parent) {
  auto a = std::make_shared<CompareArgs>();
  CLI::App* app = parent.add_subcommand(
      "compare", "Has the process moved? Compare a new batch with a reference batch of the same columns");
  app->add_option("reference", a->reference, "CSV file of the reference rows")->required();
  app->add_option("batch", a->batch, "CSV file of the new rows (it must hold the reference's columns)")->required();
  app->add_option("--significance", a->significance, "Call a test significant below this p-value")
      ->capture_default_str();
  app->add_option("--permutations", a->permutations, "Random relabellings behind the robust mean test's p-value")
      ->capture_default_str();
  app->add_option("--seed", a->seed, "Seed of the relabellings")->capture_default_str();
  app->add_option("--alpha", a->alpha, "Subset fraction of the robust (DetMCD) fits, in [0.5, 1]")
      ->capture_default_str();
  app->add_flag("--no-robust", a->no_robust, "Skip the robust mean test");
  app->add_flag("--fail-on-change", a->fail_on_change, "Exit with code 6 when any test is significant");
  app->add_option("--html", a->html, "Also write the comparison as an HTML page to this file");
  add_dialect_flags(*app, a->dialect);
  add_output_flags(*app, a->out);
  return {
      app, [a]() {
        if (!(a->significance > 0.0 && a->significance < 1.0))
          throw CliError(kExitUsage, "--significance must lie in (0, 1)");
        const Table ref = read_table(a->reference, a->dialect.to_options());
        // The new batch is read with exactly the reference's columns, in its order.
        DialectFlags same = a->dialect;
        same.columns = ref.columns;
        same.exclude.clear();
        const Table neu = read_table(a->batch, same.to_options());

        ellipsa_compare_options o = ELLIPSA_COMPARE_OPTIONS_INIT;
        o.robust = a->no_robust ? 0 : 1;
        o.permutations = a->permutations;
        o.seed = a->seed;
        o.alpha = a->alpha;
        Progress progress(progress_wanted(a->out.quiet || a->out.json));
        if (progress.enabled()) {
          o.progress = &Progress::callback;
          o.progress_user = &progress;
        }
        const ellipsa_matrix r = ref.view(), b = neu.view();
        ellipsa_comparison* raw = nullptr;
        const ellipsa_status s = ellipsa_batch_compare(&raw, &r, &b, &o);
        progress.finish();
        if (s == ELLIPSA_ERR_ARGUMENT) throw CliError(kExitUsage, ellipsa_last_error());
        check(s, "comparing");
        const std::unique_ptr<ellipsa_comparison, ComparisonDeleter> c(raw);

        CompareSummary sum;
        sum.reference_file = a->reference;
        sum.batch_file = a->batch;
        sum.significance = a->significance;
        sum.columns = ref.columns;
        check(ellipsa_comparison_rows(&sum.reference_used, &sum.reference_dropped, &sum.batch_used, &sum.batch_dropped,
                                      c.get()),
              "reading the comparison");
        sum.mean = read_test(c.get(), ELLIPSA_TEST_MEAN_SHIFT, "mean (Hotelling T^2, F law)");
        sum.robust_mean = read_test(c.get(), ELLIPSA_TEST_ROBUST_MEAN_SHIFT, "mean, robust (DetMCD T^2, permutation)");
        sum.covariance = read_test(c.get(), ELLIPSA_TEST_COVARIANCE_CHANGE, "covariance (Box's M, chi-square approx.)");
        int64_t p = 0;
        check(ellipsa_comparison_variables(nullptr, 0, &p, c.get()), "reading the comparison");
        sum.variables.resize(static_cast<std::size_t>(p));
        for (auto& v : sum.variables) v.struct_size = sizeof v;
        check(ellipsa_comparison_variables(sum.variables.data(), p, &p, c.get()), "reading the comparison");

        const bool moved = sum.moved();
        if (!a->html.empty()) write_text_file(a->html, compare_page(sum));
        if (a->out.json) {
          nlohmann::json vars = nlohmann::json::array();
          for (std::size_t j = 0; j < sum.variables.size(); ++j) {
            const auto& v = sum.variables[j];
            auto num = [](double x) { return std::isfinite(x) ? nlohmann::json(x) : nlohmann::json(); };
            vars.push_back({{"column", sum.columns[j]},
                            {"reference_mean", v.reference_mean},
                            {"reference_sd", v.reference_sd},
                            {"batch_mean", v.batch_mean},
                            {"batch_sd", v.batch_sd},
                            {"shift_in_sd", num(v.shift_in_sd)},
                            {"welch_t", num(v.t)},
                            {"welch_df", num(v.df)},
                            {"p_value", num(v.p_value)},
                            {"p_holm", num(v.p_holm)}});
          }
          nlohmann::json j{
              {"reference",
               {{"file", a->reference}, {"rows_used", sum.reference_used}, {"rows_dropped", sum.reference_dropped}}},
              {"batch", {{"file", a->batch}, {"rows_used", sum.batch_used}, {"rows_dropped", sum.batch_dropped}}},
              {"significance", a->significance},
              {"moved", moved},
              {"mean_shift", test_json(sum.mean)},
              {"covariance_change", test_json(sum.covariance)},
              {"variables", vars}};
          if (sum.robust_mean.requested) {
            j["robust_mean_shift"] = test_json(sum.robust_mean);
            j["robust_mean_shift"]["permutations"] = sum.robust_mean.permutations;
          }
          std::fputs((j.dump(2) + "\n").c_str(), stdout);
        } else if (!a->out.quiet) {
          std::fputs(compare_text(sum).c_str(), stdout);
        }
        return a->fail_on_change && moved ? static_cast<int>(kExitChanged) : static_cast<int>(kExitOk);
      }};
}

}  // namespace ellipsa::cli
