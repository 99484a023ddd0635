#pragma once
/// \file fit_element.hpp
/// One entry point for "fit element E by method M", for tools that choose both at run time.

#include <Eigen/Core>
#include <optional>
#include <string_view>

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

enum class Element { line, plane, circle, sphere, cylinder };

/// "line", "plane", "circle", "sphere", "cylinder".
std::string_view element_name(Element element) noexcept;
std::optional<Element> parse_element(std::string_view text) noexcept;

/// A fitted element of any kind; fields that do not apply are empty.
struct ElementFit {
  Element element = Element::line;
  std::optional<Axis> axis;               ///< line, circle (axis.point = centre), cylinder
  std::optional<Eigen::Vector3d> point;   ///< plane
  std::optional<Eigen::Vector3d> normal;  ///< plane, circle
  std::optional<Eigen::Vector3d> centre;  ///< circle, sphere
  std::optional<double> radius;           ///< circle, sphere, cylinder
  std::optional<double> extent_min, extent_max;     ///< line, cylinder
  std::optional<double> angular_coverage_deg;       ///< circle, cylinder
  /// Circle and cylinder by a Chebyshev or mating method: how far the element can move without
  /// a worse objective (0 = unique); see CylinderFit::ambiguity.
  std::optional<double> ambiguity;
  Residuals residuals;
  ParameterCovariance covariance;
  FitSummary summary;
};

/// Throws FitError for combinations that do not exist (a maximum-inscribed plane, a minimum-zone
/// sphere) and for degenerate points. `vectors` may be empty.
ElementFit fit_element(Element element, FitMethod method, const Eigen::Matrix3Xd& points,
                       const Eigen::Matrix3Xd& vectors, const FitOptions& options = {});

}  // namespace cylzone
