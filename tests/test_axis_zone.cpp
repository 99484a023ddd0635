// Axis against a cylindrical zone, in closed form. References: the definitions of position and
// perpendicularity with a diameter zone (ASME Y14.5-2018 sections 6 and 7; ISO 1101:2017
// clauses 17 and 18 -- clause numbers from memory), elementary geometry (convexity of the
// distance to a line, the triangle inequality, the smallest enclosing circle) and facts of the
// trade marked "common practice".

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <random>

#include "cylzone/evaluate/axis_zone.hpp"
#include "cylzone/core/errors.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

constexpr double pi = 3.14159265358979323846;

StraightAxis axis_with(const Eigen::Vector2d& at_zero, const Eigen::Vector2d& slope) {
  StraightAxis a;
  a.at_zero = at_zero;
  a.slope = slope;
  return a;
}

/// A straight axis through given deviations at two heights: linear interpolation.
StraightAxis through(double h1, const Eigen::Vector2d& e1, double h2, const Eigen::Vector2d& e2) {
  const Eigen::Vector2d slope = (e2 - e1) / (h2 - h1);
  return axis_with(e1 - h1 * slope, slope);
}

}  // namespace

TEST_CASE("zone frame of a perpendicular bore is the datum frame moved to the true position",
          "[axis_zone]") {
  const ZoneFrame zone = ZoneFrame::at({40.0, -25.0}, Eigen::Vector3d::UnitZ());
  CHECK(zone.origin.isApprox(Eigen::Vector3d(40.0, -25.0, 0.0)));
  CHECK((zone.basis - Eigen::Matrix3d::Identity()).norm() < 1e-15);
}

TEST_CASE("zone frame of an inclined bore: right-handed, w along the direction, u from x",
          "[axis_zone]") {
  const Eigen::Vector3d d = cylzone::testing::direction_from_angles(20.0, 65.0);
  const ZoneFrame zone = ZoneFrame::at({3.0, 4.0}, 2.5 * d);
  CHECK((zone.basis.transpose() * zone.basis - Eigen::Matrix3d::Identity()).norm() < 1e-14);
  CHECK(zone.basis.determinant() == Approx(1.0).margin(1e-14));
  CHECK((zone.basis.col(2) - d).norm() < 1e-15);
  // u lies in the plane of x and w (x made perpendicular to w).
  CHECK(std::abs(zone.basis.col(0).dot(Eigen::Vector3d::UnitX().cross(d))) < 1e-15);
  CHECK(zone.basis.col(0).x() > 0.0);
  CHECK_THROWS_AS(ZoneFrame::at({0.0, 0.0}, Eigen::Vector3d::Zero()), FitError);
}

TEST_CASE("an axis in zone coordinates: offset and slope recovered from a datum-frame axis",
          "[axis_zone]") {
  const ZoneFrame zone = ZoneFrame::at({12.0, 7.0}, cylzone::testing::direction_from_angles(10.0, -30.0));
  const Eigen::Vector2d at_zero(0.013, -0.004), slope(2e-4, -5e-4);
  // Build the axis in the datum frame from its zone description at an arbitrary height.
  const double h0 = -37.0;
  Axis axis;
  axis.point = zone.origin + zone.basis * Eigen::Vector3d((at_zero + h0 * slope).x(),
                                                          (at_zero + h0 * slope).y(), h0);
  axis.direction = (zone.basis * Eigen::Vector3d(slope.x(), slope.y(), 1.0)).normalized();
  const StraightAxis a = StraightAxis::from_axis(axis, zone);
  CHECK((a.at_zero - at_zero).norm() < 1e-12);
  CHECK((a.slope - slope).norm() < 1e-15);
  // Reversing the direction describes the same line.
  axis.direction = -axis.direction;
  const StraightAxis b = StraightAxis::from_axis(axis, zone);
  CHECK((b.at_zero - at_zero).norm() < 1e-12);
  CHECK((b.slope - slope).norm() < 1e-15);
  // An axis perpendicular to the nominal direction has no height parametrisation.
  axis.direction = zone.basis.col(0);
  CHECK_THROWS_WITH(StraightAxis::from_axis(axis, zone), Contains("perpendicular"));
}

TEST_CASE("tilt: angle from the nominal direction and azimuth from u toward v", "[axis_zone]") {
  const double tilt = 3e-4;
  const StraightAxis a = axis_with({0.0, 0.0}, std::tan(tilt) * Eigen::Vector2d(std::cos(2.0), std::sin(2.0)));
  CHECK(a.tilt_rad() == Approx(tilt).epsilon(1e-13));
  CHECK(a.tilt_azimuth_deg() == Approx(2.0 * 180.0 / pi).epsilon(1e-13));
  CHECK(axis_with({0, 0}, {-1e-4, 0.0}).tilt_azimuth_deg() == Approx(180.0));
  CHECK(axis_with({0, 0}, {0.0, -1e-4}).tilt_azimuth_deg() == Approx(-90.0));
  CHECK(axis_with({0, 0}, {0.0, 0.0}).tilt_azimuth_deg() == 0.0);
}

TEST_CASE("position of a straight axis is 2 x the larger end deviation", "[axis_zone]") {
  // The distance of a straight axis from the zone's axis is convex in height, so its largest
  // value over the range is at an end (definition of the cylindrical zone; convexity).
  std::mt19937_64 rng(20240611);
  std::uniform_real_distribution<double> dev(-0.03, 0.03), depth(5.0, 120.0);
  for (int trial = 0; trial < 500; ++trial) {
    const double top = 0.5 * dev(rng), bottom = -depth(rng);
    const Eigen::Vector2d e_top(dev(rng), dev(rng)), e_bottom(dev(rng), dev(rng));
    const StraightAxis a = through(top, e_top, bottom, e_bottom);
    const double expected = 2.0 * std::max(e_top.norm(), e_bottom.norm());
    REQUIRE(position_over_range(a, top, bottom) == Approx(expected).epsilon(1e-12));
    REQUIRE(position_over_range(a, bottom, top) == Approx(expected).epsilon(1e-12));
    const AxisDeviation worst = worst_end(a, top, bottom);
    REQUIRE(worst.diameter() == Approx(expected).epsilon(1e-12));
    REQUIRE(worst.height == (e_top.norm() >= e_bottom.norm() ? top : bottom));
    // Dense sampling never exceeds the end value (it cannot: convexity).
    for (int k = 0; k <= 50; ++k) {
      const double h = bottom + (top - bottom) * k / 50.0;
      REQUIRE(a.at(h).diameter() <= expected * (1.0 + 1e-12));
    }
  }
}

TEST_CASE("perpendicularity of a straight axis is depth x tan(tilt)", "[axis_zone]") {
  // Smallest cylinder perpendicular to A containing the axis over the range: its offset moves
  // along a segment of length depth x tan(theta) (ASME Y14.5-2018 perpendicularity of an axis).
  for (double theta : {1e-6, 2e-4, 0.01, 0.3}) {
    for (double azimuth : {0.0, 1.0, -2.5}) {
      const Eigen::Vector2d slope = std::tan(theta) * Eigen::Vector2d(std::cos(azimuth), std::sin(azimuth));
      const StraightAxis a = axis_with({0.01, -0.02}, slope);
      CHECK(perpendicularity_over_range(a, 0.0, -64.0) == Approx(64.0 * std::tan(theta)).epsilon(1e-13));
      CHECK(perpendicularity_over_range(a, -10.0, -40.0) == Approx(30.0 * std::tan(theta)).epsilon(1e-13));
    }
  }
}

TEST_CASE("with A primary, position over a range is never below perpendicularity over it",
          "[axis_zone]") {
  // Triangle inequality: |e(h1) - e(h2)| <= |e(h1)| + |e(h2)| <= 2 max(|e(h1)|, |e(h2)|), and
  // the left side is depth x |slope|. A standard fact of the trade: position to A|B|C also
  // controls perpendicularity to A (common practice).
  std::mt19937_64 rng(7);
  std::normal_distribution<double> g(0.0, 1.0);
  std::uniform_real_distribution<double> depth(1.0, 200.0);
  int strict = 0;
  for (int trial = 0; trial < 10000; ++trial) {
    const StraightAxis a = axis_with({0.02 * g(rng), 0.02 * g(rng)}, {1e-3 * g(rng), 1e-3 * g(rng)});
    const double top = 2.0 * g(rng), bottom = top - depth(rng);
    const double pos = position_over_range(a, top, bottom);
    const double perp = perpendicularity_over_range(a, top, bottom);
    REQUIRE(pos >= perp * (1.0 - 1e-14));
    if (pos > perp * (1.0 + 1e-6)) ++strict;
  }
  CHECK(strict > 9000);  // equality only when the axis passes through the true axis mid-range
}

TEST_CASE("facts of the trade: positional diameter from coordinate deviations", "[axis_zone]") {
  // Common practice: position = 2 sqrt(dx^2 + dy^2).
  const auto diameter = [](double dx, double dy) {
    return position_over_range(axis_with({dx, dy}, {0.0, 0.0}), 0.0, -10.0);
  };
  CHECK(diameter(0.04, 0.03) == Approx(0.100).epsilon(1e-14));
  CHECK(diameter(0.05, 0.0) == Approx(0.100).epsilon(1e-14));
  CHECK(diameter(0.05, 0.05) == Approx(0.1414213562373095).epsilon(1e-14));
  // A machine holding +/-0.010 in each of X and Y can put a hole 0.010 off in both: a
  // positional diameter of 2 sqrt(2) 0.010 = 0.0283, so it cannot hold a 0.025 zone (common
  // practice: the diameter zone is 1.414 x larger than the equivalent square, and its diagonal
  // is what the square allows).
  const double machine = diameter(0.010, 0.010);
  CHECK(machine == Approx(2.0 * std::sqrt(2.0) * 0.010).epsilon(1e-14));
  CHECK(machine > 0.025);
  CHECK(diameter(0.0088, 0.0088) < 0.025);
  // The single-plane value at one height.
  CHECK(AxisDeviation{-5.0, {0.003, -0.004}}.diameter() == Approx(0.010).epsilon(1e-14));
}

TEST_CASE("a bore on position at its mouth but tilted leaves the zone at the analytic height",
          "[axis_zone]") {
  // |e(h)| = |h| tan(theta) reaches T/2 at h = -(T/2) / tan(theta).
  const double theta = 4e-4, zone = 0.025;
  const StraightAxis a = axis_with({0.0, 0.0}, std::tan(theta) * Eigen::Vector2d(0.6, 0.8));
  const auto leaves = first_height_outside(a, 0.0, -64.0, zone);
  REQUIRE(leaves.has_value());
  CHECK(*leaves == Approx(-(zone / 2.0) / std::tan(theta)).epsilon(1e-13));
  CHECK(position_over_range(a, 0.0, -64.0) > zone);
  // Over a shallower range it stays inside.
  CHECK_FALSE(first_height_outside(a, 0.0, -20.0, zone).has_value());
  // Offset at the mouth perpendicular to the tilt: |e|^2 = a^2 + h^2 k^2 = R^2.
  const double off = 0.006, k = 2e-4;
  const StraightAxis b = axis_with({off, 0.0}, {0.0, k});
  const double expected = -std::sqrt(0.25 * zone * zone - off * off) / k;
  CHECK(first_height_outside(b, 0.0, -100.0, zone).value() == Approx(expected).epsilon(1e-12));
  // Scanning upward finds the crossing on that side.
  CHECK(first_height_outside(b, 0.0, 100.0, zone).value() == Approx(-expected).epsilon(1e-12));
  CHECK(first_height_outside(b, -20.0, 100.0, zone).value() == Approx(-expected).epsilon(1e-12));
  // Outside already at the start: the start.
  CHECK(first_height_outside(axis_with({0.02, 0.0}, {0.0, 0.0}), -1.0, -9.0, zone).value() == -1.0);
  CHECK(first_height_outside(b, -100.0, 100.0, zone).value() == -100.0);
  // A constant offset inside the zone never leaves.
  CHECK_FALSE(first_height_outside(axis_with({0.012, 0.0}, {0.0, 0.0}), 0.0, -1e4, zone).has_value());
}

TEST_CASE("median line: position of points and perpendicularity by the smallest enclosing circle",
          "[axis_zone]") {
  std::vector<AxisDeviation> c;
  // Points on a circle of radius 0.007 about (0.002, -0.001), plus points inside it: the
  // smallest enclosing circle is that circle (elementary geometry).
  const Eigen::Vector2d centre(0.002, -0.001);
  for (int k = 0; k < 7; ++k) {
    const double a = 0.3 + 2.0 * pi * k / 7.0;
    c.push_back({-2.0 * k, centre + 0.007 * Eigen::Vector2d(std::cos(a), std::sin(a))});
    c.push_back({-2.0 * k - 1.0, centre + 0.003 * Eigen::Vector2d(std::cos(2 * a), std::sin(a))});
  }
  CHECK(perpendicularity_of_points(c) == Approx(0.014).epsilon(1e-12));
  double largest = 0.0;
  for (const auto& d : c) largest = std::max(largest, d.offset.norm());
  CHECK(position_of_points(c) == Approx(2.0 * largest).epsilon(1e-15));
  CHECK(position_of_points(c) >= perpendicularity_of_points(c));

  // Collinear offsets: the segment's length.
  std::vector<AxisDeviation> line;
  for (double t : {0.3, -0.1, 0.8, 0.0, 0.5}) line.push_back({t, {0.01 * t, 0.02 * t}});
  CHECK(perpendicularity_of_points(line) == Approx(0.9 * std::sqrt(0.0005)).epsilon(1e-12));

  // Obtuse triangle: the longest side is the diameter; acute triangle: the circumcircle.
  const std::vector<AxisDeviation> obtuse = {{0, {0.0, 0.0}}, {1, {0.010, 0.0}}, {2, {0.005, 0.001}}};
  CHECK(perpendicularity_of_points(obtuse) == Approx(0.010).epsilon(1e-12));
  const std::vector<AxisDeviation> equilateral = {
      {0, {0.0, 0.0}}, {1, {0.010, 0.0}}, {2, {0.005, 0.005 * std::sqrt(3.0)}}};
  CHECK(perpendicularity_of_points(equilateral) == Approx(2.0 * 0.010 / std::sqrt(3.0)).epsilon(1e-12));

  // One centre: no spread; none: zero.
  CHECK(perpendicularity_of_points({{0, {0.01, 0.0}}}) == 0.0);
  CHECK(perpendicularity_of_points({}) == 0.0);
  CHECK(position_of_points({}) == 0.0);
}

TEST_CASE("median line perpendicularity against brute force on random centres", "[axis_zone]") {
  // Reference: the smallest enclosing circle is determined by 2 or 3 of the points (Welzl 1991);
  // enumerate every pair and triple and keep the smallest circle containing all points.
  std::mt19937_64 rng(99);
  std::normal_distribution<double> g(0.0, 0.004);
  for (int trial = 0; trial < 40; ++trial) {
    std::vector<AxisDeviation> c;
    const int n = 3 + trial % 9;
    for (int k = 0; k < n; ++k) c.push_back({-1.0 * k, {g(rng), g(rng)}});
    double best = std::numeric_limits<double>::infinity();
    const auto contains_all = [&](const Eigen::Vector2d& o, double r) {
      for (const auto& d : c)
        if ((d.offset - o).norm() > r * (1 + 1e-12)) return false;
      return true;
    };
    for (int i = 0; i < n; ++i)
      for (int j = i + 1; j < n; ++j) {
        const Eigen::Vector2d o = 0.5 * (c[i].offset + c[j].offset);
        const double r = 0.5 * (c[i].offset - c[j].offset).norm();
        if (contains_all(o, r)) best = std::min(best, 2 * r);
        for (int k = j + 1; k < n; ++k) {
          const Eigen::Vector2d a = c[i].offset, b = c[j].offset, e = c[k].offset;
          const double d = 2 * (a.x() * (b.y() - e.y()) + b.x() * (e.y() - a.y()) + e.x() * (a.y() - b.y()));
          if (std::abs(d) < 1e-18) continue;
          const Eigen::Vector2d o((a.squaredNorm() * (b.y() - e.y()) + b.squaredNorm() * (e.y() - a.y()) +
                                   e.squaredNorm() * (a.y() - b.y())) / d,
                                  (a.squaredNorm() * (e.x() - b.x()) + b.squaredNorm() * (a.x() - e.x()) +
                                   e.squaredNorm() * (b.x() - a.x())) / d);
          const double r = (a - o).norm();
          if (contains_all(o, r)) best = std::min(best, 2 * r);
        }
      }
    REQUIRE(perpendicularity_of_points(c) == Approx(best).epsilon(1e-10));
  }
}
