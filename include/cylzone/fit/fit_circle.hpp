#pragma once
/// \file fit_circle.hpp
/// Circles in space. A circle lies in a plane: the least-squares plane of its points (Shakarji
/// 1998, section on circles in 3D), or the plane perpendicular to FitOptions::fixed_direction
/// when one is given (e.g. a section perpendicular to a datum axis). The points are projected
/// onto that plane and the circle is fitted to the projections with geometric distances
/// (Gander, Golub & Strebel 1994 explain why algebraic fits are not acceptable here).

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// Covariance parameters (least squares only) in basis (u, v, w = normal), origin at `centre`:
/// [centre_u, centre_v, radius].
struct CircleFit {
  Eigen::Vector3d centre = Eigen::Vector3d::Zero();  ///< lies in the circle's plane
  Eigen::Vector3d normal = Eigen::Vector3d::UnitZ();
  double radius = 0.0;
  double angular_coverage_deg = 0.0;  ///< 360 minus the largest angular gap between points
  Residuals residuals;                ///< in-plane radial deviations (roundness for minimum zone)
  ParameterCovariance covariance;
  /// Chebyshev and mating fits: largest displacement of the centre, from the reported one to
  /// any centre found whose objective is within the tolerance of the optimum's (the walks
  /// along its near-optimal set and other distinct optima found); 0 when the optimum is proven
  /// unique and for least squares (docs/chebyshev.md, "Non-unique optima"). A warning is added
  /// above 1e-4 mm.
  double ambiguity = 0.0;
  FitSummary summary;

  double diameter() const noexcept { return 2.0 * radius; }
};

/// Needs 3 points not on one line; throws FitError otherwise.
CircleFit fit_circle_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options = {});
/// Roundness: two concentric circles of least radial separation; radius = mean of the two.
CircleFit fit_circle_minimum_zone(const Eigen::Matrix3Xd& points, const FitOptions& options = {});
/// Largest circle with no point inside. Throws FitError when it is unbounded (points on an arc
/// of less than half a circle, or otherwise not enclosing a centre).
CircleFit fit_circle_maximum_inscribed(const Eigen::Matrix3Xd& points,
                                       const FitOptions& options = {});
/// Smallest circle containing every point.
CircleFit fit_circle_minimum_circumscribed(const Eigen::Matrix3Xd& points,
                                           const FitOptions& options = {});

}  // namespace cylzone
