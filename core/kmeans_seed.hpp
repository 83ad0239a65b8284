// Starting partitions for mixture fitting: k-means++ seeding followed by a few
// Lloyd steps, driven by a portable random source so that one 64-bit seed gives
// the same start on every platform and standard library.
#pragma once
#include <Eigen/Core>
#include <cstdint>

#include "data_view.hpp"
#include "portable_random.hpp"

namespace ellipsa::core {

struct KMeansStart {
  Eigen::MatrixXd centres;  // K x p, in the units of the data
  Eigen::VectorXi labels;   // n, the nearest centre of each row after the Lloyd steps
};

// k-means++ seeding (Arthur & Vassilvitskii 2007): the first centre is a row drawn
// uniformly, each further centre a row drawn with probability proportional to its
// squared distance to the nearest centre chosen so far. Then up to lloyd_steps
// Lloyd iterations (assign to the nearest centre, move each centre to the mean of
// its rows; an emptied cluster keeps its centre). Distances are taken on columns
// divided by their standard deviation (columns with zero spread are left as
// they are), so the start does not depend on the units of the columns.
// Rows must be finite. Throws Error(Data) when the data hold fewer than k
// distinct rows, Error(Argument) for k < 1 or k > rows.
KMeansStart kmeans_seed(DataView x, Index k, int lloyd_steps, PortableRandom& rng);

}  // namespace ellipsa::core
