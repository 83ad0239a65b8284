// The extern "C" boundary in one place: every exported function runs its body
// through guard(), which turns each exception into a status and a thread-local
// message. Nothing else in capi/ catches exceptions.
#pragma once
#include <cstdint>
#include <string>

#include "ellipsa.h"

namespace ellipsa::capi {

// Sets the thread-local message and returns status, for early returns.
ellipsa_status fail(ellipsa_status status, const char* function, const std::string& message);

// Exception thrown inside capi for argument problems found at the boundary.
struct Misuse {
  ellipsa_status status;
  std::string message;
};

// Maps the currently handled exception to a status (sets the message).
ellipsa_status status_from_current_exception(const char* function) noexcept;

template <class Body>
ellipsa_status guard(const char* function, Body&& body) noexcept {
  try {
    return body();
  } catch (...) {
    return status_from_current_exception(function);
  }
}

// Argument checks that throw Misuse.
void require_not_null(const void* p, const char* what);

}  // namespace ellipsa::capi
