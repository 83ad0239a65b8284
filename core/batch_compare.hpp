// "Has the process moved?": a new batch of rows against a reference batch of
// the same variables. Four answers, each its own test:
//   - mean shift, classical: Hotelling's two-sample T^2 and its exact F law
//     (two_sample_tests.hpp);
//   - mean shift, robust: the same statistic on the reweighted DetMCD
//     location and scatter of each batch, with a permutation p-value (below);
//   - change of covariance: Box's M with its chi-square approximation;
//   - per variable: the shift of the mean in reference standard deviations and
//     Welch's t, with Holm-adjusted p-values across the variables.
// Rows with a NaN in any column are left out of every test (complete rows) and
// counted; +-Inf is refused.
#pragma once
#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "data_view.hpp"
#include "error.hpp"
#include "mcd_common.hpp"
#include "two_sample_tests.hpp"

namespace ellipsa::core {

struct CompareOptions {
  bool robust = true;             // run the robust mean test (DetMCD fits + permutations)
  double alpha = 0.75;            // DetMCD subset fraction, in [0.5, 1]
  double reweight_level = 0.975;  // DetMCD reweighting cutoff chi2q(p, level)
  int permutations = 199;         // random relabellings for the robust p-value, 0 .. 100000
  std::uint64_t seed = 0;         // of the relabellings
  ProgressCallback progress;      // optional; false cancels (Error(Cancelled))
};

// A test that could not be computed keeps the reason instead of a value.
template <class T>
struct Outcome {
  std::optional<T> value;
  ErrorKind kind = ErrorKind::Data;  // why not (when value is empty)
  std::string reason;
};

// The robust mean test. t2 is two_sample_t2() applied to each batch's
// reweighted DetMCD location and scatter (Hubert, Rousseeuw & Verdonck 2012)
// with their row counts. Its law under "no shift" is not F (the robust
// scatter is not Wishart), so the p-value comes from random relabellings: the
// pooled rows are split at random into groups of the two sizes, both fitted
// again, and p = (1 + #{T2* >= T2}) / (1 + relabellings used) (a Monte Carlo
// permutation test, e.g. Good 2005, Permutation, Parametric and Bootstrap
// Tests of Hypotheses). It is valid when, without a shift, the rows of both
// batches are exchangeable (same distribution); a change of scatter alone can
// move it too. A relabelling whose fit fails (an exact fit) is not used and
// is counted.
struct RobustMeanShift {
  double t2 = 0.0;
  GroupSummary reference, batch;  // n, robust location, robust scatter
  double p_value = 0.0;           // permutation p-value; NaN when permutations = 0
  int permutations_used = 0;
  int permutations_failed = 0;
};

struct VariableShift {
  double reference_mean = 0.0, reference_sd = 0.0;  // sd with divisor n - 1
  double batch_mean = 0.0, batch_sd = 0.0;
  double shift_in_sd = 0.0;  // (batch_mean - reference_mean) / reference_sd; +-Inf or NaN when reference_sd = 0
  WelchT welch;              // NaN fields when both sds are 0
  double p_holm = 0.0;       // Holm (1979) over the variables with a Welch p-value
};

struct BatchComparison {
  Index reference_rows = 0, reference_dropped = 0;  // complete rows used, rows with NaN left out
  Index batch_rows = 0, batch_dropped = 0;
  GroupSummary reference, batch;  // classical: mean, covariance (divisor n - 1)
  Outcome<TwoSampleT2> mean_shift;
  Outcome<RobustMeanShift> robust_mean_shift;  // kind Argument, "not requested" when !options.robust
  Outcome<BoxM> covariance_change;
  std::vector<VariableShift> variables;
};

// Throws Error(Shape) when the column counts differ or are 0, Error(Data) for
// an infinite value (named) or fewer than 2 complete rows in a batch,
// Error(Argument) for an option out of range, Error(Cancelled). Everything
// else (singular covariances, too few rows for one test, exact fits) is
// reported in the outcome of the test concerned.
BatchComparison compare_batches(DataView reference, DataView batch, const CompareOptions& options = {});

}  // namespace ellipsa::core
