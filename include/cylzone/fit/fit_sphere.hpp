#pragma once
/// \file fit_sphere.hpp
/// Least-squares sphere (Forbes 1989; Shakarji 1998), Gauss-Newton on geometric distances.

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// Covariance parameters in the global axes (basis = identity): [centre_x, centre_y, centre_z, radius].
struct SphereFit {
  Eigen::Vector3d centre = Eigen::Vector3d::Zero();
  double radius = 0.0;
  Residuals residuals;
  ParameterCovariance covariance;
  FitSummary summary;

  double diameter() const noexcept { return 2.0 * radius; }
};

/// Needs 4 points not in one plane; throws FitError otherwise.
SphereFit fit_sphere_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options = {});

}  // namespace cylzone
