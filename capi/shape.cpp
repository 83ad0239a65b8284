// Mardia's shape check at the C boundary: on the rows given
// (ellipsa_data_shape) or on the rows a Gaussian model's final estimate used
// (ellipsa_model_shape). The statistics are the core's (core/mardia).
#include <algorithm>
#include <string>
#include <vector>

#include "boundary.hpp"
#include "cell_names.hpp"
#include "core/mardia.hpp"
#include "core/missing.hpp"
#include "matrix_view.hpp"
#include "model.hpp"
#include "result_struct.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
namespace core = ellipsa::core;

namespace {

// The reweighting cutoff level of the MCD family's fits (core/mcd_common.hpp,
// RobustFit::reweight_level default), which selects the rows of the final estimate.
constexpr double kReweightLevel = 0.975;

void write(ellipsa_shape_test* out, const core::MardiaTest& t, bool approximate) {
  ellipsa_shape_test s{};
  s.rows = t.n;
  s.skewness = t.skewness;
  s.skewness_statistic = t.skewness_statistic;
  s.skewness_df = t.skewness_df;
  s.skewness_p_value = t.skewness_p_value;
  s.kurtosis = t.kurtosis;
  s.kurtosis_expected = t.kurtosis_expected;
  s.kurtosis_z = t.kurtosis_z;
  s.kurtosis_p_value = t.kurtosis_p_value;
  s.approximate = approximate ? 1 : 0;
  ellipsa::capi::write_sized(out, s, static_cast<int64_t>(sizeof(ellipsa_shape_test)), "ellipsa_shape_test");
}

void check_struct(const ellipsa_shape_test* out) {
  require_not_null(out, "out");
  if (out->struct_size < static_cast<int64_t>(sizeof(ellipsa_shape_test)))
    throw Misuse{ELLIPSA_ERR_SHAPE, "ellipsa_shape_test.struct_size too small: set it to sizeof(ellipsa_shape_test)"};
}

}  // namespace

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_data_shape(ellipsa_shape_test* out, const ellipsa_matrix* data) {
  return guard("ellipsa_data_shape", [&] {
    check_struct(out);
    const core::DataView x = ellipsa::capi::checked_view(data, "data");
    if (x.cols() < 1) throw Misuse{ELLIPSA_ERR_SHAPE, "data has no columns"};
    const core::CompleteRows c =
        ellipsa::capi::naming_places("data", x.cols(), [&] { return core::select_complete_rows(x); });
    write(out, core::mardia(core::make_view(core::gather(x, c.rows))), false);
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_shape(ellipsa_shape_test* out, const ellipsa_model* model,
                                               const ellipsa_matrix* data) {
  return guard("ellipsa_model_shape", [&] {
    check_struct(out);
    require_not_null(model, "model");
    const core::DataView x = ellipsa::capi::checked_view(data, "data");
    if (model->kind != ELLIPSA_KIND_GAUSSIAN)
      throw Misuse{ELLIPSA_ERR_STATE, "a mixture has no single bulk: check each group's rows with ellipsa_data_shape"};
    if (x.cols() != model->dimension())
      throw Misuse{ELLIPSA_ERR_SHAPE, "data has " + std::to_string(x.cols()) + " columns, the model " +
                                          std::to_string(model->dimension())};
    if (x.rows() != model->rows_used + model->rows_dropped)
      throw Misuse{ELLIPSA_ERR_SHAPE, "data has " + std::to_string(x.rows()) + " rows; the model was fitted on " +
                                          std::to_string(model->rows_used + model->rows_dropped) +
                                          " (pass the fitting data)"};
    std::vector<core::Index> rows =
        ellipsa::capi::naming_places("data", model->columns, [&] { return core::select_complete_rows(x).rows; });
    const bool selected = model->robust.has_value() && !model->robust->outlier_rows.empty();
    if (model->robust) {
      const auto& flagged = model->robust->outlier_rows;  // ascending
      rows.erase(std::remove_if(rows.begin(), rows.end(),
                                [&](core::Index r) { return std::binary_search(flagged.begin(), flagged.end(), r); }),
                 rows.end());
    }
    const double centre = selected ? core::truncated_kurtosis_centre(x.cols(), kReweightLevel) : -1.0;
    write(out, core::mardia(core::make_view(core::gather(x, rows)), centre), selected);
    return ELLIPSA_OK;
  });
}

}  // extern "C"
