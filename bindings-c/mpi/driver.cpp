#include "driver.hpp"

namespace ellipsa::mpi {

namespace {
std::string join(const std::vector<std::string>& names) {
  std::string s;
  for (const auto& n : names) s += n + '\0';
  return s;
}
std::vector<std::string> split(const std::string& s) {
  std::vector<std::string> names;
  std::size_t at = 0;
  while (at < s.size()) {
    const std::size_t end = s.find('\0', at);
    names.push_back(s.substr(at, end - at));
    at = end + 1;
  }
  return names;
}
}  // namespace

std::vector<std::string> agreed_columns(Comm& comm, const Common& c) {
  std::vector<std::string> columns;
  step(comm, [&] {
    if (c.split_rows && c.files.size() != 1)
      throw cli::CliError(cli::kExitUsage, "--split-rows takes exactly one file");
    if (comm.rank() != 0) return;
    cli::CsvReader reader(c.files.at(0), c.dialect.to_options());
    columns = reader.selected_names();
    if (columns.empty()) throw cli::CliError(cli::kExitData, c.files[0] + ": no numeric columns to use");
  });
  return split(comm.broadcast(join(columns), "sending the column names"));
}

cli::CsvOptions part_options(const Common& c, const std::vector<std::string>& columns) {
  cli::CsvOptions o = c.dialect.to_options();
  o.columns = columns;
  o.exclude.clear();
  return o;
}

}  // namespace ellipsa::mpi
