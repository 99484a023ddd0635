#pragma once
/// \file tangent_plane.hpp
/// Datum planes associated on the material side: every point lies in the material or on the
/// plane, as a datum feature simulator would rest against the surface.
///  * constrained least-squares tangent plane: minimise the sum of squared distances subject to
///    the material-side constraint (Shakarji & Srinivasan, J. Comput. Inf. Sci. Eng. 15(4), 2015;
///    the default for a rocking datum feature in ASME Y14.5-2018);
///  * minimax tangent plane: minimise the largest distance subject to the same constraint
///    (ISO 5459:2011 default); its orientation is that of the minimum-zone (flatness) planes and
///    it is the outer one of them.

#include <Eigen/Core>

#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// `material_side` points from the surface INTO the material (measurement coordinates); only
/// its side matters, but it must be within about 78 degrees of the plane's normal. The returned
/// normal points OUT of the material; residuals are signed along it, so all are <= 0 and the
/// largest is exactly 0 (at the contact points); form is their span. `point` is the centroid
/// projected onto the plane. No covariance (a constrained fit). The summary's method is
/// least_squares (tangent least squares) or minimum_zone (tangent minimax) and its message
/// says which tangent plane it is. Throws FitError for fewer than 3 or collinear points and for
/// a zero or in-plane material side.
PlaneFit fit_plane_tangent_least_squares(const Eigen::Matrix3Xd& points,
                                         const Eigen::Vector3d& material_side,
                                         const FitOptions& options = {});

/// As above, started from `least_squares`, the points' least-squares plane as
/// fit_plane_least_squares(points, options) returns it (the caller fitted it already, e.g. for
/// the material side): the same bits as the call above, which fits it itself. Its point count
/// must be the points' (else std::invalid_argument).
PlaneFit fit_plane_tangent_least_squares(const Eigen::Matrix3Xd& points,
                                         const Eigen::Vector3d& material_side,
                                         const PlaneFit& least_squares,
                                         const FitOptions& options = {});

PlaneFit fit_plane_tangent_minimax(const Eigen::Matrix3Xd& points,
                                   const Eigen::Vector3d& material_side,
                                   const FitOptions& options = {});

/// The tangent minimax plane from the minimum-zone plane of the same points (`zone`, as
/// fit_plane_minimum_zone gives it; its residual values are not read): the zone's outer plane.
/// fit_plane_tangent_minimax(points, side, options) is this applied to
/// fit_plane_minimum_zone(points, options), bit for bit; a caller that holds the zone already
/// (the datum frame's flatness, the association study) does not fit it again.
PlaneFit tangent_minimax_from_zone(const Eigen::Matrix3Xd& points, const PlaneFit& zone,
                                   const Eigen::Vector3d& material_side);

}  // namespace cylzone
