// ellipsa: the batch command-line tool. Built on the C interface only.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <cstdlib>
#include <vector>
#include <string>

#include "commands.hpp"
#include "csv_source.hpp"
#include "ellipsa.h"

namespace {
constexpr const char* kExitCodes =
    "Exit codes:\n"
    "  0  success\n"
    "  2  usage error (unknown option, bad value)\n"
    "  3  bad data or file (unreadable CSV, no numeric columns, too few rows, bad model file)\n"
    "  4  numerical failure (singular scatter, exact fit), or a mixture that stopped at its\n"
    "     iteration cap (fit, cluster, screen: outputs still written, with a warning)\n"
    "  5  rows were flagged (only with --fail-on-flag; 4 takes precedence)\n"
    "  6  compare: the new batch differs from the reference (only with --fail-on-change)\n"
    "  70 internal error (please report it)\n";
}

int main(int argc, char** argv) {
  using namespace ellipsa::cli;
  CLI::App app{"ellipsa: robust normal profiles of multivariate measurements, and the rows that do not fit them."};
  app.set_version_flag("--version", std::string("ellipsa ") + ellipsa_version());
  app.require_subcommand(0, 1);
  app.footer(kExitCodes);
  std::vector<Command> commands{add_fit(app),     add_score(app),  add_screen(app), add_cluster(app),
                                add_inspect(app), add_report(app), add_compare(app)};
  // --threads on every subcommand: the library's thread count for fitting and
  // scoring, handed over as ELLIPSA_THREADS (the library's default rule), so
  // every call of this process uses it. Results do not depend on it.
  int threads = 0;
  std::vector<CLI::Option*> thread_flags;
  for (auto& c : commands) {
    c.app->footer(kExitCodes);
    thread_flags.push_back(c.app->add_option(
        "--threads", threads,
        "Threads for fitting and scoring, 1 to 256 (default: ELLIPSA_THREADS, else every available core); "
        "results are the same for any count"));
  }
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? kExitOk : kExitUsage;
  }
  for (auto* flag : thread_flags) {
    if (flag->count() == 0) continue;
    if (threads < 1 || threads > 256) {
      std::fprintf(stderr, "ellipsa: --threads must be a whole number from 1 to 256 (got %d)\n", threads);
      return kExitUsage;
    }
    setenv("ELLIPSA_THREADS", std::to_string(threads).c_str(), 1);
  }
  for (auto& c : commands) {
    if (!c.app->parsed()) continue;
    try {
      return c.run();
    } catch (const CliError& e) {
      std::fprintf(stderr, "ellipsa %s: %s\n", c.app->get_name().c_str(), e.what());
      return e.code;
    } catch (const CsvError& e) {
      std::fprintf(stderr, "ellipsa %s: %s\n", c.app->get_name().c_str(), e.what());
      return kExitData;
    } catch (const std::exception& e) {
      std::fprintf(stderr, "ellipsa %s: %s\n", c.app->get_name().c_str(), e.what());
      return kExitData;
    }
  }
  std::fputs(app.help().c_str(), stdout);
  return kExitOk;
}
