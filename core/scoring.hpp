// Scoring rows against a fitted Gaussian model (location T, scatter S): squared
// Mahalanobis distances, chi-square p-values and flags, and which variables
// drove a large distance. Rows with missing coordinates (NaN) are scored on the
// marginal Gaussian of their observed coordinates, never imputed.
#pragma once
#include <Eigen/Core>
#include <cstdint>

#include "cholesky.hpp"
#include "data_view.hpp"
#include "score_reference.hpp"

namespace ellipsa::core {

using IndexVector = Eigen::Matrix<Index, Eigen::Dynamic, 1>;
using FlagVector = Eigen::Array<bool, Eigen::Dynamic, 1>;

struct ScoringOptions {
  // A row is flagged when d2 > the reference's limit for df observed
  // coordinates at level (chi2q(df, level) by default); level in (0, 1). 0.975
  // is the usual screening convention, not a law.
  double level = 0.975;
  ScoreReference reference;
  bool p_values = true;            // fill RowScores::p_value
  bool contributions = false;      // fill RowScores::contributions
  bool conditional_drops = false;  // fill RowScores::conditional_drops
  bool log_densities = false;      // fill RowScores::log_density
  // Threads for the complete rows and the p-values (parallel.hpp); every row's
  // result is computed from that row alone, so it does not depend on this.
  int threads = 1;
};

struct RowScores {
  Eigen::VectorXd d2;  // squared distance; NaN for an all-missing row
  Eigen::VectorXd
      p_value;         // upper tail of the reference (P(chi2(df) > d2) by default), NaN when df = 0; empty unless asked
  IndexVector df;      // observed coordinates used (p for a complete row)
  FlagVector flagged;  // d2 > the reference's limit (chi2q(df, level)); never for an all-missing row
  // n x p, c_ij = (x_i - T)_j (S_oo^-1 (x_i - T)_o)_j; each row sums to d2_i.
  // NaN at missing coordinates. Empty unless asked.
  Eigen::MatrixXd contributions;
  // n x p, d2_i minus the squared distance of row i's other observed coordinates
  // (variable j left out) = z_j^2 / (S_oo^-1)_jj with z = S_oo^-1 (x - T)_o.
  // NaN at missing coordinates. Empty unless asked.
  Eigen::MatrixXd conditional_drops;
  // log N(x_o; T_o, S_oo) = -0.5 (df log 2 pi + log det S_oo + d2), from the
  // factor each pattern is scored with; NaN for an all-missing row. Empty unless asked.
  Eigen::VectorXd log_density;
  // Distinct patterns of missing coordinates met (excluding all-missing rows);
  // each costs one factorisation of its sub-matrix, however many rows share it.
  Index missing_patterns = 0;
};

// Caller-owned arrays of x.rows() entries for MahalanobisScorer::score_finite;
// a null pointer is not written.
struct FiniteRowOutputs {
  double* d2 = nullptr;
  double* p_value = nullptr;
  std::int32_t* flag = nullptr;  // 1 when d2 > the reference's limit, else 0
  double* log_density = nullptr;
};

// Holds T and the Cholesky factor of S. Immutable after construction; score()
// is const and keeps its pattern cache local, so one scorer may be shared by
// threads.
class MahalanobisScorer {
 public:
  // Factors S. Throws Error(Shape) on mismatched sizes, Error(Data) for a
  // non-finite T, Error(Singular) when S is not positive definite (diagnose it
  // with diagnose_scatter, or fit a shrinkage estimate).
  MahalanobisScorer(const Eigen::VectorXd& location, const Eigen::MatrixXd& scatter);
  // Uses an existing factor (must be ok(), else Error(Singular)). Sub-matrices
  // for rows with missing values are rebuilt as rows of L times their transpose.
  MahalanobisScorer(const Eigen::VectorXd& location, const CholeskyFactor& factor);

  Index dimension() const { return location_.size(); }
  const Eigen::VectorXd& location() const { return location_; }
  const CholeskyFactor& factor() const { return factor_; }

  // Scores every row of x (x.cols() must equal p, else Error(Shape)). NaN is a
  // missing coordinate; +-Inf throws Error(Data) naming the entry. level outside
  // (0, 1) throws Error(Argument).
  RowScores score(DataView x, const ScoringOptions& options = {}) const;

  // The path for a table with no missing and no infinite value: the numbers
  // of score() (the same kernel, bit for bit), written straight into the
  // caller's arrays, with no temporary of n entries. Returns false, having
  // written nothing, when some entry of x is NaN or +-Inf, when p exceeds
  // the reference's rows, or when contributions or conditional drops are
  // asked (options.contributions, options.conditional_drops): the caller then
  // uses score(), which handles those. options.p_values and
  // options.log_densities are ignored: the arrays given decide. Throws as
  // score() for a wrong column count or level, before any write.
  bool score_finite(DataView x, const ScoringOptions& options, const FiniteRowOutputs& out) const;

 private:
  Eigen::VectorXd location_;
  CholeskyFactor factor_;
  Eigen::MatrixXd scatter_;  // S itself when given, else empty
};

}  // namespace ellipsa::core
