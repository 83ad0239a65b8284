// Version queries, status names and the thread-local message: the calls that
// cannot fail.
#include <string>

#include "ellipsa.h"

namespace ellipsa::capi {
const std::string& last_error_message();
}

#define ELLIPSA_STR2(x) #x
#define ELLIPSA_STR(x) ELLIPSA_STR2(x)

extern "C" {

ELLIPSA_API const char* ellipsa_version(void) {
  return ELLIPSA_STR(ELLIPSA_VERSION_MAJOR) "." ELLIPSA_STR(ELLIPSA_VERSION_MINOR) "." ELLIPSA_STR(
      ELLIPSA_VERSION_PATCH);
}

ELLIPSA_API int32_t ellipsa_version_number(void) { return ELLIPSA_VERSION_NUMBER; }

ELLIPSA_API const char* ellipsa_status_string(ellipsa_status status) {
  switch (status) {
    case ELLIPSA_OK: return "ELLIPSA_OK";
    case ELLIPSA_ERR_NULL: return "ELLIPSA_ERR_NULL";
    case ELLIPSA_ERR_ARGUMENT: return "ELLIPSA_ERR_ARGUMENT";
    case ELLIPSA_ERR_SHAPE: return "ELLIPSA_ERR_SHAPE";
    case ELLIPSA_ERR_STATE: return "ELLIPSA_ERR_STATE";
    case ELLIPSA_ERR_DATA: return "ELLIPSA_ERR_DATA";
    case ELLIPSA_ERR_FORMAT: return "ELLIPSA_ERR_FORMAT";
    case ELLIPSA_ERR_MEMORY: return "ELLIPSA_ERR_MEMORY";
    case ELLIPSA_ERR_CANCELLED: return "ELLIPSA_ERR_CANCELLED";
    case ELLIPSA_ERR_INTERNAL: return "ELLIPSA_ERR_INTERNAL";
    case ELLIPSA_NUM_SINGULAR: return "ELLIPSA_NUM_SINGULAR";
    case ELLIPSA_NUM_NOT_CONVERGED: return "ELLIPSA_NUM_NOT_CONVERGED";
    case ELLIPSA_NUM_EXACT_FIT: return "ELLIPSA_NUM_EXACT_FIT";
  }
  return "ELLIPSA_UNKNOWN_STATUS";
}

ELLIPSA_API const char* ellipsa_last_error(void) {
  // c_str() of a thread-local std::string is never NULL.
  return ellipsa::capi::last_error_message().c_str();
}

}  // extern "C"
