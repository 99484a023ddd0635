// Chebyshev (minimum-zone) and mating-envelope fits, checked against point sets whose optimum is
// known in closed form:
//  * three-lobed circles and cylinders (tests/support/reference_data.hpp; Forbes & Minh,
//    Int. J. Metrol. Qual. Eng. 3(3), 2012): the ideal element is at once the minimum-zone
//    (width 2 eps), maximum-inscribed (r - eps) and minimum-circumscribed (r + eps) element,
//    by the Chebyshev alternation property (6 alternating extremes per section);
//  * plane and line sets built from the Karush-Kuhn-Tucker conditions of the linear programme
//    (common practice): contacts at +-h whose gradients balance with positive multipliers, all
//    other points strictly inside the zone.
// To make every fit travel from its least-squares start, points strictly inside the ideal zone
// are added on one side: they move the least-squares element but cannot change a minimax
// optimum (a superset cannot have a smaller minimax value, and the ideal element still attains
// it). Agreement is required to 1e-9 mm.
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <functional>
#include <limits>
#include <random>
#include <regex>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_circle.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_line.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "fit/detail/chebyshev.hpp"
#include "detail/fit_support.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using cylzone::testing::direction_from_angles;
using cylzone::testing::make_circle_reference;
using cylzone::testing::make_cylinder_reference;
using cylzone::testing::make_lobed_cylinder;
using cylzone::testing::ReferenceSet;

namespace {

constexpr double pi = 3.14159265358979323846;
constexpr double agreement = 1e-9;  // mm

// Orthonormal (u, v) perpendicular to w, written here so the checks share no code with the
// library's frame helpers.
void perpendicular_pair(const Eigen::Vector3d& w, Eigen::Vector3d& u, Eigen::Vector3d& v) {
  const Eigen::Vector3d n = w.normalized();
  const Eigen::Vector3d seed =
      std::abs(n.x()) < 0.6 ? Eigen::Vector3d::UnitX() : Eigen::Vector3d::UnitY();
  u = n.cross(seed).normalized();
  v = n.cross(u);
}

double distance_to_line(const Eigen::Vector3d& p, const Axis& line) {
  return (p - line.point).cross(line.direction.normalized()).norm();
}

// Largest distance of the fitted axis from the ideal one over the ideal axis' span [t0, t1].
double axis_separation(const Axis& fitted, const Axis& ideal, double t0, double t1) {
  const Eigen::Vector3d d = ideal.direction.normalized();
  double worst = 0.0;
  for (double t : {t0, t1}) {
    const Eigen::Vector3d on_ideal = ideal.point + t * d;
    // The fitted axis' point at the same station.
    const Eigen::Vector3d f = fitted.direction.normalized();
    const double s = (on_ideal - fitted.point).dot(f);
    worst = std::max(worst, (fitted.point + s * f - on_ideal).norm());
  }
  return worst;
}

double sine_between(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  return a.normalized().cross(b.normalized()).norm();
}

// The three objectives, to be minimised, from distances.
double objective_of(FitMethod method, const Eigen::VectorXd& d) {
  switch (method) {
    case FitMethod::minimum_zone: return d.maxCoeff() - d.minCoeff();
    case FitMethod::maximum_inscribed: return -d.minCoeff();
    case FitMethod::minimum_circumscribed: return d.maxCoeff();
    case FitMethod::least_squares: break;
  }
  return 0.0;
}

Eigen::VectorXd distances_to_axis(const Eigen::Matrix3Xd& points, const Axis& axis) {
  Eigen::VectorXd d(points.cols());
  for (Eigen::Index i = 0; i < points.cols(); ++i) d(i) = distance_to_line(points.col(i), axis);
  return d;
}

// In-plane distances from the centre of a circle with the given normal.
Eigen::VectorXd distances_in_plane(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre,
                                   const Eigen::Vector3d& normal) {
  return distances_to_axis(points, Axis{centre, normal});
}

// Direct-search certificate, independent of the linear programme: no element displaced by
// `step` in any of `trials` random directions is better than the fitted one.
void require_no_better_neighbour(
    const std::function<double(const Eigen::VectorXd&)>& objective_at, int parameters,
    double step, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  const double at_fit = objective_at(Eigen::VectorXd::Zero(parameters));
  for (int trial = 0; trial < 64; ++trial) {
    // Plain loops: GCC 12 reports a spurious -Warray-bounds on Eigen's vectorised norm of a
    // two-element dynamic vector here.
    Eigen::VectorXd x(parameters);
    double length2 = 0.0;
    for (int k = 0; k < parameters; ++k) {
      x(k) = normal(rng);
      length2 += x(k) * x(k);
    }
    for (int k = 0; k < parameters; ++k) x(k) *= step / std::sqrt(length2);
    CHECK(objective_at(x) >= at_fit - 1e-12);
  }
}

// Points strictly inside the ideal zone (deviation `fraction` * eps, |fraction| < 1), on an arc
// [a0, a1] degrees and axial stations [t0, t1] of the ideal cylinder (t0 == t1: circle).
void append_inside_zone(Eigen::Matrix3Xd& points, const Axis& axis, double radius, double eps,
                        double fraction, double a0, double a1, double t0, double t1, int count) {
  Eigen::Vector3d u, v;
  const Eigen::Vector3d d = axis.direction.normalized();
  perpendicular_pair(d, u, v);
  const Eigen::Index old = points.cols();
  points.conservativeResize(3, old + count);
  for (int k = 0; k < count; ++k) {
    const double s = count > 1 ? double(k) / (count - 1) : 0.0;
    const double a = (a0 + (a1 - a0) * s) * pi / 180.0;
    const double t = t0 + (t1 - t0) * std::fmod(s * 7.0, 1.0);
    points.col(old + k) =
        axis.point + t * d + (radius + fraction * eps) * (std::cos(a) * u + std::sin(a) * v);
  }
}

std::string first_number_after(const std::string& text, const std::string& lead) {
  std::smatch m;
  const std::regex pattern(lead + " ([0-9.]+)");
  return std::regex_search(text, m, pattern) ? m[1].str() : std::string();
}

}  // namespace

// ------------------------------------------------------------------ circles

TEST_CASE("three-lobed circle: minimum zone, inscribed and circumscribed are known",
          "[chebyshev][circle]") {
  // Lobed-set shortcut (Forbes & Minh 2012) plus the alternation property: 3 outer and 3 inner
  // contacts alternating round the circle.
  struct Case {
    const char* name;
    Axis axis;
  };
  const Case cases[] = {
      {"tilted, off the origin", Axis{{12.0, -7.5, 3.25}, direction_from_angles(35.0, 70.0)}},
      {"far from the origin (metres)",
       Axis{{1500.0, -2300.0, 800.0}, direction_from_angles(80.0, -20.0)}},
  };
  const double r = 12.5, eps = 0.004;
  // Either solver of the linear programmes (docs/chebyshev.md, "Solvers").
  FitOptions options;
  options.lp_solver = GENERATE(LpSolver::clp, LpSolver::dense);
  for (const Case& c : cases) {
    SECTION(c.name) {
      const ReferenceSet lobed = make_lobed_cylinder(c.axis, r, 0.0, 0.0, 1, 36, eps, 10.0);
      Eigen::Matrix3Xd points = lobed.points;
      append_inside_zone(points, c.axis, r, eps, 0.8, 0.0, 50.0, 0.0, 0.0, 12);
      const CircleFit ls = fit_circle_least_squares(points);
      // The start is genuinely displaced, so each fit has to move.
      REQUIRE((ls.centre - c.axis.point).norm() > 1e-4);

      const CircleFit mz = fit_circle_minimum_zone(points, options);
      CHECK(mz.summary.method == FitMethod::minimum_zone);
      CHECK(mz.summary.status == FitStatus::converged);
      CHECK(mz.residuals.form == Approx(2.0 * eps).margin(agreement));
      CHECK(mz.radius == Approx(r).margin(agreement));
      CHECK((mz.centre - c.axis.point).norm() < agreement);
      CHECK(sine_between(mz.normal, c.axis.direction) < 1e-12);
      CHECK(mz.covariance.matrix.size() == 0);

      const CircleFit mi = fit_circle_maximum_inscribed(points, options);
      CHECK(mi.summary.method == FitMethod::maximum_inscribed);
      CHECK(mi.radius == Approx(r - eps).margin(agreement));
      CHECK((mi.centre - c.axis.point).norm() < agreement);
      CHECK(mi.residuals.values.minCoeff() == Approx(0.0).margin(1e-12));

      const CircleFit mc = fit_circle_minimum_circumscribed(points, options);
      CHECK(mc.summary.method == FitMethod::minimum_circumscribed);
      CHECK(mc.radius == Approx(r + eps).margin(agreement));
      CHECK((mc.centre - c.axis.point).norm() < agreement);
      CHECK(mc.residuals.values.maxCoeff() == Approx(0.0).margin(1e-12));
      CHECK(mc.diameter() == Approx(2.0 * (r + eps)).margin(2.0 * agreement));
    }
  }
}

TEST_CASE("smallest circle on two diametral points (an optimum that is not an LP vertex)",
          "[chebyshev][circle]") {
  // Elementary geometry: when every other point is strictly inside the circle on the segment
  // of two points as diameter, that circle is the smallest enclosing one. Only two contacts
  // for three unknowns: the objective is flat to first order along the common tangent, so
  // objective comparisons alone place the centre only to ~sqrt(rounding * r) (~1e-7 mm); the
  // Newton refinement on the contacts must reach the exact midpoint.
  const Eigen::Vector3d centre(40.0, 25.0, -10.0);
  const double r = 8.0;
  Eigen::Matrix3Xd points(3, 26);
  points.col(0) = centre + Eigen::Vector3d(r, 0.0, 0.0);
  points.col(1) = centre - Eigen::Vector3d(r, 0.0, 0.0);
  for (int k = 0; k < 24; ++k) {  // an offset ring inside: moves the least-squares centre
    const double a = 2.0 * pi * k / 24.0;
    points.col(2 + k) = centre + Eigen::Vector3d(0.3 + 7.2 * std::cos(a), 0.2 + 7.2 * std::sin(a), 0.0);
  }
  const CircleFit mc = fit_circle_minimum_circumscribed(points);
  CHECK(mc.summary.status == FitStatus::converged);
  CHECK(mc.radius == Approx(r).margin(agreement));
  CHECK((mc.centre - centre).norm() < agreement);
}

TEST_CASE("Chebyshev circles on asymmetric noise beat the least-squares circle",
          "[chebyshev][circle]") {
  // Skewed (one-sided, exponential) radial deviations: the least-squares circle is pulled by
  // the mass of the points, the Chebyshev circles are not. Each must be at least as good as
  // the least-squares circle for its own objective, here strictly better, and no neighbour
  // found by direct search may be better.
  std::mt19937_64 rng(20240611);
  std::exponential_distribution<double> spike(1.0);
  const Eigen::Vector3d centre(-3.0, 8.0, 2.0), normal = direction_from_angles(20.0, 200.0);
  Eigen::Vector3d u, v;
  perpendicular_pair(normal, u, v);
  const double r = 20.0;
  const int n = 90;
  Eigen::Matrix3Xd points(3, n);
  for (int i = 0; i < n; ++i) {
    const double a = 2.0 * pi * (i + 0.3 * std::sin(i)) / n;
    const double e = 0.002 * spike(rng) * (a < 2.0 ? 3.0 : 1.0);
    points.col(i) = centre + (r + e) * (std::cos(a) * u + std::sin(a) * v);
  }
  const CircleFit ls = fit_circle_least_squares(points);
  const Eigen::VectorXd ls_d = distances_in_plane(points, ls.centre, ls.normal);

  for (FitMethod method : {FitMethod::minimum_zone, FitMethod::maximum_inscribed,
                           FitMethod::minimum_circumscribed}) {
    const CircleFit fit = method == FitMethod::minimum_zone ? fit_circle_minimum_zone(points)
                          : method == FitMethod::maximum_inscribed
                              ? fit_circle_maximum_inscribed(points)
                              : fit_circle_minimum_circumscribed(points);
    INFO(method_name(method));
    CHECK(fit.summary.status == FitStatus::converged);
    const Eigen::VectorXd d = distances_in_plane(points, fit.centre, fit.normal);
    CHECK(objective_of(method, d) < objective_of(method, ls_d) - 1e-5);
    // Reported values are the exact values at the reported centre.
    CHECK(fit.residuals.form == Approx(d.maxCoeff() - d.minCoeff()).margin(1e-12));
    Eigen::Vector3d pu, pv;
    perpendicular_pair(fit.normal, pu, pv);
    for (double step : {1e-3, 1e-6})
      require_no_better_neighbour(
          [&](const Eigen::VectorXd& x) {
            return objective_of(method, distances_in_plane(
                                            points, fit.centre + x(0) * pu + x(1) * pv,
                                            fit.normal));
          },
          2, step, 99);
  }
}

TEST_CASE("maximum-inscribed circle on a short arc is unbounded", "[chebyshev][circle]") {
  const ReferenceSet arc = make_circle_reference({5.0, 5.0, 0.0}, Eigen::Vector3d::UnitZ(), 10.0,
                                                 0.0, 90.0, 30, 0.001, 3);
  // Also without the reported coverage (FitOptions::result_coverage): the refusal rests on
  // the start's coverage, measured either way.
  for (bool reported : {true, false}) {
    FitOptions options;
    options.result_coverage = reported;
    INFO((reported ? "coverage reported" : "coverage not reported"));
    try {
      fit_circle_maximum_inscribed(arc.points, options);
      FAIL("no FitError for a 90 degree arc");
    } catch (const FitError& e) {
      const std::string what = e.what();
      INFO(what);
      CHECK_THAT(what, Catch::Contains("unbounded"));
      const std::string covered = first_number_after(what, "cover only");
      REQUIRE(!covered.empty());
      CHECK(std::stod(covered) == Approx(90.0).margin(1.0));
    }
  }
  // The other two are bounded on the same arc.
  CHECK_NOTHROW(fit_circle_minimum_circumscribed(arc.points));
}

TEST_CASE("the engine stops a maximum-inscribed iteration that leaves the points' hull",
          "[chebyshev][engine]") {
  // Started at the centre of a 90 degree arc (outside the points' hull), every distance grows
  // as the centre recedes: the engine must report unbounded rather than iterate to a huge
  // circle. (The public fits refuse such arcs before iterating; this is the safety net.)
  const ReferenceSet arc = make_circle_reference(Eigen::Vector3d::Zero(), Eigen::Vector3d::UnitZ(),
                                                 10.0, 0.0, 90.0, 30, 0.001, 3);
  const Eigen::Matrix2Xd uv = arc.points.topRows<2>();
  const double scale = detail::planar_scale(uv);
  detail::CircleZoneModel model(uv, Eigen::Vector2d::Zero());
  detail::ZoneOptions options;
  options.scale = scale;
  options.location_limit = scale;
  const detail::ZoneSummary summary =
      detail::solve_zone(model, detail::ZoneObjective::maximum_inscribed, options);
  CHECK(summary.status == detail::ZoneStatus::unbounded);
  CHECK(model.location_offset() > scale);
  CHECK(summary.iterations < options.max_iterations);
}

TEST_CASE("degenerate circles are refused", "[chebyshev][circle]") {
  // The Chebyshev fits reuse the least-squares fit's checks, so the messages are its messages.
  Eigen::Matrix3Xd two(3, 2);
  two << 0, 1, 0, 0, 0, 0;
  CHECK_THROWS_WITH(fit_circle_minimum_zone(two), Catch::Contains("at least 3 points"));
  Eigen::Matrix3Xd collinear(3, 5);
  for (int i = 0; i < 5; ++i) collinear.col(i) = Eigen::Vector3d(i, 2.0 * i, -i);
  CHECK_THROWS_WITH(fit_circle_minimum_zone(collinear), Catch::Contains("straight line"));
  CHECK_THROWS_WITH(fit_circle_maximum_inscribed(collinear), Catch::Contains("straight line"));
  CHECK_THROWS_WITH(fit_circle_minimum_circumscribed(collinear), Catch::Contains("straight line"));
  CHECK_THROWS_AS(fit_circle_minimum_zone(Eigen::Matrix3Xd(3, 0)), FitError);
}

// ------------------------------------------------------------------ cylinders

TEST_CASE("three-lobed cylinder: cylindricity and both mating envelopes are known",
          "[chebyshev][cylinder]") {
  struct Case {
    const char* name;
    Axis axis;
  };
  const Case cases[] = {
      {"tilted, off the origin", Axis{{-20.0, 14.0, 35.0}, direction_from_angles(25.0, 130.0)}},
      {"far from the origin (metres)",
       Axis{{-1200.0, 2600.0, 1750.0}, direction_from_angles(90.0, 45.0)}},
  };
  const double r = 6.0, eps = 0.003, t0 = -15.0, t1 = 25.0;
  // Either solver of the linear programmes (docs/chebyshev.md, "Solvers").
  FitOptions options;
  options.lp_solver = GENERATE(LpSolver::clp, LpSolver::dense);
  for (const Case& c : cases) {
    SECTION(c.name) {
      const ReferenceSet lobed = make_lobed_cylinder(c.axis, r, t0, t1, 7, 24, eps, 5.0);
      Eigen::Matrix3Xd points = lobed.points;
      // One-sided clusters at both ends, opposite sides: tilt and shift the least-squares axis.
      append_inside_zone(points, c.axis, r, eps, 0.8, 0.0, 40.0, t1 - 8.0, t1, 20);
      append_inside_zone(points, c.axis, r, eps, -0.7, 170.0, 220.0, t0, t0 + 8.0, 20);
      const CylinderFit ls = fit_cylinder_least_squares(points);
      REQUIRE(axis_separation(ls.axis, c.axis, t0, t1) > 1e-4);

      const CylinderFit mz = fit_cylinder_minimum_zone(points, options);
      CHECK(mz.summary.method == FitMethod::minimum_zone);
      CHECK(mz.summary.status == FitStatus::converged);
      CHECK(mz.residuals.form == Approx(2.0 * eps).margin(agreement));
      CHECK(mz.radius == Approx(r).margin(agreement));
      CHECK(axis_separation(mz.axis, c.axis, t0, t1) < agreement);
      CHECK(mz.covariance.matrix.size() == 0);

      const CylinderFit mi = fit_cylinder_maximum_inscribed(points, options);
      CHECK(mi.summary.status == FitStatus::converged);
      CHECK(mi.radius == Approx(r - eps).margin(agreement));
      CHECK(axis_separation(mi.axis, c.axis, t0, t1) < agreement);

      const CylinderFit mc = fit_cylinder_minimum_circumscribed(points, options);
      CHECK(mc.summary.status == FitStatus::converged);
      CHECK(mc.radius == Approx(r + eps).margin(agreement));
      CHECK(axis_separation(mc.axis, c.axis, t0, t1) < agreement);

      // Canonical form: the axis point is the foot of the centroid, the extent spans the data.
      const Eigen::Vector3d centroid = points.rowwise().mean();
      CHECK((centroid - mz.axis.point).dot(mz.axis.direction) == Approx(0.0).margin(1e-9));
      CHECK(mz.extent_max - mz.extent_min == Approx(t1 - t0).margin(1e-9));
      CHECK(mz.angular_coverage_deg > 340.0);
    }
  }
}

TEST_CASE("fixed-direction cylinder reduces to the circle of the projected points",
          "[chebyshev][cylinder]") {
  const Axis axis{{3.0, -4.0, 10.0}, direction_from_angles(12.0, 300.0)};
  const double r = 9.0, eps = 0.002;
  const ReferenceSet lobed = make_lobed_cylinder(axis, r, -10.0, 10.0, 5, 30, eps, 0.0);
  Eigen::Matrix3Xd points = lobed.points;
  append_inside_zone(points, axis, r, eps, 0.9, 100.0, 140.0, -10.0, 10.0, 25);
  FitOptions options;
  options.fixed_direction = axis.direction;
  const CylinderFit mz = fit_cylinder_minimum_zone(points, options);
  const CylinderFit mi = fit_cylinder_maximum_inscribed(points, options);
  const CylinderFit mc = fit_cylinder_minimum_circumscribed(points, options);
  CHECK(sine_between(mz.axis.direction, axis.direction) < 1e-15);
  CHECK(mz.residuals.form == Approx(2.0 * eps).margin(agreement));
  CHECK(mi.radius == Approx(r - eps).margin(agreement));
  CHECK(mc.radius == Approx(r + eps).margin(agreement));
  for (const CylinderFit* f : {&mz, &mi, &mc})
    CHECK(axis_separation(f->axis, axis, -10.0, 10.0) < agreement);

  // A fixed direction that is not the true one: the same answer as the circle fit of the
  // points projected along it (the circle fit's plane is perpendicular to fixed_direction).
  options.fixed_direction = direction_from_angles(13.0, 301.0);
  const CylinderFit tilted = fit_cylinder_minimum_zone(points, options);
  const CircleFit circle = fit_circle_minimum_zone(points, options);
  CHECK(tilted.residuals.form == Approx(circle.residuals.form).margin(1e-12));
  CHECK(tilted.radius == Approx(circle.radius).margin(1e-12));
  CHECK(distance_to_line(circle.centre, tilted.axis) < 1e-9);
}

TEST_CASE("Chebyshev cylinders on asymmetric noise beat the least-squares cylinder",
          "[chebyshev][cylinder]") {
  std::mt19937_64 rng(77);
  std::exponential_distribution<double> spike(1.0);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const Axis axis{{0.5, 1.5, -2.0}, direction_from_angles(8.0, 40.0)};
  Eigen::Vector3d u, v;
  perpendicular_pair(axis.direction, u, v);
  const double r = 5.0;
  const int n = 400;
  Eigen::Matrix3Xd points(3, n);
  for (int i = 0; i < n; ++i) {
    const double a = 2.0 * pi * unit(rng), t = -12.0 + 24.0 * unit(rng);
    const double e = 0.003 * spike(rng) * (t > 6.0 && a < 1.5 ? 4.0 : 1.0);
    points.col(i) = axis.point + t * axis.direction + (r + e) * (std::cos(a) * u + std::sin(a) * v);
  }
  const CylinderFit ls = fit_cylinder_least_squares(points);
  const Eigen::VectorXd ls_d = distances_to_axis(points, ls.axis);
  for (FitMethod method : {FitMethod::minimum_zone, FitMethod::maximum_inscribed,
                           FitMethod::minimum_circumscribed}) {
    const CylinderFit fit = method == FitMethod::minimum_zone ? fit_cylinder_minimum_zone(points)
                            : method == FitMethod::maximum_inscribed
                                ? fit_cylinder_maximum_inscribed(points)
                                : fit_cylinder_minimum_circumscribed(points);
    INFO(method_name(method));
    CHECK(fit.summary.status == FitStatus::converged);
    const Eigen::VectorXd d = distances_to_axis(points, fit.axis);
    CHECK(objective_of(method, d) < objective_of(method, ls_d) - 1e-5);
    CHECK(fit.residuals.form == Approx(d.maxCoeff() - d.minCoeff()).margin(1e-12));
    CHECK(fit.radius - (method == FitMethod::maximum_inscribed ? d.minCoeff()
                        : method == FitMethod::minimum_circumscribed
                            ? d.maxCoeff()
                            : 0.5 * (d.minCoeff() + d.maxCoeff())) ==
          Approx(0.0).margin(1e-12));
    // Direct search over shifts (mm) and tilts (as displacements over the bore's half-length).
    Eigen::Vector3d pu, pv;
    perpendicular_pair(fit.axis.direction, pu, pv);
    const double half_length = 12.0;
    for (double step : {1e-3, 1e-6})
      require_no_better_neighbour(
          [&](const Eigen::VectorXd& x) {
            const Axis moved{fit.axis.point + x(0) * pu + x(1) * pv,
                             fit.axis.direction + (x(2) * pu + x(3) * pv) / half_length};
            return objective_of(method, distances_to_axis(points, moved));
          },
          4, step, 5);
  }
}

TEST_CASE("maximum-inscribed cylinder on one side of a bore is unbounded",
          "[chebyshev][cylinder]") {
  const Axis axis{{0.0, 0.0, 0.0}, Eigen::Vector3d::UnitZ()};
  const ReferenceSet side = make_cylinder_reference(axis, 10.0, -10.0, 10.0, 5, 30, 120.0, 0.002, 11);
  // With and without the reported coverage (FitOptions::result_coverage), as for circles.
  for (int variant = 0; variant < 4; ++variant) {
    const bool fixed = variant % 2 == 1;
    FitOptions options;
    options.result_coverage = variant < 2;
    if (fixed) options.fixed_direction = Eigen::Vector3d::UnitZ();
    INFO((fixed ? "fixed direction" : "free axis")
         << (options.result_coverage ? "" : ", coverage not reported"));
    try {
      fit_cylinder_maximum_inscribed(side.points, options);
      FAIL("no FitError for points on a 120 degree arc");
    } catch (const FitError& e) {
      const std::string what = e.what();
      INFO(what);
      CHECK_THAT(what, Catch::Contains("maximum-inscribed cylinder is unbounded"));
      const std::string covered = first_number_after(what, "cover only");
      REQUIRE(!covered.empty());
      CHECK(std::stod(covered) == Approx(120.0).margin(3.0));
    }
  }
}

// The four fits of an element by name: least squares and the three Chebyshev methods.
template <class Element>
using FitOf = Element (*)(const Eigen::Matrix3Xd&, const FitOptions&);
template <class Element>
std::vector<std::pair<std::string, FitOf<Element>>> four_methods(FitOf<Element> ls,
                                                                 FitOf<Element> zone,
                                                                 FitOf<Element> inscribed,
                                                                 FitOf<Element> circumscribed) {
  return {{"least squares", ls},
          {"minimum zone", zone},
          {"maximum inscribed", inscribed},
          {"minimum circumscribed", circumscribed}};
}

TEST_CASE("without the reported coverage the elements are the same bits",
          "[chebyshev][coverage]") {
  // FitOptions::result_coverage off (a Monte Carlo trial) leaves the reported coverage and the
  // least-squares covariance out and nothing else: every element must be the bits of the fit
  // with them (the computation it replaces), on full bores with noise (null-space deviations,
  // tests/support/reference_data.hpp) and held or free axes. (An inscribed element on an arc
  // below 180 degrees is still refused with the arc it covers: the tests of unbounded inscribed
  // elements above.)
  const Axis axis{{0.3, -0.2, 1.0}, direction_from_angles(4.0, 25.0)};
  const ReferenceSet bore = make_cylinder_reference(axis, 8.0, -10.0, 10.0, 6, 24, 360.0, 0.004, 5);
  const ReferenceSet ring =
      make_circle_reference({1.0, 2.0, 3.0}, direction_from_angles(3.0, 70.0), 6.0, 0.0, 360.0,
                            40, 0.003, 9);
  FitOptions quiet;
  quiet.result_coverage = false;
  const auto same_cylinder = [](const CylinderFit& a, const CylinderFit& b) {
    CHECK(a.axis.point == b.axis.point);
    CHECK(a.axis.direction == b.axis.direction);
    CHECK(a.radius == b.radius);
    CHECK(a.extent_min == b.extent_min);
    CHECK(a.extent_max == b.extent_max);
    CHECK(a.residuals.values == b.residuals.values);
    CHECK(a.summary.iterations == b.summary.iterations);
    CHECK(a.summary.contacts.size() == b.summary.contacts.size());
  };
  for (bool fixed : {false, true}) {
    FitOptions full, off = quiet;
    if (fixed) full.fixed_direction = off.fixed_direction = axis.direction;
    for (const auto& [name, fit] :
         four_methods<CylinderFit>(&fit_cylinder_least_squares, &fit_cylinder_minimum_zone,
                                   &fit_cylinder_maximum_inscribed,
                                   &fit_cylinder_minimum_circumscribed)) {
      INFO(name << (fixed ? ", held direction" : ", free axis"));
      const CylinderFit a = fit(bore.points, full);
      const CylinderFit b = fit(bore.points, off);
      same_cylinder(a, b);
      CHECK(a.covariance.matrix.size() ==
            (name == "least squares" ? (fixed ? 9 : 25) : 0));
      CHECK(b.covariance.matrix.size() == 0);
      // The least-squares cylinder keeps its coverage (started fits rest on it); the others
      // report none. The points go all round (144 random angles: the largest gap is far below
      // 40 degrees).
      CHECK(a.angular_coverage_deg > 320.0);
      CHECK(b.angular_coverage_deg ==
            (name == "least squares" ? a.angular_coverage_deg : 0.0));
    }
  }
  for (const auto& [name, fit] :
       four_methods<CircleFit>(&fit_circle_least_squares, &fit_circle_minimum_zone,
                               &fit_circle_maximum_inscribed, &fit_circle_minimum_circumscribed)) {
    INFO("circle, " << name);
    const CircleFit a = fit(ring.points, FitOptions{});
    const CircleFit b = fit(ring.points, quiet);
    CHECK(a.centre == b.centre);
    CHECK(a.normal == b.normal);
    CHECK(a.radius == b.radius);
    CHECK(a.residuals.values == b.residuals.values);
    CHECK(a.angular_coverage_deg > 270.0);  // 40 random angles all round
    CHECK(b.angular_coverage_deg == 0.0);
    CHECK(b.covariance.matrix.size() == 0);
  }
  // The coverage warning (points on a 120 degree arc) is given with the coverage reported, not
  // without.
  const ReferenceSet side =
      make_cylinder_reference(Axis{}, 10.0, -10.0, 10.0, 5, 30, 120.0, 0.002, 11);
  const auto covers_warning = [](const FitSummary& s) {
    for (const std::string& w : s.warnings)
      if (w.find("cover only") != std::string::npos) return true;
    return false;
  };
  CHECK(covers_warning(fit_cylinder_least_squares(side.points, FitOptions{}).summary));
  CHECK_FALSE(covers_warning(fit_cylinder_least_squares(side.points, quiet).summary));
}

TEST_CASE("degenerate cylinders are refused", "[chebyshev][cylinder]") {
  // One cross-section: the axis direction is not determined.
  const ReferenceSet section = make_lobed_cylinder(
      Axis{{1.0, 2.0, 3.0}, Eigen::Vector3d::UnitZ()}, 4.0, 0.0, 0.0, 1, 24, 0.001);
  CHECK_THROWS_WITH(fit_cylinder_minimum_zone(section.points),
                    Catch::Contains("one cross-section"));
  CHECK_THROWS_WITH(fit_cylinder_maximum_inscribed(section.points),
                    Catch::Contains("one cross-section"));
  CHECK_THROWS_WITH(fit_cylinder_minimum_circumscribed(section.points),
                    Catch::Contains("one cross-section"));
  Eigen::Matrix3Xd three(3, 3);
  three << 0, 1, 0, 0, 0, 1, 0, 1, 2;
  CHECK_THROWS_WITH(fit_cylinder_minimum_zone(three), Catch::Contains("at least"));
  // With a fixed direction one cross-section is enough; collinear projections are not.
  FitOptions fixed;
  fixed.fixed_direction = Eigen::Vector3d::UnitZ();
  CHECK_NOTHROW(fit_cylinder_minimum_zone(section.points, fixed));
  Eigen::Matrix3Xd wall(3, 6);
  for (int i = 0; i < 6; ++i) wall.col(i) = Eigen::Vector3d(i, 0.5 * i, i % 2);
  CHECK_THROWS_WITH(fit_cylinder_minimum_zone(wall, fixed), Catch::Contains("straight line"));
}

TEST_CASE("the iteration limit is reported, not hidden", "[chebyshev][cylinder]") {
  const Axis axis{{0.0, 0.0, 0.0}, direction_from_angles(5.0, 0.0)};
  const ReferenceSet noisy = make_cylinder_reference(axis, 7.0, -10.0, 10.0, 6, 40, 360.0, 0.01, 5);
  FitOptions options;
  options.max_iterations = 1;
  const CylinderFit fit = fit_cylinder_minimum_zone(noisy.points, options);
  CHECK(fit.summary.status == FitStatus::iteration_limit);
  CHECK(fit.summary.iterations == 1);
  CHECK_THAT(fit.summary.message, Catch::Contains("iteration limit"));
  // Still a valid element: its reported form is the exact zone about its axis.
  const Eigen::VectorXd d = distances_to_axis(noisy.points, fit.axis);
  CHECK(fit.residuals.form == Approx(d.maxCoeff() - d.minCoeff()).margin(1e-12));
}

TEST_CASE("constraint generation returns the optimum of the full linear programme",
          "[chebyshev][engine]") {
  // The same sequential linear programme once with a working set and once with every point in
  // every linear programme: the optimum must not depend on it.
  const Axis axis{{2.0, -1.0, 4.0}, direction_from_angles(15.0, 60.0)};
  const ReferenceSet noisy =
      make_cylinder_reference(axis, 12.0, -20.0, 20.0, 25, 120, 360.0, 0.008, 21);  // 3000 points
  const Eigen::Vector3d centroid = noisy.points.rowwise().mean();
  const double scale = (noisy.points.colwise() - centroid).colwise().norm().maxCoeff();
  const Axis start{axis.point + Eigen::Vector3d(0.01, -0.02, 0.0),
                   (axis.direction + Eigen::Vector3d(0.001, 0.0, -0.0005)).normalized()};
  // Either solver of the linear programmes (docs/chebyshev.md, "Solvers").
  const LpSolver solver = GENERATE(LpSolver::clp, LpSolver::dense);
  for (auto objective : {detail::ZoneObjective::minimum_zone,
                         detail::ZoneObjective::maximum_inscribed,
                         detail::ZoneObjective::minimum_circumscribed}) {
    detail::ZoneOptions options;
    options.lp_solver = solver;
    options.scale = scale;
    options.initial_trust_radius = 0.02;
    options.location_limit = scale;
    detail::AxisZoneModel with_working_set(noisy.points, start);
    const detail::ZoneSummary a = detail::solve_zone(with_working_set, objective, options);
    options.full_set_limit = static_cast<std::size_t>(noisy.points.cols());
    detail::AxisZoneModel with_all_points(noisy.points, start);
    const detail::ZoneSummary b = detail::solve_zone(with_all_points, objective, options);
    INFO(a.message << " / " << b.message);
    REQUIRE(a.status == detail::ZoneStatus::converged);
    REQUIRE(b.status == detail::ZoneStatus::converged);
    CHECK(a.largest_working_set < b.largest_working_set);
    CHECK(detail::zone_radius(objective, a.distances) ==
          Approx(detail::zone_radius(objective, b.distances)).margin(1e-11));
    CHECK(a.distances.maxCoeff() - a.distances.minCoeff() ==
          Approx(b.distances.maxCoeff() - b.distances.minCoeff()).margin(1e-11));
    CHECK(axis_separation(with_working_set.axis(), with_all_points.axis(), -20.0, 20.0) < 1e-10);
  }
}

// ------------------------------------------------------------------ planes

namespace {

// Plane sets from the KKT conditions of  min (top - bottom)  s.t.  bottom <= s_i <= top:
// contacts at +h (multipliers lambda) and -h (mu), sum lambda = sum mu = 1 and
// sum lambda_i x_i = sum mu_j x_j for the in-plane positions x: the convex hulls of the upper
// and lower contacts' projections meet. All other points strictly inside (|s| <= 0.9 h), more
// of them on one side so the least-squares plane is tilted away from the ideal one.
Eigen::Matrix3Xd kkt_plane_set(const Eigen::Vector3d& point, const Eigen::Vector3d& normal,
                               const std::vector<Eigen::Vector2d>& upper,
                               const std::vector<Eigen::Vector2d>& lower, double h, int interior,
                               std::uint64_t seed) {
  Eigen::Vector3d u, v;
  perpendicular_pair(normal, u, v);
  const Eigen::Vector3d n = normal.normalized();
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  const Eigen::Index count = static_cast<Eigen::Index>(upper.size() + lower.size()) + interior;
  Eigen::Matrix3Xd points(3, count);
  Eigen::Index k = 0;
  for (const auto& x : upper) points.col(k++) = point + x(0) * u + x(1) * v + h * n;
  for (const auto& x : lower) points.col(k++) = point + x(0) * u + x(1) * v - h * n;
  for (int i = 0; i < interior; ++i) {
    const double x = 40.0 * unit(rng), y = 30.0 * unit(rng);
    const double s = x > 10.0 ? 0.9 * h * std::abs(unit(rng)) : 0.9 * h * unit(rng);
    points.col(k++) = point + x * u + y * v + s * n;
  }
  return points;
}

}  // namespace

TEST_CASE("minimum-zone plane: KKT-constructed flatness sets", "[chebyshev][plane]") {
  const Eigen::Vector3d point(700.0, -350.0, 1200.0), normal = direction_from_angles(40.0, 15.0);
  const double h = 0.006;
  SECTION("three upper contacts round one lower contact") {
    // The lower contact (4, 3) lies inside the upper triangle: positive barycentric weights.
    const Eigen::Matrix3Xd points =
        kkt_plane_set(point, normal, {{-30.0, -20.0}, {35.0, -15.0}, {5.0, 28.0}}, {{4.0, 3.0}},
                      h, 300, 8);
    const PlaneFit ls = fit_plane_least_squares(points);
    REQUIRE(sine_between(ls.normal, normal) > 1e-6);
    const PlaneFit mz = fit_plane_minimum_zone(points);
    CHECK(mz.summary.status == FitStatus::converged);
    CHECK(mz.summary.method == FitMethod::minimum_zone);
    CHECK(mz.residuals.form == Approx(2.0 * h).margin(agreement));
    CHECK(sine_between(mz.normal, normal) < agreement / 40.0);
    CHECK(std::abs((mz.point - point).dot(normal)) < agreement);  // the mid-plane is the ideal
    CHECK(mz.residuals.form < ls.residuals.form);
  }
  SECTION("two upper and two lower contacts on crossing segments") {
    const Eigen::Matrix3Xd points = kkt_plane_set(
        point, normal, {{-32.0, -5.0}, {30.0, 7.0}}, {{-3.0, 25.0}, {2.0, -26.0}}, h, 300, 9);
    const PlaneFit mz = fit_plane_minimum_zone(points);
    CHECK(mz.residuals.form == Approx(2.0 * h).margin(agreement));
    CHECK(sine_between(mz.normal, normal) < agreement / 40.0);
    CHECK(std::abs((mz.point - point).dot(normal)) < agreement);
    CHECK(mz.residuals.values.maxCoeff() == Approx(h).margin(agreement));
  }
}

TEST_CASE("degenerate planes are refused", "[chebyshev][plane]") {
  Eigen::Matrix3Xd collinear(3, 6);
  for (int i = 0; i < 6; ++i) collinear.col(i) = Eigen::Vector3d(1.0 + i, 2.0 - i, 0.5 * i);
  CHECK_THROWS_WITH(fit_plane_minimum_zone(collinear), Catch::Contains("straight line"));
}

TEST_CASE("degenerate lines are refused", "[chebyshev][line]") {
  Eigen::Matrix3Xd same(3, 4);
  for (int i = 0; i < 4; ++i) same.col(i) = Eigen::Vector3d(2.0, -1.0, 7.0);
  CHECK_THROWS_WITH(fit_line_minimum_zone(same), Catch::Contains("coincide"));
  // Exactly collinear points: a zone of zero diameter, found at once.
  Eigen::Matrix3Xd straight(3, 5);
  for (int i = 0; i < 5; ++i) straight.col(i) = Eigen::Vector3d(1.0 + i, 2.0 - 2.0 * i, 0.5 * i);
  const LineFit fit = fit_line_minimum_zone(straight);
  CHECK(fit.residuals.form == Approx(0.0).margin(1e-12));
  CHECK(fit.summary.status == FitStatus::converged);
}

// ------------------------------------------------------------------ lines

TEST_CASE("minimum-zone line: KKT-constructed straightness sets", "[chebyshev][line]") {
  // Smallest cylinder containing the points. KKT: contacts at radius h with unit radial
  // directions n_i at stations t_i, multipliers lambda_i > 0 with sum lambda n = 0 and
  // sum lambda t n = 0: three contacts at each end whose directions enclose the axis (each gap
  // under 180 degrees) give positive weights per end, and the two ends balance the moments.
  const Axis axis{{-250.0, 400.0, 90.0}, direction_from_angles(65.0, 110.0)};
  Eigen::Vector3d u, v;
  perpendicular_pair(axis.direction, u, v);
  const double h = 0.004, t0 = -60.0, t1 = 45.0;
  std::vector<std::pair<double, double>> contacts = {{t0, 10.0}, {t0, 140.0}, {t0, 250.0},
                                                     {t1, 70.0}, {t1, 200.0}, {t1, 300.0}};
  std::mt19937_64 rng(4);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const int interior = 200;
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(contacts.size()) + interior);
  Eigen::Index k = 0;
  for (const auto& [t, a_deg] : contacts) {
    const double a = a_deg * pi / 180.0;
    points.col(k++) = axis.point + t * axis.direction + h * (std::cos(a) * u + std::sin(a) * v);
  }
  for (int i = 0; i < interior; ++i) {
    const double t = t0 + (t1 - t0) * unit(rng);
    const double a = (t > 0.0 ? 0.5 : 2.0 * pi) * unit(rng);  // crowded on one side near one end
    const double rho = 0.9 * h * unit(rng);
    points.col(k++) = axis.point + t * axis.direction + rho * (std::cos(a) * u + std::sin(a) * v);
  }
  const LineFit ls = fit_line_least_squares(points);
  REQUIRE(axis_separation(ls.axis, axis, t0, t1) > 1e-4);
  const LineFit mz = fit_line_minimum_zone(points);
  CHECK(mz.summary.status == FitStatus::converged);
  CHECK(mz.summary.method == FitMethod::minimum_zone);
  CHECK(mz.residuals.form == Approx(2.0 * h).margin(agreement));
  CHECK(axis_separation(mz.axis, axis, t0, t1) < agreement);
  CHECK(mz.extent_max - mz.extent_min == Approx(t1 - t0).margin(1e-6));
  CHECK(mz.residuals.values.minCoeff() >= 0.0);
  CHECK(mz.residuals.form <= ls.residuals.form);
}

TEST_CASE("minimum-zone line on noisy data is no worse than least squares",
          "[chebyshev][line]") {
  const Axis axis{{1.0, 2.0, 3.0}, direction_from_angles(30.0, 30.0)};
  const auto set = cylzone::testing::make_line_reference(axis, -50.0, 50.0, 80, 0.01, 12);
  const LineFit ls = fit_line_least_squares(set.points);
  const LineFit mz = fit_line_minimum_zone(set.points);
  CHECK(mz.summary.status == FitStatus::converged);
  CHECK(mz.residuals.form < ls.residuals.form - 1e-5);
  Eigen::Vector3d pu, pv;
  perpendicular_pair(mz.axis.direction, pu, pv);
  for (double step : {1e-3, 1e-6})
    require_no_better_neighbour(
        [&](const Eigen::VectorXd& x) {
          const Axis moved{mz.axis.point + x(0) * pu + x(1) * pv,
                           mz.axis.direction + (x(2) * pu + x(3) * pv) / 50.0};
          return distances_to_axis(set.points, moved).maxCoeff();
        },
        4, step, 6);
}

// ------------------------------------------------------------------ uniqueness

namespace {

// The objective tolerance of the uniqueness check, as docs/chebyshev.md defines it:
// ambiguity_tolerance (64 units in the last place) x max(data size, largest distance).
double objective_tolerance(double size, double largest_distance) {
  return detail::ZoneOptions{}.ambiguity_tolerance * std::max(size, largest_distance);
}

double size_about_centroid(const Eigen::Matrix3Xd& points) {
  const Eigen::Vector3d c = points.rowwise().mean();
  return (points.colwise() - c).colwise().norm().maxCoeff();
}

bool warns_not_unique(const FitSummary& summary) {
  for (const std::string& w : summary.warnings)
    if (w.find("not unique") != std::string::npos) return true;
  return false;
}

}  // namespace

TEST_CASE("unique optima have no ambiguity (three-lobed sets)", "[chebyshev][uniqueness]") {
  // Forbes & Minh 2012 lobed sets: the ideal element is the only minimax element (Chebyshev
  // alternation: 3 + 3 alternating extremes per section pin every parameter to first order).
  const Axis circle_axis{{12.0, -7.5, 3.25}, direction_from_angles(35.0, 70.0)};
  const ReferenceSet circle = make_lobed_cylinder(circle_axis, 12.5, 0.0, 0.0, 1, 36, 0.004, 10.0);
  for (const CircleFit& fit : {fit_circle_minimum_zone(circle.points),
                               fit_circle_maximum_inscribed(circle.points),
                               fit_circle_minimum_circumscribed(circle.points)}) {
    INFO(method_name(fit.summary.method) << ": " << fit.summary.message);
    CHECK(fit.ambiguity == 0.0);
    CHECK_FALSE(warns_not_unique(fit.summary));
  }
  const Axis bore{{-1200.0, 2600.0, 1750.0}, direction_from_angles(90.0, 45.0)};
  const ReferenceSet lobed = make_lobed_cylinder(bore, 6.0, -15.0, 25.0, 7, 24, 0.003, 5.0);
  for (const CylinderFit& fit : {fit_cylinder_minimum_zone(lobed.points),
                                 fit_cylinder_maximum_inscribed(lobed.points),
                                 fit_cylinder_minimum_circumscribed(lobed.points)}) {
    INFO(method_name(fit.summary.method) << ": " << fit.summary.message);
    CHECK(fit.ambiguity == 0.0);
    CHECK_FALSE(warns_not_unique(fit.summary));
  }
  // Least squares has no such question: the field stays 0.
  CHECK(fit_cylinder_least_squares(lobed.points).ambiguity == 0.0);
}

TEST_CASE("a sharp optimum is proven unique without further linear programmes",
          "[chebyshev][uniqueness][engine]") {
  // Three-lobed circle: 3 outer contacts at 120 degrees with equal multipliers 1/3 and full
  // rank (common practice: a vertex of the linear programme with positive multipliers).
  const ReferenceSet lobed = make_lobed_cylinder(
      Axis{{0.0, 0.0, 0.0}, Eigen::Vector3d::UnitZ()}, 10.0, 0.0, 0.0, 1, 36, 0.002, 0.0);
  const Eigen::Matrix2Xd uv = lobed.points.topRows<2>();
  detail::ZoneOptions options;
  options.scale = detail::planar_scale(uv);
  detail::CircleZoneModel model(uv, Eigen::Vector2d(0.003, -0.002));
  const detail::ZoneSummary summary =
      detail::solve_zone(model, detail::ZoneObjective::minimum_circumscribed, options);
  CHECK(summary.proven_unique);
  CHECK(summary.ambiguity == 0.0);
  CHECK(summary.ambiguity_programmes == 0);
}

TEST_CASE("smallest circle on two diametral points: the centre is held only to second order",
          "[chebyshev][uniqueness][circle]") {
  // Two points A, B at +-r from the centre along u, every other point well inside. Moving the
  // centre by s along the bisector gives the circumscribed radius sqrt(r^2 + s^2) (Pythagoras):
  // flat to first order, so the contacts do not prove uniqueness, and the circles whose radius
  // is within the tolerance delta of r have their centres in the lens of the discs of radius
  // r + delta about A and B, whose farthest points from the midpoint are on the bisector at
  //   s = sqrt((r + delta)^2 - r^2).
  // That is the exact ambiguity: about 1.4 nm for r = 8 mm (no warning), about 0.7 um for a
  // circle of r = 4 m (warning), since s grows as r (2 x 64 ulp)^(1/2). Unlike a genuine
  // freedom (next test), s depends on delta itself: the computed radii carry a rounding of a
  // few units in the last place of r, so delta, hence s^2, is known to about 8 ulp in 64.
  const Eigen::Vector3d centre(40.0, 25.0, -10.0), normal = direction_from_angles(30.0, 110.0);
  Eigen::Vector3d u, v;
  perpendicular_pair(normal, u, v);
  for (double r : {8.0, 4000.0}) {
    INFO("r = " << r);
    Eigen::Matrix3Xd points(3, 26);
    points.col(0) = centre + r * u;
    points.col(1) = centre - r * u;
    for (int k = 0; k < 24; ++k) {  // an offset ring inside, at most 0.945 r from the centre
      const double a = 2.0 * pi * k / 24.0;
      points.col(2 + k) = centre + (0.0375 * r + 0.9 * r * std::cos(a)) * u +
                          (0.025 * r + 0.9 * r * std::sin(a)) * v;
    }
    const CircleFit mc = fit_circle_minimum_circumscribed(points);
    REQUIRE(mc.summary.status == FitStatus::converged);
    CHECK(mc.radius == Approx(r).epsilon(1e-14));
    CHECK((mc.centre - centre).norm() < 1e-9 * r);
    const double delta = objective_tolerance(size_about_centroid(points), r);
    const double rounding = 8.0 * std::numeric_limits<double>::epsilon() * r;
    const double low = std::sqrt((r + delta - rounding) * (r + delta - rounding) - r * r);
    const double high = std::sqrt((r + delta + rounding) * (r + delta + rounding) - r * r);
    CHECK(mc.ambiguity >= low);
    CHECK(mc.ambiguity <= high);
    if (r < 100.0) {
      CHECK(mc.ambiguity < detail::ambiguity_warning_length);
      CHECK_FALSE(warns_not_unique(mc.summary));
    } else {
      REQUIRE(mc.ambiguity > detail::ambiguity_warning_length);
      REQUIRE(mc.summary.warnings.size() == 1);
      CHECK(mc.summary.warnings[0] ==
            "the minimum-circumscribed circle is not unique: its centre can move by up to " +
                detail::format_number(mc.ambiguity, 6) +
                " mm without changing the size; figures based on this centre carry that "
                "ambiguity");
    }
  }
}

TEST_CASE("maximum-inscribed cylinder that can roll: the ambiguity is the roll's reach",
          "[chebyshev][uniqueness][cylinder]") {
  // Construction (nominal axis z through the pivot O, local frame (x, y, z), R = 10, T = 20),
  // derived here (common practice: first-order analysis of the contacts, then the exact
  // distances along the free motion):
  //  * two straight ridges, the generatrices x = +-R, y = 0, sampled every 5 mm over
  //    z in [-T, T]. On their own they cannot hold a maximum-inscribed cylinder: an axis
  //    shifted by s across their plane is sqrt(R^2 + s^2) > R from every ridge point, so the
  //    cylinder would grow;
  //  * so two pads P+- = (R cos f, +-R sin f, 0), f = 2 mrad, beside the +x ridge at the middle
  //    station stop that shift (their distances change by -+ s sin f);
  //  * first order at the nominal axis (radius R; contacts: ridges and pads): a displacement
  //    a(z) of the axis changes a contact's distance by -e.a(z_contact) (e its radial
  //    direction). The ridges fix a_x(z) = 0 at every station, the pads a_y(0) = 0. Free:
  //    a_y(z) = theta z, the roll of the axis about O in the plane through the axis
  //    perpendicular to the generatrices' plane;
  //  * exactly along that roll (direction (0, sin theta, cos theta) through O) a ridge point
  //    (+-R, 0, z) is sqrt(R^2 + z^2 sin^2 theta) >= R from the axis (R at z = 0) and a pad is
  //    R (1 - sin^2 f sin^2 theta)^(1/2), lower than R by R sin^2 f theta^2 / 2 < 2e-14 mm for
  //    |theta| <= 2.5e-5: every such roll keeps the size to within the tolerance (64 ulp of
  //    the ~22 mm data size, ~3e-13 mm); the criterion cannot choose between them;
  //  * two stops S+- = (0, R + g, +-T), g = 0.5 um, end the roll: S+ is (R + g) cos theta -
  //    T sin theta from the rolled axis, which reaches R at theta+ = acos(R / A) - atan2(T,
  //    R + g) with A = ((R + g)^2 + T^2)^(1/2) (~ g / T); S- likewise at -theta+. A guard at
  //    (0, -(R + G), 0), G = 20 um < 2 R sin f, keeps a larger shift toward -y from growing
  //    the cylinder past the pads.
  // The equally good axes are the rolls theta in [-theta+, theta+] about O. The fit returns one
  // of them; its ambiguity is the largest distance, at the ends of the points' extent and in
  // the planes perpendicular to the fitted axis, between the fitted axis and the two extreme
  // rolls (the definition in fit_cylinder.hpp), computed here from the fitted axis.
  struct Case {
    const char* name;
    Eigen::Vector3d pivot;
    Eigen::Vector3d direction;
  };
  const Case cases[] = {
      {"tilted, off the origin", {-35.0, 120.0, 48.0}, direction_from_angles(20.0, 75.0)},
      {"far from the origin (metres)", {1800.0, -2400.0, 950.0}, direction_from_angles(70.0, -40.0)},
  };
  const double R = 10.0, T = 20.0, g = 5e-4, G = 0.02, f = 2e-3;
  for (const Case& c : cases) {
    SECTION(c.name) {
      Eigen::Vector3d x, y;
      perpendicular_pair(c.direction, x, y);
      const Eigen::Vector3d z = c.direction.normalized();
      std::vector<Eigen::Vector3d> local;
      for (int k = -4; k <= 4; ++k) {
        local.emplace_back(R, 0.0, 5.0 * k);
        local.emplace_back(-R, 0.0, 5.0 * k);
      }
      local.emplace_back(R * std::cos(f), R * std::sin(f), 0.0);
      local.emplace_back(R * std::cos(f), -R * std::sin(f), 0.0);
      local.emplace_back(0.0, R + g, T);
      local.emplace_back(0.0, R + g, -T);
      local.emplace_back(0.0, -(R + G), 0.0);
      Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(local.size()));
      for (std::size_t i = 0; i < local.size(); ++i)
        points.col(static_cast<Eigen::Index>(i)) =
            c.pivot + local[i].x() * x + local[i].y() * y + local[i].z() * z;

      const CylinderFit mi = fit_cylinder_maximum_inscribed(points);
      INFO(mi.summary.message);
      REQUIRE(mi.summary.status == FitStatus::converged);
      CHECK(mi.radius == Approx(R).margin(agreement));
      // The fitted axis is one of the rolls: through the pivot, not tilted toward x.
      CHECK(distance_to_line(c.pivot, mi.axis) < agreement);
      CHECK(std::abs(mi.axis.direction.dot(x)) < 1e-11);

      const double A = std::hypot(R + g, T);
      const double theta = std::acos(R / A) - std::atan2(T, R + g);
      REQUIRE(theta == Approx(g / T).epsilon(1e-4));
      double expected = 0.0;
      for (double roll : {theta, -theta}) {
        const Eigen::Vector3d extreme = std::cos(roll) * z + std::sin(roll) * y;
        for (double t : {mi.extent_min, mi.extent_max}) {
          const Eigen::Vector3d on_fit = mi.axis.point + t * mi.axis.direction;
          const double s = (on_fit - c.pivot).dot(mi.axis.direction) / extreme.dot(mi.axis.direction);
          expected = std::max(expected, (c.pivot + s * extreme - on_fit).norm());
        }
      }
      CHECK(expected > 4.9e-4);
      CHECK(mi.ambiguity == Approx(expected).margin(agreement));
      REQUIRE(mi.summary.warnings.size() == 1);
      CHECK(mi.summary.warnings[0] ==
            "the maximum-inscribed cylinder is not unique: its axis can move by up to " +
                detail::format_number(mi.ambiguity, 6) +
                " mm at the ends without changing the size; figures based on this axis carry "
                "that ambiguity");
    }
  }
}

TEST_CASE("a KKT-constructed flatness zone is proven unique", "[chebyshev][uniqueness][plane]") {
  // The plane set of the tests above: 3 + 1 contacts with positive multipliers whose rows
  // (gradient, bound) span the 4 unknowns (tilts and both bounds) by construction, so the
  // engine proves the zone unique at once and warns of nothing.
  const Eigen::Vector3d point(700.0, -350.0, 1200.0), normal = direction_from_angles(40.0, 15.0);
  const PlaneFit plane = fit_plane_minimum_zone(kkt_plane_set(
      point, normal, {{-30.0, -20.0}, {35.0, -15.0}, {5.0, 28.0}}, {{4.0, 3.0}}, 0.006, 300, 8));
  INFO(plane.summary.message);
  CHECK(plane.summary.warnings.empty());
  CHECK(plane.summary.message.find("not proven unique") == std::string::npos);
}

TEST_CASE("the axis-zone distances' loop gives the bits of the vector expression",
          "[chebyshev][cylinder][model]") {
  // detail::axis_distances (AxisZoneModel::evaluate) computes d = |(q - a) x m| / |m| and its
  // gradients in one plain loop; the reference is the same formula in Eigen's vector
  // operations (Forbes, NPL DITC 140/89, as the model documents it), compared bit for bit
  // (the loop must keep every operation and its order; IEEE 754 arithmetic, no reassociation).
  std::mt19937_64 rng(31337);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  const int n = 301;
  Eigen::Matrix3Xd local(3, n);
  for (int i = 0; i < n; ++i)
    local.col(i) = Eigen::Vector3d(6.0 * unit(rng), 6.0 * unit(rng), 40.0 * unit(rng));
  local.col(7) = Eigen::Vector3d(0.0, 0.0, 3.0);  // on the axis at zero step: the gradient's 0
  // Signed zeros among the coordinates: the zero step's kernel (literal 0.0 and 1.0 for a, b
  // and |m|) must give them the general expression's bits, the sign of a zero included.
  local.col(8) = Eigen::Vector3d(-0.0, 2.5, -4.0);
  local.col(9) = Eigen::Vector3d(1.5, -0.0, 7.0);
  local.col(10) = Eigen::Vector3d(-0.0, -0.0, -0.0);
  local.col(11) = Eigen::Vector3d(0.0, -0.0, 5.0);
  local.col(12) = Eigen::Vector3d(-0.0, 3.0, 0.0);
  const double tilt_scale = 40.0;
  // Trials 0-2: the zero step (+0.0 everywhere, the special kernel) and steps with -0.0
  // entries (the general kernel, whose a - q and b products differ in a zero's sign).
  for (int trial = 0; trial < 50; ++trial) {
    Eigen::VectorXd step = Eigen::VectorXd::Zero(4);
    if (trial == 1) step << -0.0, -0.0, -0.0, -0.0;
    if (trial == 2) step << 0.0, -0.0, 0.0, -0.0;
    if (trial > 2)
      step << 0.01 * unit(rng), 0.01 * unit(rng), 0.02 * unit(rng), 0.02 * unit(rng);
    Eigen::VectorXd d, d_only;
    Eigen::MatrixXd g;
    detail::axis_distances(local, tilt_scale, step, d, &g);
    detail::axis_distances(local, tilt_scale, step, d_only, nullptr);
    const double bu = step(2) / tilt_scale, bv = step(3) / tilt_scale;
    const Eigen::Vector3d a(step(0), step(1), 0.0), m(bu, bv, 1.0);
    const double s = m.norm(), inv_l = 1.0 / tilt_scale;
    int differ = 0;
    for (int i = 0; i < n; ++i) {
      const Eigen::Vector3d w = local.col(i) - a;
      const Eigen::Vector3d c = w.cross(m);
      const double cn = c.norm();
      const double k = (cn > 0.0 ? 1.0 / cn : 0.0) / s;
      const double expected[5] = {
          cn / s, k * (c.y() - bv * c.z()), k * (-c.x() + bu * c.z()),
          (k * (w.z() * c.y() - w.y() * c.z()) - cn * bu / (s * s * s)) * inv_l,
          (k * (-w.z() * c.x() + w.x() * c.z()) - cn * bv / (s * s * s)) * inv_l};
      const double got[5] = {d(i), g(i, 0), g(i, 1), g(i, 2), g(i, 3)};
      for (int j = 0; j < 5; ++j)
        differ += std::memcmp(&got[j], &expected[j], sizeof(double)) == 0 ? 0 : 1;
      differ += d_only(i) == d(i) ? 0 : 1;
    }
    INFO("step " << step.transpose());
    CHECK(differ == 0);
  }
}

// ------------------------------------------------------------------ starts from earlier fits

/// The Chebyshev cylinder of `method` (not least squares).
CylinderFit chebyshev_cylinder(FitMethod method, const Eigen::Matrix3Xd& p, const FitOptions& o) {
  return method == FitMethod::minimum_zone        ? fit_cylinder_minimum_zone(p, o)
         : method == FitMethod::maximum_inscribed ? fit_cylinder_maximum_inscribed(p, o)
                                                  : fit_cylinder_minimum_circumscribed(p, o);
}

/// A bore of `n` points in rings of `per_ring` from `t0` along the axis every 2.5 mm, with
/// uniform noise (up to 0.05 rad in angle, 4 um in radius, so the contacts are distinct points).
Eigen::Matrix3Xd rough_bore(std::mt19937_64& rng, const Axis& axis, double radius, double t0,
                            int per_ring, int n) {
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  Eigen::Vector3d u, v;
  perpendicular_pair(axis.direction, u, v);
  Eigen::Matrix3Xd points(3, n);
  for (int i = 0; i < n; ++i) {
    const double a = 2.0 * pi * (i % per_ring) / per_ring + 0.05 * unit(rng);
    const double t = t0 + 2.5 * (i / per_ring);
    points.col(i) = axis.point + t * axis.direction +
                    (radius + 0.004 * unit(rng)) * (std::cos(a) * u + std::sin(a) * v);
  }
  return points;
}

// FitOptions::start (fit_types.hpp): a fit started from an earlier fit of nearly the same points
// must end on the optimum the closed-form construction gives, whichever way the start served:
// the earlier contacts held (Newton on them, certified by one linear programme), the contacts
// changed (the programmes descend from the earlier element), or the start led nowhere and the
// fit was solved again from its own start. The references are the three-lobed cylinders
// (Forbes & Minh 2012) and the KKT-constructed flatness sets above.
TEST_CASE("a Chebyshev cylinder started from an earlier fit ends on the known optimum",
          "[chebyshev][cylinder][start]") {
  const Axis axis{{-20.0, 14.0, 35.0}, direction_from_angles(25.0, 130.0)};
  const double r = 6.0, eps = 0.003, t0 = -15.0, t1 = 25.0;
  FitOptions options;
  options.lp_solver = GENERATE(LpSolver::clp, LpSolver::dense);
  options.assess_ambiguity = GENERATE(false, true);
  // The lobed set with one-sided clusters strictly inside the zone (as above), so that the
  // least-squares start is off the optimum.
  const auto lobed_set = [&](double radius, double e, double phase_deg) {
    Eigen::Matrix3Xd points =
        make_lobed_cylinder(axis, radius, t0, t1, 7, 24, e, phase_deg).points;
    append_inside_zone(points, axis, radius, e, 0.8, 0.0, 40.0, t1 - 8.0, t1, 20);
    append_inside_zone(points, axis, radius, e, -0.7, 170.0, 220.0, t0, t0 + 8.0, 20);
    return points;
  };
  const Eigen::Matrix3Xd first = lobed_set(r, eps, 5.0);
  using Fit = CylinderFit (*)(const Eigen::Matrix3Xd&, const FitOptions&);
  struct Method {
    const char* name;
    Fit fit;
    double lobes;  // the optimum's radius is r + lobes * eps
  };
  const Method methods[] = {{"minimum zone", fit_cylinder_minimum_zone, 0.0},
                            {"maximum inscribed", fit_cylinder_maximum_inscribed, -1.0},
                            {"minimum circumscribed", fit_cylinder_minimum_circumscribed, 1.0}};
  for (const Method& m : methods) {
    INFO(m.name);
    const CylinderFit earlier = m.fit(first, options);
    REQUIRE(earlier.summary.status == FitStatus::converged);
    REQUIRE(!earlier.summary.contacts.empty());
    FitOptions started = options;
    started.start = fit_start(earlier);
    SECTION(std::string(m.name) + ": the contacts hold") {
      // Larger radius, deeper lobes, the same phase: the same points are the contacts.
      const double r2 = r + 0.0004, eps2 = 0.0025;
      const CylinderFit fit = m.fit(lobed_set(r2, eps2, 5.0), started);
      // The inscribed and circumscribed optima rest on a regular vertex (5 weighted contacts
      // for 4 + 1 unknowns), where Newton's method on the contacts places the element; the
      // three-lobed zone is a degenerate vertex (every lobe's extreme on both sides is a
      // contact), where it is not regular, and the first programme certifies the element
      // from the start as it stands.
      if (m.lobes != 0.0) CHECK(fit.summary.start == StartOutcome::held);
      CHECK(fit.summary.start != StartOutcome::restarted);
      CHECK(fit.summary.iterations == 1);
      CHECK(fit.radius == Approx(r2 + m.lobes * eps2).margin(agreement));
      CHECK(axis_separation(fit.axis, axis, t0, t1) < agreement);
    }
    SECTION(std::string(m.name) + ": the contacts change") {
      // The lobes turned by 30 degrees and the points in reverse order: the earlier contacts'
      // columns are other points now, off the optimum's contacts.
      const Eigen::Matrix3Xd turned = lobed_set(r, eps, 35.0).rowwise().reverse();
      const CylinderFit fit = m.fit(turned, started);
      CHECK(fit.summary.start == StartOutcome::descended);
      CHECK(fit.summary.status == FitStatus::converged);
      CHECK(fit.radius == Approx(r + m.lobes * eps).margin(agreement));
      CHECK(axis_separation(fit.axis, axis, t0, t1) < agreement);
    }
  }
  SECTION("a start that leads nowhere is abandoned for the fit's own") {
    // An earlier axis outside the points (shifted by twice the radius): the inscribed cylinder
    // from there grows without bound, so the fit starts again from its least-squares cylinder.
    FitStart far = fit_start(fit_cylinder_maximum_inscribed(first, options));
    Eigen::Vector3d u, v;
    perpendicular_pair(axis.direction, u, v);
    far.axis.point += 2.0 * r * u;
    FitOptions started = options;
    started.start = far;
    const CylinderFit fit = fit_cylinder_maximum_inscribed(first, started);
    CHECK(fit.summary.start == StartOutcome::restarted);
    CHECK(fit.radius == Approx(r - eps).margin(agreement));
    CHECK(axis_separation(fit.axis, axis, t0, t1) < agreement);
  }
  SECTION("points in one cross-section are refused with a start as without one") {
    const Eigen::Matrix3Xd level = make_lobed_cylinder(axis, r, 0.0, 0.0, 1, 24, eps).points;
    FitOptions started = options;
    started.start = fit_start(fit_cylinder_maximum_inscribed(first, options));
    CHECK_THROWS_AS(fit_cylinder_maximum_inscribed(level, started), FitError);
    CHECK_THROWS_AS(fit_cylinder_minimum_zone(level, started), FitError);
  }
}

TEST_CASE("a started Chebyshev cylinder equals the fit from its own start on perturbed data",
          "[chebyshev][cylinder][start]") {
  // Generated bores with noise (uniform, so the contacts are distinct points), each perturbed
  // again as a Monte Carlo trial does (normal, 0.5 um per coordinate). The start is the
  // trial's own least-squares cylinder with the earlier fit's contacts (as the study passes
  // it): the started fit must give the same element as the fit from its own start.
  std::mt19937_64 rng(4242);
  std::normal_distribution<double> noise(0.0, 0.0005);
  const Axis axis{{12.0, -7.5, -30.0}, direction_from_angles(4.0, 200.0)};
  FitOptions options;
  options.lp_solver = LpSolver::dense;
  options.assess_ambiguity = false;
  options.axis_hint = axis.direction;
  int held = 0, descended = 0;
  for (int bore = 0; bore < 6; ++bore) {
    const int n = 240;
    const Eigen::Matrix3Xd points = rough_bore(rng, axis, 5.0, -20.0, 24, n);
    const CylinderFit ls0 = fit_cylinder_least_squares(points, options);
    for (int trial = 0; trial < 4; ++trial) {
      Eigen::Matrix3Xd moved = points;
      for (Eigen::Index i = 0; i < n; ++i)
        for (int k = 0; k < 3; ++k) moved(k, i) += noise(rng);
      FitOptions ls_start = options;
      ls_start.start = fit_start(ls0);
      const CylinderFit ls = fit_cylinder_least_squares(moved, ls_start);
      const CylinderFit ls_cold = fit_cylinder_least_squares(moved, options);
      CHECK(ls.summary.start == StartOutcome::held);
      CHECK(axis_separation(ls.axis, ls_cold.axis, -20.0, 2.5) < agreement);
      CHECK(ls.radius == Approx(ls_cold.radius).margin(agreement));
      for (FitMethod method : {FitMethod::minimum_zone, FitMethod::maximum_inscribed,
                               FitMethod::minimum_circumscribed}) {
        INFO(method_name(method) << ", bore " << bore << ", trial " << trial);
        const auto fit = [&](const Eigen::Matrix3Xd& p, const FitOptions& o) {
          return chebyshev_cylinder(method, p, o);
        };
        const CylinderFit earlier = fit(points, options);
        FitOptions started = options;
        started.start = fit_start(ls);
        started.start->contacts = earlier.summary.contacts;
        started.start->point_count = earlier.summary.point_count;
        const CylinderFit warm = fit(moved, started);
        const CylinderFit cold = fit(moved, options);
        CHECK(warm.summary.status == FitStatus::converged);
        CHECK(warm.radius == Approx(cold.radius).margin(agreement));
        CHECK(axis_separation(warm.axis, cold.axis, -20.0, 2.5) < agreement);
        CHECK(warm.residuals.form == Approx(cold.residuals.form).margin(agreement));
        held += warm.summary.start == StartOutcome::held ? 1 : 0;
        descended += warm.summary.start == StartOutcome::descended ? 1 : 0;
      }
    }
  }
  CHECK(held + descended == 6 * 4 * 3);  // none restarted
}

TEST_CASE("a started Chebyshev cylinder tries Newton on the earlier contacts wherever they hold",
          "[chebyshev][cylinder][start]") {
  // The started fit pays for Newton's method on the earlier contacts only where the first
  // programme, at the earlier element, leaves them extreme (chebyshev.cpp, descend). The
  // reference for "they hold" is outside that test: the fit from its own start (no start at
  // all), whose weighted contacts are the earlier fit's. Wherever that is so, the started fit
  // must report the start held; wherever it is not, it must descend; and both must give the
  // cold fit's element (the optimality test of the engine, e.g. Nocedal & Wright ch. 4, is the
  // same). Noise from 1e-8 mm (the contacts hold) to 1e-3 mm (they change, as in a Monte Carlo
  // trial at sigma 1 um), so both branches are exercised.
  std::mt19937_64 rng(9090);
  const Axis axis{{3.0, 8.0, -12.0}, direction_from_angles(7.0, 40.0)};
  FitOptions options;
  options.lp_solver = LpSolver::dense;
  options.assess_ambiguity = false;
  options.axis_hint = axis.direction;
  const auto weighted = [](const std::vector<FitContact>& contacts) {
    std::vector<std::pair<std::size_t, bool>> out;
    for (const FitContact& c : contacts)
      if (c.multiplier > 1e-12) out.push_back({c.point, c.outer});
    std::sort(out.begin(), out.end());
    return out;
  };
  int held = 0, descended = 0;
  for (int bore = 0; bore < 3; ++bore) {
    const int n = 192;
    const Eigen::Matrix3Xd points = rough_bore(rng, axis, 4.0, -15.0, 16, n);
    for (double sigma : {1e-8, 1e-6, 1e-3}) {
      std::normal_distribution<double> noise(0.0, sigma);
      Eigen::Matrix3Xd moved = points;
      for (Eigen::Index i = 0; i < n; ++i)
        for (int k = 0; k < 3; ++k) moved(k, i) += noise(rng);
      for (FitMethod method : {FitMethod::minimum_zone, FitMethod::maximum_inscribed,
                               FitMethod::minimum_circumscribed}) {
        INFO(method_name(method) << ", bore " << bore << ", sigma " << sigma);
        const auto fit = [&](const Eigen::Matrix3Xd& p, const FitOptions& o) {
          return chebyshev_cylinder(method, p, o);
        };
        const CylinderFit earlier = fit(points, options);
        REQUIRE(!earlier.summary.contacts.empty());
        FitOptions started = options;
        started.start = fit_start(earlier);
        const CylinderFit warm = fit(moved, started);
        const CylinderFit cold = fit(moved, options);
        REQUIRE(warm.summary.status == FitStatus::converged);
        CHECK(warm.radius == Approx(cold.radius).margin(agreement));
        CHECK(axis_separation(warm.axis, cold.axis, -15.0, 12.5) < agreement);
        const bool same = weighted(cold.summary.contacts) == weighted(earlier.summary.contacts);
        // A regular vertex (at most 4 + sides weighted contacts) is where Newton places the
        // element; a degenerate one is certified by the first programme as it stands.
        const std::size_t sides = method == FitMethod::minimum_zone ? 2 : 1;
        if (same && weighted(earlier.summary.contacts).size() <= 4 + sides) {
          CHECK(warm.summary.start == StartOutcome::held);
          ++held;
        }
        if (!same) {
          CHECK(warm.summary.start == StartOutcome::descended);
          ++descended;
        }
      }
    }
  }
  CHECK(held > 0);
  CHECK(descended > 0);
}

TEST_CASE("a minimum-zone plane started from an earlier fit ends on the known optimum",
          "[chebyshev][plane][start]") {
  const Eigen::Vector3d point(700.0, -350.0, 1200.0), normal = direction_from_angles(40.0, 15.0);
  const std::vector<Eigen::Vector2d> upper = {{-30.0, -20.0}, {35.0, -15.0}, {5.0, 28.0}};
  const std::vector<Eigen::Vector2d> lower = {{4.0, 3.0}};
  FitOptions options;
  options.lp_solver = GENERATE(LpSolver::clp, LpSolver::dense);
  const PlaneFit earlier = fit_plane_minimum_zone(kkt_plane_set(point, normal, upper, lower,
                                                                0.006, 300, 8), options);
  REQUIRE(earlier.summary.contacts.size() == 4);
  options.start = fit_start(earlier);
  SECTION("the contacts hold: a thinner zone on the same contacts") {
    const PlaneFit fit =
        fit_plane_minimum_zone(kkt_plane_set(point, normal, upper, lower, 0.004, 300, 8), options);
    CHECK(fit.summary.start == StartOutcome::held);
    CHECK(fit.summary.iterations == 1);
    CHECK(fit.residuals.form == Approx(0.008).margin(agreement));
    CHECK(sine_between(fit.normal, normal) < agreement / 40.0);
    CHECK(std::abs((fit.point - point).dot(normal)) < agreement);
  }
  SECTION("the contacts change: two and two on crossing segments, a tilted normal") {
    const Eigen::Vector3d tilted = direction_from_angles(40.3, 15.2);
    const PlaneFit fit = fit_plane_minimum_zone(
        kkt_plane_set(point, tilted, {{-32.0, -5.0}, {30.0, 7.0}}, {{-3.0, 25.0}, {2.0, -26.0}},
                      0.006, 300, 9),
        options);
    CHECK(fit.summary.start == StartOutcome::descended);
    CHECK(fit.residuals.form == Approx(0.012).margin(agreement));
    CHECK(sine_between(fit.normal, tilted) < agreement / 40.0);
    CHECK(std::abs((fit.point - point).dot(tilted)) < agreement);
  }
}

TEST_CASE("an axis-zone model given the centroid and scale is the model that computes them",
          "[chebyshev]") {
  // The fits pass the centroid and data_scale they already hold (fit_cylinder_chebyshev); the
  // reference is the constructor that computes both itself: the same distances and gradients,
  // bit for bit (memcmp), at the start and after steps, on bores of several shapes and on
  // coincident points (scale 0: tilts in units of 1).
  std::mt19937_64 rng(20261208);
  std::normal_distribution<double> gauss(0.0, 1.0);
  int compared = 0;
  for (int trial = 0; trial < 40; ++trial) {
    const Eigen::Index n = 5 + static_cast<Eigen::Index>(rng() % 300);
    Eigen::Matrix3Xd points(3, n);
    const bool coincident = trial % 10 == 9;
    for (Eigen::Index i = 0; i < n; ++i) {
      const double a = 2.0 * 3.14159265358979323846 * static_cast<double>(i) /
                       static_cast<double>(n);
      points.col(i) = coincident ? Eigen::Vector3d(1.0, -2.0, 3.0)
                                 : Eigen::Vector3d(100.0 + (5.0 + 0.01 * gauss(rng)) * std::cos(a),
                                                   -40.0 + (5.0 + 0.01 * gauss(rng)) * std::sin(a),
                                                   20.0 * gauss(rng));
    }
    const Axis start{Eigen::Vector3d(100.0 + 0.1 * gauss(rng), -40.0, 0.0),
                     Eigen::Vector3d(0.01 * gauss(rng), 0.01 * gauss(rng), 1.0).normalized()};
    const Eigen::Vector3d c = detail::centroid(points);
    const double scale = detail::data_scale(points, c);
    if (coincident) CHECK(scale == 0.0);
    detail::AxisZoneModel own(points, start);
    detail::AxisZoneModel given(points, start, c, scale);
    for (int step = 0; step < 4; ++step) {
      Eigen::VectorXd x = Eigen::VectorXd::Zero(4);
      if (step > 0)
        for (int k = 0; k < 4; ++k) x(k) = 1e-3 * gauss(rng);
      Eigen::VectorXd d_own, d_given;
      Eigen::MatrixXd g_own, g_given;
      own.evaluate(x, d_own, &g_own);
      given.evaluate(x, d_given, &g_given);
      REQUIRE(d_own.size() == n);
      REQUIRE(d_given.size() == n);
      CHECK(std::memcmp(d_own.data(), d_given.data(), sizeof(double) * n) == 0);
      CHECK(std::memcmp(g_own.data(), g_given.data(), sizeof(double) * 4 * n) == 0);
      const Axis a = own.axis(), b = given.axis();
      CHECK(std::memcmp(a.point.data(), b.point.data(), sizeof(double) * 3) == 0);
      CHECK(std::memcmp(a.direction.data(), b.direction.data(), sizeof(double) * 3) == 0);
      CHECK(own.location_offset() == given.location_offset());
      own.move(x);  // the next step from the moved element
      given.move(x);
      ++compared;
    }
  }
  CHECK(compared == 160);
}
