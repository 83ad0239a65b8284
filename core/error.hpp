// The one exception type of the core. The core reports numerical outcomes in its
// result structs where the caller can act on them; it throws only when it cannot
// produce a result at all. The C boundary maps Kind to a status code.
#pragma once
#include <stdexcept>
#include <string>

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
  Error(ErrorKind kind, const std::string& message)
      : std::runtime_error(message), kind_(kind) {}
  ErrorKind kind() const noexcept { return kind_; }

 private:
  ErrorKind kind_;
};

}  // namespace ellipsa::core
