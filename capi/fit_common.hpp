// Pieces every fit path shares: the prepared data (complete rows, names) and
// the translation of a singular scatter into a message that names columns.
#pragma once
#include <Eigen/Core>
#include <functional>
#include <string>
#include <vector>

#include "core/data_view.hpp"
#include "model.hpp"
#include "options.hpp"

namespace ellipsa::capi {

struct PreparedData {
  core::DataView all;             // the caller's view
  Eigen::MatrixXd complete_copy;  // complete rows, when some were dropped
  bool copied = false;
  // 0-based rows of `all` that are used; empty when no row was dropped (every
  // row is used; the common case builds no list of n rows).
  std::vector<int64_t> kept_rows;
  std::vector<int64_t> dropped_rows;  // 0-based rows with a NaN
  std::vector<std::string> columns;
  core::DataView used() const;
  // Row r of used() as a row of `all`.
  int64_t kept_row(int64_t r) const { return dropped_rows.empty() ? r : kept_rows[static_cast<size_t>(r)]; }
};

// Applies the missing-value policy (drop or refuse; EM keeps every row with an
// observed value); infinite values are refused under every policy, naming the
// cell (capi/cell_names.hpp).
PreparedData prepare(const ellipsa_matrix* data, const ellipsa_fit_options& o);

// Factors the model's scatter matrices; when one is singular, rethrows with a
// message naming the constant and collinear columns and pointing to shrinkage.
void finalise_or_explain(ellipsa_model& m);

// The options' callback as the core wants it (returns false to cancel).
std::function<bool(const char*, double)> progress_of(const ellipsa_fit_options& o);

// Each estimator family fills a model from prepared data.
void fit_gaussian_classical(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o);
void fit_gaussian_shrinkage(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o);
void fit_robust(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o);
void fit_mixture(ellipsa_model& m, const PreparedData& d, const ellipsa_fit_options& o);

}  // namespace ellipsa::capi
