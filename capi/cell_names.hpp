// The message convention of the C layer: the core reports the place of a
// problem as structured 0-based indices (core::LocatedError); here it is named
// as callers know it: the column's name and the 1-based row of the matrix the
// caller passed, e.g. `data row 5, column "mass" is infinite (+Inf); ...`.
// (The batch tool adds the file's line numbers on top.)
#pragma once
#include <cstdint>
#include <string>
#include <vector>

#include "core/error.hpp"

namespace ellipsa::capi {

// The sentence for a located error: `<data> row <row+1>, column "<name>"
// <problem>` for a cell, `<context>: column "<name>" <problem>` for a column.
// rows, when given, maps the rows the core saw (a copy of some rows) to the
// rows of the caller's matrix.
std::string located_text(const core::LocatedError& e, const char* data, const std::vector<std::string>& columns,
                         const std::vector<int64_t>* rows = nullptr);

// "x1", "x2", ...: the names of columns nobody named (as models record them).
std::vector<std::string> default_column_names(int64_t columns);

// Runs body; a core::LocatedError thrown inside becomes a core::Error of the
// same kind whose message names the place (located_text()). `data` is the
// caller's name for the matrix whose rows the core indexed ("data", "chunk").
template <class Body>
decltype(auto) naming_places(const char* data, const std::vector<std::string>& columns, Body&& body,
                             const std::vector<int64_t>* rows = nullptr) {
  try {
    return body();
  } catch (const core::LocatedError& e) {
    throw core::Error(e.kind(), located_text(e, data, columns, rows));
  }
}

// As naming_places() for a matrix without column names: "x1", "x2", ... are
// made only when there is something to report.
template <class Body>
decltype(auto) naming_places(const char* data, int64_t columns, Body&& body) {
  try {
    return body();
  } catch (const core::LocatedError& e) {
    throw core::Error(e.kind(), located_text(e, data, default_column_names(columns)));
  }
}

}  // namespace ellipsa::capi
