#include "matrix_view.hpp"

#include <limits>
#include <string>

#include "boundary.hpp"

namespace ellipsa::capi {

core::DataView checked_view(const ellipsa_matrix* m, const char* what) {
  const std::string w(what);
  require_not_null(m, what);
  if (m->rows < 0 || m->cols < 0) throw Misuse{ELLIPSA_ERR_SHAPE, w + ": rows and cols must be >= 0"};
  if (m->row_stride < 0 || m->col_stride < 0) throw Misuse{ELLIPSA_ERR_SHAPE, w + ": strides must be >= 0"};
  if (m->rows > 0 && m->cols > 0) {
    if (m->data == nullptr) throw Misuse{ELLIPSA_ERR_NULL, w + "->data is NULL"};
    // The last element sits at (rows-1)*row_stride + (cols-1)*col_stride; it must
    // be addressable without overflow (the caller vouches for the memory).
    constexpr int64_t kMax = std::numeric_limits<int64_t>::max() / 8;
    const auto mul_ok = [](int64_t a, int64_t b) { return b == 0 || a <= kMax / b; };
    if (!mul_ok(m->rows - 1, m->row_stride) || !mul_ok(m->cols - 1, m->col_stride) ||
        (m->rows - 1) * m->row_stride > kMax - (m->cols - 1) * m->col_stride || !mul_ok(m->rows, m->cols))
      throw Misuse{ELLIPSA_ERR_SHAPE, w + ": extent overflows the address space"};
  }
  return core::make_view(m->data, m->rows, m->cols, m->row_stride, m->col_stride);
}

}  // namespace ellipsa::capi
