// Force-included before every core, capi and test translation unit (see
// CMakeLists.txt). Eigen's own assert would abort the host process; a library
// loaded into a spreadsheet or an R session must never do that, so a failed
// Eigen precondition becomes an exception that the C boundary turns into a status.
#pragma once
#ifdef __cplusplus
#include <stdexcept>

namespace ellipsa::core {
// Thrown only by a violated Eigen precondition: always a bug in ellipsa.
struct EigenAssertion : std::logic_error {
  using std::logic_error::logic_error;
};
}  // namespace ellipsa::core

#define eigen_assert(x)                                                                \
  do {                                                                                 \
    if (!(x)) throw ::ellipsa::core::EigenAssertion("Eigen precondition failed: " #x); \
  } while (false)
#endif
