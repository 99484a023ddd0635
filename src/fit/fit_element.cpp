#include "cylzone/fit/fit_element.hpp"

#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_circle.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_line.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/fit/fit_sphere.hpp"

namespace cylzone {

std::string_view element_name(Element element) noexcept {
  switch (element) {
    case Element::line: return "line";
    case Element::plane: return "plane";
    case Element::circle: return "circle";
    case Element::sphere: return "sphere";
    case Element::cylinder: return "cylinder";
  }
  return "line";
}

std::optional<Element> parse_element(std::string_view text) noexcept {
  for (Element e : {Element::line, Element::plane, Element::circle, Element::sphere,
                    Element::cylinder})
    if (text == element_name(e)) return e;
  return std::nullopt;
}

namespace {

[[noreturn]] void no_such_fit(Element element, FitMethod method) {
  throw FitError("a " + std::string(method_name(method)) + " " +
                 std::string(element_name(element)) + " is not defined");
}

ElementFit from(const LineFit& f) {
  ElementFit e;
  e.element = Element::line;
  e.axis = f.axis;
  e.extent_min = f.extent_min;
  e.extent_max = f.extent_max;
  e.residuals = f.residuals;
  e.covariance = f.covariance;
  e.summary = f.summary;
  return e;
}

ElementFit from(const PlaneFit& f) {
  ElementFit e;
  e.element = Element::plane;
  e.point = f.point;
  e.normal = f.normal;
  e.residuals = f.residuals;
  e.covariance = f.covariance;
  e.summary = f.summary;
  return e;
}

ElementFit from(const CircleFit& f) {
  ElementFit e;
  e.element = Element::circle;
  e.axis = Axis{f.centre, f.normal};
  e.centre = f.centre;
  e.normal = f.normal;
  e.radius = f.radius;
  e.angular_coverage_deg = f.angular_coverage_deg;
  if (f.summary.method != FitMethod::least_squares) e.ambiguity = f.ambiguity;
  e.residuals = f.residuals;
  e.covariance = f.covariance;
  e.summary = f.summary;
  return e;
}

ElementFit from(const SphereFit& f) {
  ElementFit e;
  e.element = Element::sphere;
  e.centre = f.centre;
  e.radius = f.radius;
  e.residuals = f.residuals;
  e.covariance = f.covariance;
  e.summary = f.summary;
  return e;
}

ElementFit from(const CylinderFit& f) {
  ElementFit e;
  e.element = Element::cylinder;
  e.axis = f.axis;
  e.radius = f.radius;
  e.extent_min = f.extent_min;
  e.extent_max = f.extent_max;
  e.angular_coverage_deg = f.angular_coverage_deg;
  if (f.summary.method != FitMethod::least_squares) e.ambiguity = f.ambiguity;
  e.residuals = f.residuals;
  e.covariance = f.covariance;
  e.summary = f.summary;
  return e;
}

}  // namespace

ElementFit fit_element(Element element, FitMethod method, const Eigen::Matrix3Xd& points,
                       const Eigen::Matrix3Xd& vectors, const FitOptions& options) {
  switch (element) {
    case Element::line:
      if (method == FitMethod::least_squares) return from(fit_line_least_squares(points, options));
      if (method == FitMethod::minimum_zone) return from(fit_line_minimum_zone(points, options));
      break;
    case Element::plane:
      if (method == FitMethod::least_squares) return from(fit_plane_least_squares(points, options));
      if (method == FitMethod::minimum_zone) return from(fit_plane_minimum_zone(points, options));
      break;
    case Element::circle:
      switch (method) {
        case FitMethod::least_squares: return from(fit_circle_least_squares(points, options));
        case FitMethod::minimum_zone: return from(fit_circle_minimum_zone(points, options));
        case FitMethod::maximum_inscribed:
          return from(fit_circle_maximum_inscribed(points, options));
        case FitMethod::minimum_circumscribed:
          return from(fit_circle_minimum_circumscribed(points, options));
      }
      break;
    case Element::sphere:
      if (method == FitMethod::least_squares) return from(fit_sphere_least_squares(points, options));
      break;
    case Element::cylinder:
      switch (method) {
        case FitMethod::least_squares:
          return from(vectors.cols() == points.cols() && points.cols() > 0
                          ? fit_cylinder_least_squares(points, vectors, options)
                          : fit_cylinder_least_squares(points, options));
        case FitMethod::minimum_zone: return from(fit_cylinder_minimum_zone(points, options));
        case FitMethod::maximum_inscribed:
          return from(fit_cylinder_maximum_inscribed(points, options));
        case FitMethod::minimum_circumscribed:
          return from(fit_cylinder_minimum_circumscribed(points, options));
      }
      break;
  }
  no_such_fit(element, method);
}

}  // namespace cylzone
