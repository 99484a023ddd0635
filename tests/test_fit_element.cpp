// Run-time dispatch of the fits (cylzone/fit/fit_element.hpp). The reference for each element
// and method is the fit called directly: dispatch must select that fit and copy its result
// without change (exact equality, on null-space reference data of Forbes & Minh, Int. J.
// Metrol. Qual. Eng. 3(3), 2012, so that every fit is well posed). Combinations the header
// documents as undefined (a maximum-inscribed plane, a minimum-zone sphere, ...) must raise
// FitError naming the method and the element.
#include <catch2/catch.hpp>

#include <Eigen/Core>
#include <algorithm>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_circle.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_element.hpp"
#include "cylzone/fit/fit_line.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/fit/fit_sphere.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using namespace cylzone::testing;
using Catch::Matchers::Contains;

namespace {

const FitMethod all_methods[] = {FitMethod::least_squares, FitMethod::minimum_zone,
                                 FitMethod::maximum_inscribed,
                                 FitMethod::minimum_circumscribed};

// Exact equality of the fields every fit result carries.
template <class Fit>
void check_common(const ElementFit& e, const Fit& direct) {
  CHECK(e.residuals.values == direct.residuals.values);
  CHECK(e.residuals.rms == direct.residuals.rms);
  CHECK(e.residuals.form == direct.residuals.form);
  CHECK(e.covariance.matrix == direct.covariance.matrix);
  CHECK(e.covariance.basis == direct.covariance.basis);
  CHECK(e.summary.method == direct.summary.method);
  CHECK(e.summary.status == direct.summary.status);
  CHECK(e.summary.iterations == direct.summary.iterations);
  CHECK(e.summary.message == direct.summary.message);
  CHECK(e.summary.warnings == direct.summary.warnings);
}

void check_same(const ElementFit& e, const LineFit& f) {
  CHECK(e.element == Element::line);
  REQUIRE(e.axis);
  CHECK(e.axis->point == f.axis.point);
  CHECK(e.axis->direction == f.axis.direction);
  CHECK(e.extent_min == f.extent_min);
  CHECK(e.extent_max == f.extent_max);
  CHECK(!e.radius);
  CHECK(!e.normal);
  check_common(e, f);
}

void check_same(const ElementFit& e, const PlaneFit& f) {
  CHECK(e.element == Element::plane);
  REQUIRE(e.point);
  REQUIRE(e.normal);
  CHECK(*e.point == f.point);
  CHECK(*e.normal == f.normal);
  CHECK(!e.axis);
  CHECK(!e.radius);
  check_common(e, f);
}

void check_same(const ElementFit& e, const CircleFit& f) {
  CHECK(e.element == Element::circle);
  REQUIRE(e.centre);
  REQUIRE(e.normal);
  REQUIRE(e.axis);
  CHECK(*e.centre == f.centre);
  CHECK(*e.normal == f.normal);
  CHECK(e.axis->point == f.centre);
  CHECK(e.axis->direction == f.normal);
  CHECK(e.radius == f.radius);
  CHECK(e.angular_coverage_deg == f.angular_coverage_deg);
  // The ambiguity belongs to the Chebyshev and mating methods only (header).
  if (f.summary.method == FitMethod::least_squares)
    CHECK(!e.ambiguity);
  else
    CHECK(e.ambiguity == f.ambiguity);
  check_common(e, f);
}

void check_same(const ElementFit& e, const SphereFit& f) {
  CHECK(e.element == Element::sphere);
  REQUIRE(e.centre);
  CHECK(*e.centre == f.centre);
  CHECK(e.radius == f.radius);
  CHECK(!e.axis);
  check_common(e, f);
}

void check_same(const ElementFit& e, const CylinderFit& f) {
  CHECK(e.element == Element::cylinder);
  REQUIRE(e.axis);
  CHECK(e.axis->point == f.axis.point);
  CHECK(e.axis->direction == f.axis.direction);
  CHECK(e.radius == f.radius);
  CHECK(e.extent_min == f.extent_min);
  CHECK(e.extent_max == f.extent_max);
  CHECK(e.angular_coverage_deg == f.angular_coverage_deg);
  if (f.summary.method == FitMethod::least_squares)
    CHECK(!e.ambiguity);
  else
    CHECK(e.ambiguity == f.ambiguity);
  check_common(e, f);
}

const Eigen::Matrix3Xd no_vectors;

}  // namespace

TEST_CASE("element and method names round-trip", "[fit_element]") {
  for (const Element e : {Element::line, Element::plane, Element::circle, Element::sphere,
                          Element::cylinder}) {
    INFO(std::string(element_name(e)));
    CHECK(parse_element(element_name(e)) == e);
  }
  CHECK(element_name(Element::cylinder) == "cylinder");
  CHECK(!parse_element("cone"));
  CHECK(!parse_element("Plane"));  // names are exact
  CHECK(!parse_element(""));
}

TEST_CASE("fit_element dispatches lines and planes to their fits", "[fit_element]") {
  const Axis axis{{40.0, -12.0, 7.5}, direction_from_angles(35.0, 70.0)};
  const ReferenceSet line = make_line_reference(axis, -30.0, 45.0, 60, 0.003, 2);
  check_same(fit_element(Element::line, FitMethod::least_squares, line.points, no_vectors),
             fit_line_least_squares(line.points));
  check_same(fit_element(Element::line, FitMethod::minimum_zone, line.points, no_vectors),
             fit_line_minimum_zone(line.points));

  const ReferenceSet plane = make_plane_reference({2500.0, -1800.0, 3200.0},
                                                  direction_from_angles(75.0, 130.0), 300.0,
                                                  120.0, 200, 0.01, 5);
  FitOptions hinted;
  hinted.axis_hint = Eigen::Vector3d(0.0, 0.0, -1.0);  // options reach the fit
  check_same(fit_element(Element::plane, FitMethod::least_squares, plane.points, no_vectors, hinted),
             fit_plane_least_squares(plane.points, hinted));
  check_same(fit_element(Element::plane, FitMethod::minimum_zone, plane.points, no_vectors),
             fit_plane_minimum_zone(plane.points));
}

TEST_CASE("fit_element dispatches circles and spheres to their fits", "[fit_element]") {
  const ReferenceSet circle = make_circle_reference(
      {3.0, -2.0, 5.0}, direction_from_angles(20.0, 40.0), 10.0, 0.0, 360.0, 48, 0.002, 3);
  const Eigen::Matrix3Xd& p = circle.points;
  check_same(fit_element(Element::circle, FitMethod::least_squares, p, no_vectors),
             fit_circle_least_squares(p));
  check_same(fit_element(Element::circle, FitMethod::minimum_zone, p, no_vectors),
             fit_circle_minimum_zone(p));
  check_same(fit_element(Element::circle, FitMethod::maximum_inscribed, p, no_vectors),
             fit_circle_maximum_inscribed(p));
  check_same(fit_element(Element::circle, FitMethod::minimum_circumscribed, p, no_vectors),
             fit_circle_minimum_circumscribed(p));

  const ReferenceSet sphere = make_sphere_reference(
      {12.0, -7.0, 30.0}, 25.0, direction_from_angles(10.0, 80.0), 120.0, 200, 0.002, 4);
  check_same(fit_element(Element::sphere, FitMethod::least_squares, sphere.points, no_vectors),
             fit_sphere_least_squares(sphere.points));
}

TEST_CASE("fit_element dispatches cylinders, with and without point vectors", "[fit_element]") {
  const Axis axis{{15.0, -4.0, 2.0}, direction_from_angles(25.0, 110.0)};
  const ReferenceSet cylinder =
      make_cylinder_reference(axis, 8.0, -20.0, 20.0, 5, 24, 360.0, 0.002, 6);
  const Eigen::Matrix3Xd& p = cylinder.points;
  check_same(fit_element(Element::cylinder, FitMethod::least_squares, p, no_vectors),
             fit_cylinder_least_squares(p));
  // Vectors are used when there is one per point, and ignored otherwise.
  check_same(fit_element(Element::cylinder, FitMethod::least_squares, p, cylinder.normals),
             fit_cylinder_least_squares(p, cylinder.normals));
  check_same(fit_element(Element::cylinder, FitMethod::least_squares, p,
                         cylinder.normals.leftCols(3)),
             fit_cylinder_least_squares(p));
  check_same(fit_element(Element::cylinder, FitMethod::minimum_zone, p, no_vectors),
             fit_cylinder_minimum_zone(p));
  check_same(fit_element(Element::cylinder, FitMethod::maximum_inscribed, p, no_vectors),
             fit_cylinder_maximum_inscribed(p));
  check_same(fit_element(Element::cylinder, FitMethod::minimum_circumscribed, p, no_vectors),
             fit_cylinder_minimum_circumscribed(p));
}

TEST_CASE("fit_element refuses the combinations that do not exist", "[fit_element][errors]") {
  // The header: a maximum-inscribed plane, a minimum-zone sphere and the like are FitErrors
  // naming the method and the element; every other pair of element and method runs its fit.
  const std::vector<std::pair<Element, ReferenceSet>> sets = {
      {Element::line, make_line_reference(Axis{{40.0, -12.0, 7.5}, direction_from_angles(35.0, 70.0)},
                                          -30.0, 45.0, 60, 0.003, 2)},
      {Element::plane, make_plane_reference({1.0, 2.0, 3.0}, direction_from_angles(5.0, 30.0),
                                            60.0, 40.0, 80, 0.002, 5)},
      {Element::circle, make_circle_reference({3.0, -2.0, 5.0}, direction_from_angles(20.0, 40.0),
                                              10.0, 0.0, 360.0, 48, 0.002, 3)},
      {Element::sphere, make_sphere_reference({12.0, -7.0, 30.0}, 25.0,
                                              direction_from_angles(10.0, 80.0), 120.0, 200,
                                              0.002, 4)},
      {Element::cylinder,
       make_cylinder_reference(Axis{{15.0, -4.0, 2.0}, direction_from_angles(25.0, 110.0)}, 8.0,
                               -20.0, 20.0, 5, 24, 360.0, 0.002, 6)}};
  const std::vector<std::pair<Element, FitMethod>> undefined = {
      {Element::line, FitMethod::maximum_inscribed},
      {Element::line, FitMethod::minimum_circumscribed},
      {Element::plane, FitMethod::maximum_inscribed},
      {Element::plane, FitMethod::minimum_circumscribed},
      {Element::sphere, FitMethod::minimum_zone},
      {Element::sphere, FitMethod::maximum_inscribed},
      {Element::sphere, FitMethod::minimum_circumscribed}};
  int defined = 0;
  for (const auto& [element, set] : sets)
    for (const FitMethod method : all_methods) {
      const std::string pair = std::string(method_name(method)) + " " +
                               std::string(element_name(element));
      INFO(pair);
      if (std::find(undefined.begin(), undefined.end(), std::make_pair(element, method)) !=
          undefined.end()) {
        CHECK_THROWS_WITH(fit_element(element, method, set.points, no_vectors),
                          Contains("a " + pair + " is not defined"));
        CHECK_THROWS_AS(fit_element(element, method, set.points, no_vectors), FitError);
      } else {
        const ElementFit fit = fit_element(element, method, set.points, no_vectors);
        CHECK(fit.element == element);
        CHECK(fit.summary.method == method);
        ++defined;
      }
    }
  CHECK(defined == 13);  // 5 elements x 4 methods, less the 7 undefined pairs
  // Degenerate points are the fit's own FitError, passed through.
  CHECK_THROWS_WITH(fit_element(Element::sphere, FitMethod::least_squares,
                                sets[3].second.points.leftCols(3), no_vectors),
                    Contains("at least 4"));
}
