#pragma once
/// \file fit_plane.hpp
/// Planes: least squares (normal = eigenvector of the smallest eigenvalue of the centred scatter
/// matrix; Forbes 1989, Shakarji 1998) and minimum zone (flatness: the two closest parallel planes
/// containing the points; the reported plane is their mid-plane).

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// Covariance parameters in basis (u, v, w = normal), origin at `point`:
/// [offset_w, slope_u, slope_v] (the plane z_w = offset_w + slope_u x_u + slope_v y_v).
struct PlaneFit {
  Eigen::Vector3d point = Eigen::Vector3d::Zero();
  Eigen::Vector3d normal = Eigen::Vector3d::UnitZ();
  Residuals residuals;  ///< form = flatness for minimum zone, residual span for least squares
  ParameterCovariance covariance;
  FitSummary summary;
};

/// Needs at least 3 non-collinear points; throws FitError otherwise.
PlaneFit fit_plane_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options = {});

/// Chebyshev plane; starts from the least-squares plane.
PlaneFit fit_plane_minimum_zone(const Eigen::Matrix3Xd& points, const FitOptions& options = {});
/// The same, from the caller's least-squares plane of the SAME points fitted with the same
/// options (fit_plane_least_squares(points, options); its normal and form are read, not its
/// residual values): the same bits as the overload above, without fitting it again.
PlaneFit fit_plane_minimum_zone(const Eigen::Matrix3Xd& points, const PlaneFit& least_squares,
                                const FitOptions& options);

/// The start a later minimum-zone fit of nearly the same points takes from `fit`
/// (FitOptions::start): its point and normal, flatness, point count and contacts. The
/// minimum-zone plane then starts from that normal and first tries Newton's method on the
/// earlier contacts (fit_cylinder.hpp's fit_start says the same for cylinders).
FitStart fit_start(const PlaneFit& fit);

}  // namespace cylzone
