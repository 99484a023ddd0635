// The unrolled surface map (evaluate/surface_map.hpp): points placed by their angle about the
// axis and their height, residuals averaged per cell. The expected cells are worked out by hand
// from the geometry (angle = atan2 in the plane normal to the axis; common practice).
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <stdexcept>

#include "cylzone/evaluate/surface_map.hpp"
#include "evaluate/detail/angle_column.hpp"

#include <random>

using namespace cylzone;

namespace {

constexpr double pi = 3.14159265358979323846;

/// A point at `angle_deg` from +x toward +y, radius r, height h about an axis along z through
/// (cx, cy): the zone frame of a perpendicular bore at (cx, cy).
Eigen::Vector3d on_bore(double cx, double cy, double r, double angle_deg, double h) {
  const double a = angle_deg * pi / 180.0;
  return {cx + r * std::cos(a), cy + r * std::sin(a), h};
}

}  // namespace

TEST_CASE("surface map: cells by angle from +x toward +y and by height from the top") {
  // Bore at true position (40, -25), off the origin, nominal direction +z.
  const ZoneFrame zone = ZoneFrame::at({40.0, -25.0}, Eigen::Vector3d::UnitZ());
  Axis axis;
  axis.point = {40.0, -25.0, -10.0};
  axis.direction = {0.0, 0.0, -1.0};  // either sense: the angle must not flip with it
  Eigen::Matrix3Xd points(3, 6);
  Eigen::VectorXd dev(6);
  // Top level z = -2, bottom z = -42: 8 rows of 5 mm; 36 columns of 10 degrees.
  points.col(0) = on_bore(40, -25, 5, 3.0, -2.0);
  dev[0] = 0.002;  // row 0, column 0
  points.col(1) = on_bore(40, -25, 5, 7.0, -4.0);
  dev[1] = 0.004;  // row 0, column 0
  points.col(2) = on_bore(40, -25, 5, 95.0, -2.0);
  dev[2] = -0.001;  // +y side: column 9
  points.col(3) = on_bore(40, -25, 5, -90.0, -42.0);
  dev[3] = 0.003;  // 270 deg, last row
  points.col(4) = on_bore(40, -25, 5, 181.0, -22.5);
  dev[4] = -0.002;  // row 4 (20..25 below)
  points.col(5) = on_bore(40, -25, 5, 359.9, -7.1);
  dev[5] = 0.001;  // row 1, column 35
  SurfaceMapOptions options;
  options.angle_cells = 36;
  options.depth_cells = 8;
  const SurfaceMap map = radial_deviation_map(points, dev, axis, zone, options);
  REQUIRE(map.mean.size() == 36 * 8);
  CHECK(map.top == Approx(-2.0));
  CHECK(map.bottom == Approx(-42.0));
  CHECK(map.points == 6);
  CHECK(map.count[0 * 36 + 0] == 2);
  CHECK(map.at(0, 0) == Approx(0.003));  // mean of 0.002 and 0.004
  CHECK(map.at(0, 9) == Approx(-0.001));
  CHECK(map.at(7, 27) == Approx(0.003));
  CHECK(map.at(4, 18) == Approx(-0.002));
  CHECK(map.at(1, 35) == Approx(0.001));
  std::size_t filled = 0;
  for (std::size_t c : map.count) filled += c > 0;
  CHECK(filled == 5);
  CHECK(map.empty(3, 3));
  CHECK(map.smallest == Approx(-0.002));
  CHECK(map.largest == Approx(0.004));
  CHECK(map.largest_cell_magnitude() == Approx(0.003));
}

TEST_CASE("surface map: a tilted axis takes angles in the plane normal to it") {
  // Axis tilted 0.3 rad toward +x: a point on the +y side of the axis stays at 90 degrees,
  // although its x differs from the axis point's at another height.
  const ZoneFrame zone = ZoneFrame::at({-12.0, 7.0}, Eigen::Vector3d::UnitZ());
  Axis axis;
  axis.point = {-12.0, 7.0, 0.0};
  axis.direction = Eigen::Vector3d(std::sin(0.3), 0.0, std::cos(0.3));
  const Eigen::Vector3d on_axis = axis.point - 20.0 * axis.direction;  // 20 mm down the axis
  Eigen::Matrix3Xd points(3, 2);
  points.col(0) = on_axis + Eigen::Vector3d(0.0, 4.0, 0.0);
  points.col(1) = axis.point + 4.0 * Eigen::Vector3d(std::cos(0.3), 0.0, -std::sin(0.3));
  const Eigen::VectorXd dev = Eigen::Vector2d(0.001, 0.002);
  SurfaceMapOptions options;
  options.angle_cells = 72;
  options.depth_cells = 4;
  const SurfaceMap map = radial_deviation_map(points, dev, axis, zone, options);
  CHECK(map.count[3 * 72 + 18] == 1);  // 90 degrees, bottom row
  CHECK(map.count[0 * 72 + 0] == 1);   // 0 degrees (+x side normal to the axis), top row
}

TEST_CASE("surface map: the same under a rigid motion of points, axis and zone together") {
  const ZoneFrame zone = ZoneFrame::at({15.0, 30.0}, Eigen::Vector3d::UnitZ());
  Axis axis;
  axis.point = {15.0, 30.0, -5.0};
  axis.direction = Eigen::Vector3d::UnitZ();
  Eigen::Matrix3Xd points(3, 60);
  Eigen::VectorXd dev(60);
  for (int i = 0; i < 60; ++i) {
    // Off the cell edges (every 5 degrees): a point within rounding of an edge may fall on
    // either side of it after a motion (surface_map.hpp).
    points.col(i) = on_bore(15, 30, 6, 6.0 * i + 2.5, -1.0 - 0.8 * i);
    dev[i] = 0.001 * std::sin(3.0 * i);
  }
  const SurfaceMap a = radial_deviation_map(points, dev, axis, zone);
  const Eigen::Matrix3d r =
      (Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 2, 3).normalized())).toRotationMatrix();
  const Eigen::Vector3d t(500.0, -250.0, 75.0);
  ZoneFrame moved_zone;
  moved_zone.origin = r * zone.origin + t;
  moved_zone.basis = r * zone.basis;
  Axis moved_axis{r * axis.point + t, r * axis.direction};
  const Eigen::Matrix3Xd moved = (r * points).colwise() + t;
  const SurfaceMap b = radial_deviation_map(moved, dev, moved_axis, moved_zone);
  CHECK(a.count == b.count);
  for (std::size_t k = 0; k < a.mean.size(); ++k)
    CHECK(a.mean[k] == Approx(b.mean[k]).margin(1e-15));
  CHECK(a.top == Approx(b.top));
}

TEST_CASE("surface map: bad arguments are refused") {
  const ZoneFrame zone = ZoneFrame::at({0.0, 0.0}, Eigen::Vector3d::UnitZ());
  Axis axis;
  Eigen::Matrix3Xd points = Eigen::Matrix3Xd::Zero(3, 2);
  points(0, 0) = 1.0;
  points(1, 1) = 1.0;
  CHECK_THROWS_AS(radial_deviation_map(points, Eigen::VectorXd::Zero(3), axis, zone),
                  std::invalid_argument);
  SurfaceMapOptions none;
  none.angle_cells = 0;
  CHECK_THROWS_AS(radial_deviation_map(points, Eigen::VectorXd::Zero(2), axis, zone, none),
                  std::invalid_argument);
  Eigen::VectorXd nan = Eigen::VectorXd::Zero(2);
  nan[1] = std::nan("");
  CHECK_THROWS_AS(radial_deviation_map(points, nan, axis, zone), std::invalid_argument);
  // No points: an empty grid of the requested size.
  const SurfaceMap empty =
      radial_deviation_map(Eigen::Matrix3Xd(3, 0), Eigen::VectorXd(0), axis, zone);
  CHECK(empty.mean.size() == 72 * 40);
  CHECK(empty.points == 0);
  CHECK(empty.largest_cell_magnitude() == 0.0);
}

TEST_CASE("angle column from polar_angle equals the atan2 column it replaces", "[surface_map]") {
  // Reference: the map's definition, atan2 in degrees on [0, 360) binned into equal columns
  // (detail::angle_column_by_atan2, the loop radial_deviation_map ran before). Directions at
  // random, exactly on and a few ulps around every column edge (where the fall-back acts),
  // on the axes, and the zero vector.
  std::mt19937_64 rng(360);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  const double pi = 3.14159265358979323846;
  std::size_t compared = 0;
  for (const std::size_t cells : {std::size_t{1}, std::size_t{7}, std::size_t{72}, std::size_t{360},
                                  std::size_t{1000}, std::size_t{100000}}) {
    std::vector<std::pair<double, double>> directions;
    for (int k = 0; k < 3000; ++k) directions.push_back({unit(rng), unit(rng)});
    for (std::size_t k = 0; k <= std::min<std::size_t>(cells, 400); ++k) {
      const double theta = 2.0 * pi * static_cast<double>(k) / static_cast<double>(cells);
      double x = 9.0 * std::cos(theta), y = 9.0 * std::sin(theta);
      for (int step = 0; step < 3; ++step) {
        directions.push_back({x, y});
        directions.push_back({std::nextafter(x, 0.0), std::nextafter(y, 1.0)});
        x = std::nextafter(x, -1.0);
        y = std::nextafter(y, -1.0);
      }
    }
    for (const auto& d : std::vector<std::pair<double, double>>{
             {1.0, 0.0}, {1.0, -0.0}, {1.0, -1e-300}, {0.0, 1.0}, {-1.0, 0.0}, {-1.0, -0.0},
             {0.0, -1.0}, {0.0, 0.0}, {-0.0, -0.0}, {2.0, std::nextafter(0.0, -1.0)}})
      directions.push_back(d);
    for (const auto& [x, y] : directions) {
      CHECK(detail::angle_column(x, y, cells) == detail::angle_column_by_atan2(x, y, cells));
      ++compared;
    }
  }
  CHECK(compared > 18000);
}
