#pragma once
/// \file fit_line.hpp
/// Straight lines in space: least squares (Forbes 1989, Shakarji 1998: the line through the
/// centroid along the principal direction of largest spread) and minimum zone (straightness in a
/// cylindrical zone: the smallest cylinder containing the points).

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// Covariance parameters in basis (u, v, w = direction), origin at axis.point:
/// [shift_u, shift_v, tilt_u, tilt_v] (the line x_u = shift_u + tilt_u * z_w, likewise v).
struct LineFit {
  Axis axis;
  double extent_min = 0.0;
  double extent_max = 0.0;
  Residuals residuals;
  ParameterCovariance covariance;
  FitSummary summary;
};

/// Needs at least 2 distinct points. Throws FitError when all points coincide.
LineFit fit_line_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options = {});

/// Smallest-diameter cylinder containing all points (straightness of a derived median line);
/// residuals are distances to its axis, form its diameter. Starts from the least-squares line.
LineFit fit_line_minimum_zone(const Eigen::Matrix3Xd& points, const FitOptions& options = {});

}  // namespace cylzone
