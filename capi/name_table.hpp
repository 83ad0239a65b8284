// The one spelling of each value of an enumeration of the C interface (methods,
// covariance structures, missing-value policies, scoring references): the model
// file, the sheet functions, the batch tool and the bindings all go through
// these tables, and a "(known: ...)" list in a message is generated from the
// same table, so a new value cannot be missing from it.
#pragma once
#include <cstddef>
#include <cstring>
#include <string>

namespace ellipsa::capi {

template <class T>
struct Named {
  T value;
  const char* name;
};

template <class T, std::size_t N>
bool has_value(const Named<T> (&table)[N], T v) {
  for (const auto& e : table)
    if (e.value == v) return true;
  return false;
}

// The name of v, or "unknown" (the documented spelling for a value outside the
// enumeration).
template <class T, std::size_t N>
const char* name_in(const Named<T> (&table)[N], T v) {
  for (const auto& e : table)
    if (e.value == v) return e.name;
  return "unknown";
}

// Whether name is in the table (exact, case-sensitive match); *out set if so.
template <class T, std::size_t N>
bool value_in(const Named<T> (&table)[N], const char* name, T* out) {
  for (const auto& e : table)
    if (std::strcmp(e.name, name) == 0) {
      *out = e.value;
      return true;
    }
  return false;
}

// "a, b, c": the names in table order, for messages.
template <class T, std::size_t N>
std::string known_names(const Named<T> (&table)[N]) {
  std::string out;
  for (const auto& e : table) out += std::string(out.empty() ? "" : ", ") + e.name;
  return out;
}

}  // namespace ellipsa::capi
