// Chebyshev cylinders: cylindricity (minimum zone) and the mating envelopes (maximum inscribed
// for a hole, minimum circumscribed for a pin), by the sequential linear programme of
// detail/chebyshev.hpp. With a free axis the model is the orthogonal distance from an axis
// (2 shifts, 2 tilts); with FitOptions::fixed_direction the problem is the circle problem of
// the points projected along that direction.
#include <Eigen/Core>
#include <tuple>
#include <utility>

#include "cylzone/fit/fit_cylinder.hpp"
#include "fit/detail/chebyshev.hpp"
#include "fit/detail/circle_2d.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {
namespace {

/// `centroid`: detail::centroid(points), which every caller has already computed.
CylinderFit cylinder_result(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid,
                            const Axis& axis, const detail::ZoneSummary& zone, FitMethod method,
                            const FitOptions& options) {
  CylinderFit fit;
  fit.axis = detail::canonical_axis(axis.point, axis.direction, centroid, options.axis_hint);
  std::tie(fit.extent_min, fit.extent_max) = detail::axial_extent(points, fit.axis);
  fit.radius = detail::zone_radius(detail::zone_objective(method), zone.distances);
  // Reported only (FitOptions::result_coverage): the refusal of an unbounded inscribed
  // cylinder rests on its start's coverage, measured before the descent.
  if (options.result_coverage)
    fit.angular_coverage_deg = detail::angular_coverage_deg(
        points, fit.axis.point, detail::basis_from_direction(fit.axis.direction));
  fit.residuals = detail::make_residuals(zone.distances.array() - fit.radius);
  // A held direction makes it a circle problem: the centre's displacement is the axis'.
  fit.ambiguity = zone.ambiguity;
  fit.summary = detail::zone_fit_summary(method, zone, static_cast<std::size_t>(points.cols()));
  detail::warn_on_coverage(fit.summary, fit.angular_coverage_deg, options);
  detail::warn_on_ambiguity(fit.summary, "cylinder", zone);
  return fit;
}

CylinderFit restarted(const Eigen::Matrix3Xd& points, const FitOptions& options,
                      FitMethod method);

// The axis is held: distances from it are the in-plane distances of the projections, so the
// fit is a circle fit in the plane perpendicular to the direction.
CylinderFit fit_fixed_direction(const Eigen::Matrix3Xd& points, const FitOptions& options,
                                FitMethod method) {
  const detail::ZoneObjective objective = detail::zone_objective(method);
  const Eigen::Vector3d direction =
      detail::canonical_direction(*options.fixed_direction, options.axis_hint);
  const Eigen::Vector3d c = detail::centroid(points);
  const Eigen::Matrix3d basis = detail::basis_from_direction(direction);
  Eigen::Matrix2Xd uv = detail::planar_coordinates(points, c, basis);
  if (options.start && points.cols() >= 3 && detail::planar_scale(uv) > 0.0) {
    // From the earlier axis's centre in this plane; no least-squares circle first.
    const Eigen::Vector2d centre = basis.leftCols<2>().transpose() * (options.start->axis.point - c);
    detail::ZoneOptions zone_options =
        detail::started_zone_options(options, detail::planar_scale(uv), points.cols());
    if (objective == detail::ZoneObjective::maximum_inscribed)
      zone_options.location_limit = zone_options.scale;
    detail::require_enclosing_points(objective, "cylinder", options.start->angular_coverage_deg);
    detail::CircleZoneModel model(uv, centre);
    const detail::ZoneSummary zone = detail::solve_zone(model, objective, zone_options);
    // Only a converged descent carries the certificate; otherwise the fit's own start decides.
    if (zone.status != detail::ZoneStatus::converged) return restarted(points, options, method);
    return cylinder_result(points, c, Axis{c + basis.leftCols<2>() * model.centre(), direction},
                           zone, method, options);
  }
  const detail::Circle2dFit start = detail::fit_circle_2d_least_squares(uv, options);
  const Eigen::ArrayXd start_residuals =
      (uv.colwise() - start.centre).colwise().norm().array() - start.radius;
  const double scale = detail::planar_scale(uv);
  const double start_coverage =
      detail::angular_coverage_deg(points, c + basis.leftCols<2>() * start.centre, basis);
  detail::require_enclosing_points(objective, "cylinder", start_coverage);

  detail::ZoneOptions zone_options = detail::zone_options(
      options, scale, start_residuals.maxCoeff() - start_residuals.minCoeff());
  if (objective == detail::ZoneObjective::maximum_inscribed) zone_options.location_limit = scale;
  detail::CircleZoneModel model(std::move(uv), start.centre);
  const detail::ZoneSummary zone = detail::solve_zone(model, objective, zone_options);
  if (zone.status == detail::ZoneStatus::unbounded)
    detail::throw_unbounded_inscribed("cylinder", start_coverage);
  return cylinder_result(points, c, Axis{c + basis.leftCols<2>() * model.centre(), direction},
                         zone, method, options);
}

CylinderFit fit_cylinder_chebyshev(const Eigen::Matrix3Xd& points, const FitOptions& options,
                                   FitMethod method) {
  if (options.fixed_direction) return fit_fixed_direction(points, options, method);
  if (options.start && points.cols() >= 5) {
    // From the earlier axis; no least-squares cylinder first (its multi-start search is the
    // larger part of a small fit's cost). Points that could not fix a cylinder (coincident, or
    // in one cross-section: the least-squares start's checks) go to the fit's own start, which
    // refuses them with the reason.
    const Eigen::Vector3d c = detail::centroid(points);
    const double scale = detail::data_scale(points, c);
    const detail::PrincipalAxes axes = detail::principal_axes(points, c);
    if (!(scale > 0.0) || axes.rms(0) <= detail::degenerate_spread_ratio * axes.rms(2))
      return restarted(points, options, method);
    const detail::ZoneObjective objective = detail::zone_objective(method);
    detail::ZoneOptions zone_options =
        detail::started_zone_options(options, scale, points.cols());
    if (objective == detail::ZoneObjective::maximum_inscribed) zone_options.location_limit = scale;
    detail::require_enclosing_points(objective, "cylinder", options.start->angular_coverage_deg);
    detail::AxisZoneModel model(points, options.start->axis, c, scale);
    const detail::ZoneSummary zone = detail::solve_zone(model, objective, zone_options);
    // Only a converged descent carries the certificate; otherwise the fit's own start decides.
    if (zone.status != detail::ZoneStatus::converged) return restarted(points, options, method);
    return cylinder_result(points, c, model.axis(), zone, method, options);
  }
  // The least-squares cylinder checks the points (count, one cross-section) and is the start.
  const CylinderFit start = fit_cylinder_least_squares(points, options);
  const detail::ZoneObjective objective = detail::zone_objective(method);
  detail::require_enclosing_points(objective, "cylinder", start.angular_coverage_deg);
  const Eigen::Vector3d c = detail::centroid(points);
  const double scale = detail::data_scale(points, c);

  detail::ZoneOptions zone_options = detail::zone_options(options, scale, start.residuals.form);
  // An axis farther than `scale` from the centroid is outside the hull of the points projected
  // along it; shifting it away then increases every distance: the problem is unbounded.
  if (objective == detail::ZoneObjective::maximum_inscribed) zone_options.location_limit = scale;
  detail::AxisZoneModel model(points, start.axis, c, scale);
  const detail::ZoneSummary zone = detail::solve_zone(model, objective, zone_options);
  if (zone.status == detail::ZoneStatus::unbounded)
    detail::throw_unbounded_inscribed("cylinder", start.angular_coverage_deg);
  return cylinder_result(points, c, model.axis(), zone, method, options);
}

CylinderFit restarted(const Eigen::Matrix3Xd& points, const FitOptions& options,
                      FitMethod method) {
  return detail::fit_from_own_start(options, [&](const FitOptions& own) {
    return fit_cylinder_chebyshev(points, own, method);
  });
}

}  // namespace

CylinderFit fit_cylinder_minimum_zone(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  return fit_cylinder_chebyshev(points, options, FitMethod::minimum_zone);
}

CylinderFit fit_cylinder_maximum_inscribed(const Eigen::Matrix3Xd& points,
                                           const FitOptions& options) {
  return fit_cylinder_chebyshev(points, options, FitMethod::maximum_inscribed);
}

CylinderFit fit_cylinder_minimum_circumscribed(const Eigen::Matrix3Xd& points,
                                               const FitOptions& options) {
  return fit_cylinder_chebyshev(points, options, FitMethod::minimum_circumscribed);
}

}  // namespace cylzone
