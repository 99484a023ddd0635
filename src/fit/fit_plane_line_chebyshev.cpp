// Minimum-zone planes (flatness: two parallel planes of least separation) and lines
// (straightness in a cylindrical zone: the smallest cylinder containing the points), by the
// sequential linear programme of detail/chebyshev.hpp, started from the least-squares element.
#include <Eigen/Core>
#include <tuple>
#include <utility>

#include "cylzone/fit/fit_line.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "fit/detail/chebyshev.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {

PlaneFit fit_plane_minimum_zone(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  // The least-squares plane checks the points (count, collinearity) and is the start.
  return fit_plane_minimum_zone(points, fit_plane_least_squares(points, options), options);
}

PlaneFit fit_plane_minimum_zone(const Eigen::Matrix3Xd& points, const PlaneFit& least_squares,
                                const FitOptions& options) {
  // The least-squares plane (the caller's, of these points with these options: it has checked
  // them) is the start, unless an earlier fit's plane is given (FitOptions::start): then only
  // its checks are used, and the zone starts from the earlier normal, its flatness as the first
  // trust region and its contacts (docs/chebyshev.md). A start that does not lead to a
  // converged descent (the same certificate) is abandoned for the least-squares one. Only the
  // normal and the form of the least-squares plane are read (not its residual values).
  const PlaneFit& start = least_squares;
  const bool started = options.start.has_value();
  detail::PlaneZoneModel model(points, started ? options.start->axis.direction : start.normal);
  const double scale = detail::data_scale(points, model.centroid());
  const detail::ZoneOptions zone_options =
      started ? detail::started_zone_options(options, scale, points.cols())
              : detail::zone_options(options, scale, start.residuals.form);
  const detail::ZoneSummary zone =
      detail::solve_zone(model, detail::ZoneObjective::minimum_zone, zone_options);
  if (started && zone.status != detail::ZoneStatus::converged)
    return detail::fit_from_own_start(
        options,
        [&](const FitOptions& own) { return fit_plane_minimum_zone(points, least_squares, own); });

  // The reported plane is the mid-plane of the zone; its point is the centroid projected on it.
  const double mid = 0.5 * (zone.distances.maxCoeff() + zone.distances.minCoeff());
  PlaneFit fit;
  fit.point = model.centroid() + mid * model.normal();
  fit.normal = detail::canonical_direction(model.normal(), options.axis_hint);
  fit.residuals = detail::make_residuals(
      ((points.colwise() - fit.point).transpose() * fit.normal).eval());
  fit.summary = detail::zone_fit_summary(FitMethod::minimum_zone, zone,
                                         static_cast<std::size_t>(points.cols()));
  detail::warn_on_ambiguity(fit.summary, "plane", zone);
  return fit;
}

LineFit fit_line_minimum_zone(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  // The smallest cylinder containing the points is a minimum-circumscribed problem on the
  // orthogonal distances from the line (the same axis model as the cylinder).
  const LineFit start = fit_line_least_squares(points, options);
  detail::AxisZoneModel model(points, start.axis);
  const Eigen::Vector3d c = detail::centroid(points);
  const double scale = detail::data_scale(points, c);
  detail::ZoneOptions zone_options = detail::zone_options(options, scale, start.residuals.form);
  // Among equally good lines, the one nearest the points in the least-squares sense (the sum of
  // their squared distances), not about a radius: a line's residuals are its distances.
  zone_options.residuals_about_offset = false;
  const detail::ZoneSummary zone =
      detail::solve_zone(model, detail::ZoneObjective::minimum_circumscribed, zone_options);

  LineFit fit;
  const Axis axis = model.axis();
  fit.axis = detail::canonical_axis(axis.point, axis.direction, c, options.axis_hint);
  std::tie(fit.extent_min, fit.extent_max) = detail::axial_extent(points, fit.axis);
  fit.residuals = detail::make_residuals(zone.distances);
  fit.residuals.form = 2.0 * zone.distances.maxCoeff();  // diameter of the cylindrical zone
  fit.summary = detail::zone_fit_summary(FitMethod::minimum_zone, zone,
                                         static_cast<std::size_t>(points.cols()));
  detail::warn_on_ambiguity(fit.summary, "line", zone);
  return fit;
}

}  // namespace cylzone
