// SQUAREM, the squared extrapolation of Varadhan & Roland (2008, Scandinavian
// Journal of Statistics 35, 335-353), for the mixture EM (mixture_em.cpp).
//
// Why: with a component more than the data hold, two components share one
// cluster and the likelihood is nearly flat along their split; EM then crawls
// (its rate, the largest eigenvalue of its Jacobian, is near 1) and needs tens
// of iterations where the right K needs one or two. SQUAREM takes two EM steps
// theta1 = F(theta0), theta2 = F(theta1), forms r = theta1 - theta0 and
// v = theta2 - 2 theta1 + theta0, and jumps to
//   theta' = theta0 - 2 alpha r + alpha^2 v,  alpha = -|r| / |v|   (their "S3")
// which is theta2 at alpha = -1 and goes further along the slow direction for
// alpha < -1. The EM driver accepts theta' only when it is a valid model and
// its log-likelihood is at least theta2's, so a jump never lowers it (the
// next M-step restores the ridge a jump's covariances may have lost), and the
// model it returns always comes from an M-step.
//
// The steps and the bound on |alpha| (starting at 1 and multiplied by 4 each
// time it binds, divided by 4 after a rejected jump) are the paper's scheme
// and its usual defaults as remembered; the paper's text could not be read
// here. Every choice is checked by tests against plain EM's optimum instead.
#pragma once
#include <Eigen/Core>

#include "mixture_em.hpp"

namespace ellipsa::core {

// c0 theta0 + c1 theta1 + c2 theta2, entry by entry (weights, means,
// covariances); the three models have the same K, p and structure. A
// combination whose coefficients sum to 1 keeps the weights summing to 1 and a
// diagonal, spherical or tied structure what it is.
MixtureModel combine_models(double c0, const MixtureModel& m0, double c1, const MixtureModel& m1, double c2,
                            const MixtureModel& m2);

// The S3 step length -|r| / |v| for the three successive EM iterates, with the
// parameters measured in the data's column units (mean entry j divided by the
// column's spread s_j, covariance entry (i, j) by s_i s_j; inv_spread holds
// 1 / s_j), so that the step does not depend on the columns' units. Returns -1
// (no extrapolation) when v is 0 or not finite.
double squarem_step_length(const MixtureModel& m0, const MixtureModel& m1, const MixtureModel& m2,
                           const Eigen::VectorXd& inv_spread);

// theta0 - 2 alpha r + alpha^2 v for alpha (<= -1).
MixtureModel squarem_jump(const MixtureModel& m0, const MixtureModel& m1, const MixtureModel& m2, double alpha);

}  // namespace ellipsa::core
