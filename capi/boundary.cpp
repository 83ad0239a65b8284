#include "boundary.hpp"

#include <boost/math/policies/error_handling.hpp>

#include <exception>
#include <new>
#include <stdexcept>

#include "core/eigen_config.hpp"
#include "core/error.hpp"

namespace ellipsa::capi {
namespace {

thread_local std::string t_last_error;

ellipsa_status status_of(core::ErrorKind kind) {
  switch (kind) {
    case core::ErrorKind::Argument: return ELLIPSA_ERR_ARGUMENT;
    case core::ErrorKind::Shape: return ELLIPSA_ERR_SHAPE;
    case core::ErrorKind::Data: return ELLIPSA_ERR_DATA;
    case core::ErrorKind::Singular: return ELLIPSA_NUM_SINGULAR;
    case core::ErrorKind::NotConverged: return ELLIPSA_NUM_NOT_CONVERGED;
    case core::ErrorKind::ExactFit: return ELLIPSA_NUM_EXACT_FIT;
    case core::ErrorKind::Cancelled: return ELLIPSA_ERR_CANCELLED;
    case core::ErrorKind::Format: return ELLIPSA_ERR_FORMAT;
  }
  return ELLIPSA_ERR_INTERNAL;
}

}  // namespace

const std::string& last_error_message() { return t_last_error; }

ellipsa_status fail(ellipsa_status status, const char* function, const std::string& message) {
  try {
    t_last_error.assign(function);
    t_last_error.append(": ");
    t_last_error.append(message);
  } catch (...) {
    // Out of memory while writing the message: keep whatever fits.
    t_last_error.clear();
  }
  return status;
}

ellipsa_status status_from_current_exception(const char* function) noexcept {
  try {
    throw;
  } catch (const Misuse& e) {
    return fail(e.status, function, e.message);
  } catch (const core::Error& e) {
    return fail(status_of(e.kind()), function, e.what());
  } catch (const std::bad_alloc&) {
    return fail(ELLIPSA_ERR_MEMORY, function, "out of memory");
  } catch (const std::length_error& e) {
    return fail(ELLIPSA_ERR_MEMORY, function, std::string("size too large: ") + e.what());
  } catch (const boost::math::evaluation_error& e) {
    // A Boost.Math iteration that failed on extreme arguments (found by
    // fuzzing the sheet evaluator): a numerical outcome, not a library fault.
    return fail(ELLIPSA_NUM_NOT_CONVERGED, function, std::string("numerical evaluation failed: ") + e.what());
  } catch (const core::EigenAssertion& e) {
    return fail(ELLIPSA_ERR_INTERNAL, function, std::string("internal check failed: ") + e.what());
  } catch (const std::exception& e) {
    return fail(ELLIPSA_ERR_INTERNAL, function, std::string("unexpected error: ") + e.what());
  } catch (...) {
    return fail(ELLIPSA_ERR_INTERNAL, function, "unexpected non-standard exception");
  }
}

void require_not_null(const void* p, const char* what) {
  if (p == nullptr) throw Misuse{ELLIPSA_ERR_NULL, std::string(what) + " is NULL"};
}

}  // namespace ellipsa::capi
