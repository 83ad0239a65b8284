// ellipsa: the batch command-line tool. Built on the C interface only.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <string>

#include "ellipsa.h"

int main(int argc, char** argv) {
  CLI::App app{
      "ellipsa: robust normal profiles of multivariate measurements, and the rows that do not fit them."};
  app.set_version_flag("--version", std::string("ellipsa ") + ellipsa_version());
  app.require_subcommand(0, 1);
  app.footer(
      "Exit codes: 0 success, 2 usage error, 3 bad data or file, 4 numerical failure,\n"
      "            5 flagged rows found (with --fail-on-flag), 70 internal error.");
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? 0 : 2;
  }
  if (app.get_subcommands().empty()) {
    std::fputs(app.help().c_str(), stdout);
    return 0;
  }
  return 0;
}
