// Writing a result struct that may grow (it starts with struct_size): the
// caller's struct_size says how many bytes it has; a caller compiled against
// an older header gets the fields it knows, and one below the first
// published size is refused.
#pragma once
#include <algorithm>
#include <cstdint>
#include <cstring>
#include <string>

#include "boundary.hpp"

namespace ellipsa::capi {

// Copies `full` (struct_size set to sizeof(T)) into *out, up to out->struct_size
// bytes; first_size is the size of the first published version of T.
template <class T>
void write_sized(T* out, T full, int64_t first_size, const char* type) {
  if (out->struct_size < first_size)
    throw Misuse{ELLIPSA_ERR_SHAPE, std::string(type) + ".struct_size too small: set it to sizeof(" + type + ")"};
  const int64_t given = out->struct_size;
  full.struct_size = std::min<int64_t>(given, static_cast<int64_t>(sizeof(T)));
  std::memcpy(static_cast<void*>(out), &full, static_cast<std::size_t>(full.struct_size));
}

}  // namespace ellipsa::capi
