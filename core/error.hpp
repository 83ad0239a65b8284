// The one exception type of the core. The core reports numerical outcomes in its
// result structs where the caller can act on them; it throws only when it cannot
// produce a result at all. The C boundary maps Kind to a status code.
#pragma once
#include <cstdint>
#include <stdexcept>
#include <string>
#include <utility>

namespace ellipsa::core {

enum class ErrorKind {
  Argument,      // a value outside its documented range (alpha, level, K ...)
  Shape,         // dimensions that do not fit together
  Data,          // data the method cannot use (too few rows, NaN where not allowed)
  Singular,      // a scatter matrix that cannot be factored
  NotConverged,  // an iteration hit its cap without meeting its tolerance
  ExactFit,      // MCD: at least h rows on a hyperplane
  Cancelled,     // the progress callback asked to stop
  Format,        // malformed serialised input
};

class Error : public std::runtime_error {
 public:
  Error(ErrorKind kind, const std::string& message) : std::runtime_error(message), kind_(kind) {}
  ErrorKind kind() const noexcept { return kind_; }

 private:
  ErrorKind kind_;
};

// An Error about one column, or one cell, of the matrix a core function was
// given. The core knows positions only, so it reports them as structured
// 0-based indices (row -1: the whole column) and a sentence without them;
// what() reads "<context>: [row i, ]column j (0-based) <problem>" for core
// callers. The C layer names the place as users know it instead: the column's
// name and the 1-based row of the data the caller passed (capi/cell_names.hpp).
class LocatedError : public Error {
 public:
  LocatedError(ErrorKind kind, std::string context, std::int64_t row, std::int64_t column, std::string problem)
      : Error(kind, context + ": " + (row >= 0 ? "row " + std::to_string(row) + ", " : std::string()) + "column " +
                        std::to_string(column) + " (0-based) " + problem),
        context_(std::move(context)),
        problem_(std::move(problem)),
        row_(row),
        column_(column) {}
  const std::string& context() const noexcept { return context_; }
  const std::string& problem() const noexcept { return problem_; }
  std::int64_t row() const noexcept { return row_; }  // -1: the whole column
  std::int64_t column() const noexcept { return column_; }

 private:
  std::string context_, problem_;
  std::int64_t row_, column_;
};

}  // namespace ellipsa::core
