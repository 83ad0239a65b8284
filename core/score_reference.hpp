// The distribution a squared distance is compared with when a row is scored:
// the chi-square of known parameters, or the distributions of Tracy, Young &
// Mason (1992) for a profile estimated from m rows (phase II for new rows,
// phase I for the rows that made the fit). The chi-square ignores the
// estimation error of the profile; with few reference rows it flags new rows
// far more often than the level says.
#pragma once
#include "data_view.hpp"

namespace ellipsa::core {

enum class ReferenceKind {
  ChiSquare,    // d2 ~ chi2(df): parameters known
  NewRows,      // T^2 of a row that was not in the fit (phase II)
  FittingRows,  // T^2 of a row that was one of the m fitting rows (phase I)
};

struct ScoreReference {
  ReferenceKind kind = ReferenceKind::ChiSquare;
  // Reference rows m (may be an effective, non-integer count); NewRows needs
  // m > df, FittingRows m > df + 1.
  double rows = 0.0;
  // T^2 = t2_scale * d2: the Tracy-Young-Mason statistic uses the covariance
  // with divisor m - 1; a scatter with divisor m (smaller by (m-1)/m, so its
  // distances larger by m/(m-1)) gives t2_scale = (m - 1) / m.
  double t2_scale = 1.0;
};

// The largest df (observed coordinates) the reference supports: any for the
// chi-square, the largest df with m > df (NewRows) or m > df + 1 (FittingRows).
Index reference_max_df(const ScoreReference& r);

// Flagging limit on d2 for df observed coordinates at level in (0, 1), and the
// upper-tail probability of d2. Error(Argument) when df exceeds reference_max_df().
double reference_limit(const ScoreReference& r, Index df, double level);
double reference_sf(const ScoreReference& r, Index df, double d2);

}  // namespace ellipsa::core
