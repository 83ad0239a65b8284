// The fitted model behind the opaque ellipsa_model: what every method produces,
// what the model file stores, and what scoring reads. Immutable after creation
// (the Cholesky factors are computed once, by finalise()).
#pragma once
#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/cholesky.hpp"
#include "ellipsa.h"

namespace ellipsa::capi {

// The MCD family's extra results.
struct RobustPart {
  int64_t h = 0;
  Eigen::VectorXd raw_location;
  Eigen::MatrixXd raw_scatter;
  std::vector<int64_t> h_subset_rows;  // 0-based rows of the fitting data
  std::vector<int64_t> outlier_rows;   // 0-based rows of the fitting data
  double consistency_factor = 1.0;
  int32_t consistency_rule = ELLIPSA_CONSISTENCY_NORMAL;  // how consistency_factor was found
  double reweight_factor = 1.0;
  double small_sample_raw = 1.0;  // small-sample factors applied (1: none or off)
  double small_sample_reweighted = 1.0;
  double raw_log_det = 0.0;
  std::optional<double> regularisation;  // MRCD rho
  std::string regularisation_target;     // MRCD: description of the target
};

struct Component {
  double weight = 1.0;
  Eigen::VectorXd location;
  Eigen::MatrixXd scatter;
  core::CholeskyFactor factor;  // derived, not stored in files
};

struct Candidate {
  int32_t components = 0;
  int32_t structure = 0;
  double log_likelihood = 0.0;
  int64_t parameters = 0;
  double bic = 0.0;
  double icl = 0.0;
  bool converged = false;
  bool chosen = false;
  std::string reason;  // why the candidate could not be fitted; empty when it was
};

struct MixturePart {
  int32_t structure = ELLIPSA_STRUCTURE_FULL;
  double log_likelihood = 0.0;
  int64_t parameters = 0;
  double bic = 0.0;
  double icl = 0.0;
  bool converged = false;
  int64_t iterations = 0;
  double log_density_cutoff = 0.0;  // flag rows whose log-density is below this
  double cutoff_level = 0.975;      // the level the cutoff was calibrated at
  std::vector<Candidate>
      selection;  // every candidate tried; empty only for a model loaded from a file without the table
};

}  // namespace ellipsa::capi

struct ellipsa_model {
  int32_t kind = ELLIPSA_KIND_GAUSSIAN;
  ellipsa_method method = ELLIPSA_METHOD_CLASSICAL;
  std::vector<std::string> columns;
  int64_t rows_used = 0;
  std::vector<int64_t> dropped_rows;  // 0-based rows of the fitting data, when known
  int64_t rows_dropped = 0;           // rows left out for missing values (>= dropped_rows.size())
  // Gaussian models have exactly one component with weight 1.
  std::vector<ellipsa::capi::Component> components;
  int32_t divisor = ELLIPSA_DIVISOR_N_MINUS_1;  // classical only
  std::optional<double> shrinkage_intensity;
  std::optional<ellipsa::capi::RobustPart> robust;
  std::optional<ellipsa::capi::MixturePart> mixture;
  // Scoring reference recorded at fit time (ELLIPSA_REFERENCE_CHI2, _NEW_ROWS,
  // _FITTING_ROWS; files of format 1 read as CHI2) and the reference rows m
  // of the new-rows and the fitting-rows distributions (score_reference.cpp).
  int32_t reference = ELLIPSA_REFERENCE_CHI2;
  double reference_rows = 0.0;
  double fitting_reference_rows = 0.0;

  int64_t dimension() const { return static_cast<int64_t>(columns.size()); }
};

namespace ellipsa::capi {
// Factors every component's scatter; throws core::Error(Singular) naming the
// component when one is not positive definite.
void finalise(ellipsa_model& m);
// The scoring reference of a new model: the options' choice, or the default
// (score_reference.cpp). Call after the estimate is in place. Throws
// core::Error(Data) when a chosen reference needs more rows than the fit had.
void record_reference(ellipsa_model& m, const ellipsa_fit_options& o);
// Column names from the options, or x1..xp.
std::vector<std::string> column_names_or_default(const std::vector<std::string>& given, int64_t p);
}  // namespace ellipsa::capi
