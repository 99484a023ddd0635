// Chebyshev circles: roundness (minimum zone), maximum inscribed and minimum circumscribed
// circles, in the plane of the least-squares circle (or the plane perpendicular to
// FitOptions::fixed_direction), by the sequential linear programme of detail/chebyshev.hpp.
#include <Eigen/Core>
#include <utility>

#include "cylzone/fit/fit_circle.hpp"
#include "fit/detail/chebyshev.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {
namespace {

CircleFit fit_circle_chebyshev(const Eigen::Matrix3Xd& points, const FitOptions& options,
                               FitMethod method) {
  // The least-squares circle fixes the plane, checks the points (count, collinearity) and is
  // the starting element.
  const CircleFit start = fit_circle_least_squares(points, options);
  const detail::ZoneObjective objective = detail::zone_objective(method);
  const Eigen::Matrix3d basis = detail::basis_from_direction(start.normal);
  // The start's coverage, which an inscribed circle's refusal rests on: the start's own when
  // it reported one (FitOptions::result_coverage), else measured here the same way.
  const double start_coverage =
      options.result_coverage ? start.angular_coverage_deg
                              : detail::angular_coverage_deg(points, start.centre, basis);
  detail::require_enclosing_points(objective, "circle", start_coverage);
  Eigen::Matrix2Xd uv = detail::planar_coordinates(points, start.centre, basis);
  const double scale = detail::planar_scale(uv);

  detail::ZoneOptions zone_options = detail::zone_options(options, scale, start.residuals.form);
  // A centre outside the projected points' hull (which lies within `scale` of their centroid)
  // can recede from every point: the inscribed circle is then unbounded.
  if (objective == detail::ZoneObjective::maximum_inscribed) zone_options.location_limit = scale;
  detail::CircleZoneModel model(std::move(uv), Eigen::Vector2d::Zero());
  const detail::ZoneSummary zone = detail::solve_zone(model, objective, zone_options);
  if (zone.status == detail::ZoneStatus::unbounded)
    detail::throw_unbounded_inscribed("circle", start_coverage);

  CircleFit fit;
  fit.normal = start.normal;
  fit.centre = start.centre + basis.leftCols<2>() * model.centre();
  fit.radius = detail::zone_radius(objective, zone.distances);
  if (options.result_coverage)
    fit.angular_coverage_deg = detail::angular_coverage_deg(points, fit.centre, basis);
  fit.residuals = detail::make_residuals(zone.distances.array() - fit.radius);
  fit.ambiguity = zone.ambiguity;
  fit.summary = detail::zone_fit_summary(method, zone, static_cast<std::size_t>(points.cols()));
  detail::warn_on_coverage(fit.summary, fit.angular_coverage_deg, options);
  detail::warn_on_ambiguity(fit.summary, "circle", zone);
  return fit;
}

}  // namespace

CircleFit fit_circle_minimum_zone(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  return fit_circle_chebyshev(points, options, FitMethod::minimum_zone);
}

CircleFit fit_circle_maximum_inscribed(const Eigen::Matrix3Xd& points,
                                       const FitOptions& options) {
  return fit_circle_chebyshev(points, options, FitMethod::maximum_inscribed);
}

CircleFit fit_circle_minimum_circumscribed(const Eigen::Matrix3Xd& points,
                                           const FitOptions& options) {
  return fit_circle_chebyshev(points, options, FitMethod::minimum_circumscribed);
}

}  // namespace cylzone
