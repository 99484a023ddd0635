#pragma once
// Private: the geometric least-squares circle in a plane, shared by the 3D circle fit, the
// fixed-direction cylinder fit, the section fits and (as a starting point) the Chebyshev fits.
// Implemented in src/fit_circle.cpp.

#include <Eigen/Core>

#include "cylzone/fit/fit_types.hpp"

namespace cylzone::detail {

/// Result of a 2D geometric least-squares circle fit. `centre` is in the same (u, v) coordinates
/// as the input. `normal_matrix` is J^T J at the solution in the parameter order
/// [centre_u, centre_v, radius]; `ssr` the sum of squared radial residuals; pass both to
/// covariance_from_normal_matrix for the parameter covariance.
struct Circle2dFit {
  Eigen::Vector2d centre = Eigen::Vector2d::Zero();
  double radius = 0.0;
  double ssr = 0.0;
  Eigen::Matrix3d normal_matrix = Eigen::Matrix3d::Zero();
  FitStatus status = FitStatus::converged;
  int iterations = 0;
};

/// Algebraic (Kasa) circle: minimises sum (|p - c|^2 - r^2)^2, linear in (c, |c|^2 - r^2).
/// Used only as a starting point. Throws FitError when the points are collinear.
Circle2dFit fit_circle_2d_algebraic(const Eigen::Matrix2Xd& uv);

/// Geometric least-squares circle: Gauss-Newton on d_i = |p_i - c| - r with the analytic
/// Jacobian (-(p_i - c)/|p_i - c|, -1) (Forbes 1989; Shakarji 1998), started from the algebraic
/// fit, data centred at its centroid. Needs 3 points not on one line; throws FitError otherwise.
/// Non-convergence within options.max_iterations gives status iteration_limit.
Circle2dFit fit_circle_2d_least_squares(const Eigen::Matrix2Xd& uv, const FitOptions& options);

}  // namespace cylzone::detail
