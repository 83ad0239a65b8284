#include "cell_names.hpp"

#include "model.hpp"

namespace ellipsa::capi {

std::vector<std::string> default_column_names(int64_t columns) { return column_names_or_default({}, columns); }

std::string located_text(const core::LocatedError& e, const char* data, const std::vector<std::string>& columns,
                         const std::vector<int64_t>* rows) {
  const auto j = static_cast<size_t>(e.column());
  const std::string name = e.column() >= 0 && j < columns.size() ? "column \"" + columns[j] + "\""
                                                                 : "column " + std::to_string(e.column() + 1);
  if (e.row() >= 0) {
    const auto i = static_cast<size_t>(e.row());
    const int64_t row = rows != nullptr && i < rows->size() ? (*rows)[i] : e.row();
    return std::string(data) + " row " + std::to_string(row + 1) + ", " + name + " " + e.problem();
  }
  return e.context() + ": " + name + " " + e.problem();
}

}  // namespace ellipsa::capi
