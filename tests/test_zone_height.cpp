// The zone heights of a bore's points (src/evaluate/detail/zone_height.hpp) against the
// computation they replace in evaluate_bore: row 2 of the zone coordinates basis^T (p - origin)
// of detail::local_coordinates (Eigen's product), bit for bit (memcmp, signed zeros included),
// for clouds of 0 to 9,000 points, odd and even, with zero and -0.0 coordinates, points at the
// origin and bases from any direction.
#include <catch2/catch.hpp>

#include <cmath>
#include <cstring>
#include <random>

#include "detail/fit_support.hpp"
#include "evaluate/detail/zone_height.hpp"

using namespace cylzone;

TEST_CASE("zone heights are row 2 of the zone coordinates to the bit", "[zone_height]") {
  std::mt19937_64 rng(7319);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::size_t compared = 0;
  for (int trial = 0; trial < 400; ++trial) {
    const Eigen::Index n = trial == 0   ? 0
                           : trial == 1 ? 1
                           : trial % 40 == 0
                               ? 9001
                               : static_cast<Eigen::Index>(1 + 300 * (1.0 + unit(rng)));
    // Nearly vertical zone axes (the bores'), and every tenth from any direction; origins at
    // the demo's scale, at 0 or with -0.0 coordinates.
    const Eigen::Vector3d direction =
        trial % 10 == 3 ? Eigen::Vector3d(unit(rng), unit(rng), unit(rng))
                        : Eigen::Vector3d(0.01 * unit(rng), 0.01 * unit(rng), 1.0);
    const Eigen::Matrix3d basis = detail::basis_from_direction(direction);
    Eigen::Vector3d origin(400.0 * unit(rng), 300.0 * unit(rng), 0.0);
    if (trial % 9 == 4) origin = Eigen::Vector3d(-0.0, 0.0, -0.0);
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i) {
      points.col(i) = origin + Eigen::Vector3d(6.0 * unit(rng), 6.0 * unit(rng), -60.0 * (0.5 + 0.5 * unit(rng)));
      if (i % 31 == 7) points.col(i) = origin;
      if (i % 37 == 5) points(2, i) = -0.0;
      if (i % 41 == 6) points(0, i) = 0.0;
    }
    const Eigen::Matrix3Xd local = detail::local_coordinates(points, origin, basis);
    Eigen::VectorXd heights(3);  // resized by the call
    detail::zone_heights_into(points, origin, basis, heights);
    REQUIRE(heights.size() == n);
    for (Eigen::Index i = 0; i < n; ++i) {
      const double expected = local(2, i);
      REQUIRE(std::memcmp(&heights(i), &expected, sizeof(double)) == 0);
    }
    ++compared;
  }
  CHECK(compared == 400);
}

TEST_CASE("a zone height is the distance along the zone's axis", "[zone_height]") {
  // Basis from +z is the identity's columns up to signs of x and y (basis_from_direction):
  // the height is z - origin z; a point 5 above the origin on a tilted axis is at height 5.
  Eigen::Matrix3Xd p(3, 2);
  p << 1.0, -3.0, 2.0, 8.0, -7.5, 12.25;
  Eigen::VectorXd h;
  detail::zone_heights_into(p, Eigen::Vector3d(0.0, 0.0, 2.5), detail::basis_from_direction(Eigen::Vector3d::UnitZ()), h);
  CHECK(h(0) == -10.0);
  CHECK(h(1) == 9.75);
  const Eigen::Vector3d w = Eigen::Vector3d(3.0, 0.0, 4.0) / 5.0;
  Eigen::Matrix3Xd q(3, 1);
  q.col(0) = Eigen::Vector3d(1.0, 1.0, 1.0) + 5.0 * w;
  detail::zone_heights_into(q, Eigen::Vector3d(1.0, 1.0, 1.0), detail::basis_from_direction(w), h);
  CHECK(h(0) == Approx(5.0).margin(1e-14));
}
