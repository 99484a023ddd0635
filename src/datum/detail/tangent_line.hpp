#pragma once
// Private: the constrained least-squares tangent line of points in a plane, the 2D counterpart
// of fit_plane_tangent_least_squares and computed by the same iteration (src/tangent_plane.cpp).
// A clocking datum plane C constrained perpendicular to datum A is this line for C's points
// projected onto A: every plane containing A's normal is a line in A's plane, and distances to
// such a plane equal the in-plane distances of the projections.

#include <Eigen/Core>
#include <cstddef>

#include "cylzone/fit/fit_types.hpp"

namespace cylzone::detail {

struct TangentLine2d {
  Eigen::Vector2d point = Eigen::Vector2d::Zero();   ///< the centroid projected onto the line
  Eigen::Vector2d normal = Eigen::Vector2d::UnitY();  ///< unit, out of the material
  Eigen::VectorXd residuals;  ///< signed along `normal`: all <= 0, the largest exactly 0
  FitStatus status = FitStatus::converged;
  int iterations = 0;         ///< re-rotations of the local frame
  std::size_t contacts = 0;   ///< points on the line to the rounding level of the data
};

/// `material_side` points from the line into the material. Needs 2 distinct points; throws
/// FitError when the points coincide or the material side lies almost along the line.
TangentLine2d fit_line_2d_tangent_least_squares(const Eigen::Matrix2Xd& points,
                                                const Eigen::Vector2d& material_side,
                                                const FitOptions& options);

}  // namespace cylzone::detail
