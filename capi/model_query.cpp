// Read-only queries on a fitted model.
#include <cmath>
#include <cstring>
#include <string>

#include "boundary.hpp"
#include "result_struct.hpp"
#include "model.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;

namespace {

void copy_vector(double* out, int64_t capacity, const Eigen::VectorXd& v, const char* what) {
  if (out == nullptr) return;
  if (capacity < v.size())
    throw Misuse{ELLIPSA_ERR_SHAPE, std::string(what) + " needs capacity " + std::to_string(v.size())};
  for (Eigen::Index i = 0; i < v.size(); ++i) out[i] = v(i);
}

void copy_matrix(double* out, int64_t capacity, const Eigen::MatrixXd& m, const char* what) {
  if (out == nullptr) return;
  if (capacity < m.size())
    throw Misuse{ELLIPSA_ERR_SHAPE, std::string(what) + " needs capacity " + std::to_string(m.size())};
  for (Eigen::Index i = 0; i < m.rows(); ++i)
    for (Eigen::Index j = 0; j < m.cols(); ++j) out[i * m.cols() + j] = m(i, j);
}

[[noreturn]] void not_for_this_model(const std::string& name) {
  throw Misuse{ELLIPSA_ERR_STATE, "\"" + name + "\" does not apply to this model"};
}

double diagnostic(const ellipsa_model& m, const std::string& name) {
  const auto robust = [&]() -> const ellipsa::capi::RobustPart& {
    if (!m.robust) not_for_this_model(name);
    return *m.robust;
  };
  const auto mixture = [&]() -> const ellipsa::capi::MixturePart& {
    if (!m.mixture) not_for_this_model(name);
    return *m.mixture;
  };
  if (name == "shrinkage_intensity") {
    if (!m.shrinkage_intensity) not_for_this_model(name);
    return *m.shrinkage_intensity;
  }
  if (name == "h") return static_cast<double>(robust().h);
  if (name == "consistency_factor") return robust().consistency_factor;
  if (name == "consistency_rule") return static_cast<double>(robust().consistency_rule);
  if (name == "reweight_factor") return robust().reweight_factor;
  if (name == "raw_log_det") return robust().raw_log_det;
  if (name == "small_sample_raw" || name == "small_sample_reweighted") {
    if (m.method != ELLIPSA_METHOD_MCD && m.method != ELLIPSA_METHOD_DETMCD) not_for_this_model(name);
    return name == "small_sample_raw" ? robust().small_sample_raw : robust().small_sample_reweighted;
  }
  if (name == "reference") return static_cast<double>(m.reference);
  if (name == "reference_rows" || name == "fitting_reference_rows") {
    if (m.kind != ELLIPSA_KIND_GAUSSIAN) not_for_this_model(name);
    return name == "reference_rows" ? m.reference_rows : m.fitting_reference_rows;
  }
  if (name == "log_likelihood") return mixture().log_likelihood;
  if (name == "bic") return mixture().bic;
  if (name == "icl") return mixture().icl;
  if (name == "iterations") return static_cast<double>(mixture().iterations);
  if (name == "converged") return mixture().converged ? 1.0 : 0.0;
  if (name == "parameters") return static_cast<double>(mixture().parameters);
  if (name == "log_density_cutoff") return mixture().log_density_cutoff;
  if (name == "log_det") {
    if (m.kind != ELLIPSA_KIND_GAUSSIAN) not_for_this_model(name);
    return m.components.front().factor.log_determinant();
  }
  if (name == "divisor") {
    if (m.method != ELLIPSA_METHOD_CLASSICAL) not_for_this_model(name);
    return m.divisor;
  }
  throw Misuse{ELLIPSA_ERR_ARGUMENT, "unknown diagnostic \"" + name + "\""};
}

}  // namespace

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_model_describe(int32_t* kind, ellipsa_method* method, int64_t* dimension,
                                                  int32_t* components, const ellipsa_model* model) {
  return guard("ellipsa_model_describe", [&] {
    require_not_null(model, "model");
    if (kind) *kind = model->kind;
    if (method) *method = model->method;
    if (dimension) *dimension = model->dimension();
    if (components) *components = static_cast<int32_t>(model->components.size());
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_rows(int64_t* used, int64_t* dropped, const ellipsa_model* model) {
  return guard("ellipsa_model_rows", [&] {
    require_not_null(model, "model");
    if (used) *used = model->rows_used;
    if (dropped) *dropped = model->rows_dropped;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_column_name(const char** out, const ellipsa_model* model, int64_t j) {
  return guard("ellipsa_model_column_name", [&] {
    require_not_null(out, "out");
    require_not_null(model, "model");
    if (j < 0 || j >= model->dimension())
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "column index " + std::to_string(j) + " out of range"};
    *out = model->columns[static_cast<size_t>(j)].c_str();
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_component(double* location, int64_t location_capacity, double* scatter,
                                                   int64_t scatter_capacity, double* weight, const ellipsa_model* model,
                                                   int32_t k) {
  return guard("ellipsa_model_component", [&] {
    require_not_null(model, "model");
    if (k < 0 || k >= static_cast<int32_t>(model->components.size()))
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "component " + std::to_string(k) + " out of range"};
    const auto& c = model->components[static_cast<size_t>(k)];
    copy_vector(location, location_capacity, c.location, "location");
    copy_matrix(scatter, scatter_capacity, c.scatter, "scatter");
    if (weight) *weight = c.weight;
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_raw_estimate(double* location, int64_t location_capacity, double* scatter,
                                                      int64_t scatter_capacity, const ellipsa_model* model) {
  return guard("ellipsa_model_raw_estimate", [&] {
    require_not_null(model, "model");
    if (!model->robust) throw Misuse{ELLIPSA_ERR_STATE, "not an MCD-family model"};
    copy_vector(location, location_capacity, model->robust->raw_location, "location");
    copy_matrix(scatter, scatter_capacity, model->robust->raw_scatter, "scatter");
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_diagnostic(double* out, const ellipsa_model* model, const char* name) {
  return guard("ellipsa_model_diagnostic", [&] {
    require_not_null(out, "out");
    require_not_null(model, "model");
    require_not_null(name, "name");
    *out = diagnostic(*model, name);
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_row_set(int64_t* out, int64_t capacity, int64_t* count,
                                                 const ellipsa_model* model, int32_t which) {
  return guard("ellipsa_model_row_set", [&] {
    require_not_null(count, "count");
    require_not_null(model, "model");
    const std::vector<int64_t>* rows = nullptr;
    switch (which) {
      case ELLIPSA_ROWS_H_SUBSET:
      case ELLIPSA_ROWS_OUTLIERS:
        if (!model->robust) throw Misuse{ELLIPSA_ERR_STATE, "not an MCD-family model"};
        rows = which == ELLIPSA_ROWS_H_SUBSET ? &model->robust->h_subset_rows : &model->robust->outlier_rows;
        break;
      case ELLIPSA_ROWS_DROPPED: rows = &model->dropped_rows; break;
      default: throw Misuse{ELLIPSA_ERR_ARGUMENT, "unknown row set"};
    }
    *count = static_cast<int64_t>(rows->size());
    if (out == nullptr) return ELLIPSA_OK;
    if (capacity < *count) throw Misuse{ELLIPSA_ERR_SHAPE, "row set needs capacity " + std::to_string(*count)};
    std::copy(rows->begin(), rows->end(), out);
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_model_selection(ellipsa_candidate* out, int64_t capacity, int64_t* count,
                                                   const ellipsa_model* model) {
  return guard("ellipsa_model_selection", [&] {
    require_not_null(count, "count");
    require_not_null(model, "model");
    if (!model->mixture) throw Misuse{ELLIPSA_ERR_STATE, "not a mixture model"};
    const auto& table = model->mixture->selection;
    *count = static_cast<int64_t>(table.size());
    if (out == nullptr) return ELLIPSA_OK;
    if (capacity < *count) throw Misuse{ELLIPSA_ERR_SHAPE, "selection needs capacity " + std::to_string(*count)};
    // The first published ellipsa_candidate ends with `chosen`; later versions
    // grow at the end, so the caller's element size is the stride.
    constexpr int64_t kFirstSize = static_cast<int64_t>(sizeof(ellipsa_candidate));
    const int64_t stride = table.empty() ? kFirstSize : out[0].struct_size;
    if (!table.empty() && stride < kFirstSize)
      throw Misuse{ELLIPSA_ERR_SHAPE, "ellipsa_candidate.struct_size too small: use ELLIPSA_CANDIDATE_INIT"};
    auto* base = reinterpret_cast<unsigned char*>(out);
    for (size_t i = 0; i < table.size(); ++i)
      if (reinterpret_cast<ellipsa_candidate*>(base + static_cast<int64_t>(i) * stride)->struct_size != stride)
        throw Misuse{ELLIPSA_ERR_SHAPE, "ellipsa_candidate.struct_size differs between elements"};
    for (size_t i = 0; i < table.size(); ++i) {
      const auto& c = table[i];
      ellipsa_candidate e{};
      e.components = c.components;
      e.structure = c.structure;
      e.log_likelihood = c.log_likelihood;
      e.parameters = c.parameters;
      e.bic = c.bic;
      e.icl = c.icl;
      e.converged = c.converged ? 1 : 0;
      e.chosen = c.chosen ? 1 : 0;
      auto* element = reinterpret_cast<ellipsa_candidate*>(base + static_cast<int64_t>(i) * stride);
      ellipsa::capi::write_sized(element, e, kFirstSize, "ellipsa_candidate");
    }
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_candidate_explain(const char** reason, const ellipsa_model* model, int64_t index) {
  if (reason != nullptr) *reason = nullptr;
  return guard("ellipsa_candidate_explain", [&] {
    require_not_null(reason, "reason");
    require_not_null(model, "model");
    if (!model->mixture) throw Misuse{ELLIPSA_ERR_STATE, "not a mixture model"};
    const auto& table = model->mixture->selection;
    if (index < 0 || index >= static_cast<int64_t>(table.size()))
      throw Misuse{ELLIPSA_ERR_ARGUMENT,
                   "candidate index " + std::to_string(index) + " outside [0, " + std::to_string(table.size()) + ")"};
    *reason = table[static_cast<size_t>(index)].reason.c_str();
    return ELLIPSA_OK;
  });
}

}  // extern "C"
