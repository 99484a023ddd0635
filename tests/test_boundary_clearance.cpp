// The boundary points' radial distances after a frame motion (src/evaluate/detail/
// boundary_clearance.hpp, radial_range_after_motion) against the computation it replaces in
// virtual_condition_after_frame_motion, kept here as a reference copy: the points moved by
// Eigen's product R^T (p - shift), taken into zone coordinates by a second product, and the
// radial distance as the norm of the first two coordinates. The figures must be the same bits
// (memcmp), for any motion, zero included, and any number of points. (Before the row order of
// the third row was taken as Eigen's, the turns about a random axis failed here.)
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <cstring>
#include <limits>
#include <random>

#include "evaluate/detail/boundary_clearance.hpp"

using namespace cylzone;

namespace {

/// The replaced computation (bore_evaluation.cpp before the one-pass loop), block by block.
void reference_radial_range(const Eigen::Matrix3Xd& all, const Eigen::Matrix3d& r_t,
                            const Eigen::Vector3d& shift, const Eigen::Matrix3d& basis,
                            const Eigen::Vector3d& origin, double& nearest, double& farthest) {
  constexpr Eigen::Index block = 4096;
  nearest = std::numeric_limits<double>::infinity();
  farthest = 0.0;
  for (Eigen::Index start = 0; start < all.cols(); start += block) {
    const Eigen::Index len = std::min(block, all.cols() - start);
    const Eigen::Matrix3Xd moved = r_t * (all.middleCols(start, len).colwise() - shift);
    const Eigen::Matrix3Xd local = basis.transpose() * (moved.colwise() - origin);
    for (Eigen::Index i = 0; i < local.cols(); ++i) {
      const double radial = local.col(i).head<2>().norm();
      nearest = std::min(nearest, radial);
      farthest = std::max(farthest, radial);
    }
  }
}

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

}  // namespace

TEST_CASE("the boundary points' radial range after a motion is the products' to the bit",
          "[boundary_clearance]") {
  std::mt19937_64 rng(20261204);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::size_t compared = 0;
  for (int trial = 0; trial < 600; ++trial) {
    // A bore of radius 3-8 about an axis near the zone's direction, at a basic location far
    // from the origin (the demo's scale), its points on rings; some points exactly on the zone
    // axis, some coordinates -0.0 or 0.0.
    const Eigen::Vector3d w = Eigen::Vector3d(0.05 * unit(rng), 0.05 * unit(rng), 1.0).normalized();
    const Eigen::Matrix3d basis = detail::basis_from_direction(w);
    const Eigen::Vector3d origin(400.0 * unit(rng), 300.0 * unit(rng), trial % 7 == 0 ? 0.0 : unit(rng));
    const Eigen::Index n = trial % 50 == 0 ? 4096 + 7 : 1 + static_cast<Eigen::Index>(300 * (1.0 + unit(rng)));
    const double radius = 5.5 + 2.5 * unit(rng);
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i) {
      const double a = 3.14159265358979 * unit(rng), t = -30.0 + 30.0 * unit(rng);
      points.col(i) = origin + basis * Eigen::Vector3d(radius * std::cos(a), radius * std::sin(a), t);
      if (i % 97 == 5) points.col(i) = origin + t * w;  // on the axis
      if (i % 89 == 3) points(2, i) = -0.0;
      if (i % 83 == 2) points(0, i) = 0.0;
    }
    // The motions a trial and the boundary search make: none (rotation 0, shift 0: the path
    // without the rotation's products, on points with zero and -0.0 coordinates), small
    // rotations and shifts, and large ones; -0.0 shifts.
    double rotation = 0.0;
    Eigen::Vector3d shift = Eigen::Vector3d::Zero();
    switch (trial % 5) {
      case 0: break;
      case 1: rotation = 1e-4 * unit(rng); shift = Eigen::Vector3d(0.01 * unit(rng), 0.01 * unit(rng), 0.0); break;
      case 2: rotation = 3.0 * unit(rng); shift = Eigen::Vector3d(50.0 * unit(rng), 50.0 * unit(rng), 0.0); break;
      case 3: shift = Eigen::Vector3d(-0.0, -0.0, 0.0); break;
      default: rotation = -2e-6; shift = Eigen::Vector3d(0.0, 1e-3 * unit(rng), 0.0); break;
    }
    // A frame's motion turns about z; every fifth bore also about a random axis, so that
    // every coefficient of the factor counts (the row orders of Eigen's product).
    const Eigen::Vector3d about =
        trial % 5 == 2 ? Eigen::Vector3d(unit(rng), unit(rng), unit(rng)).normalized()
                       : Eigen::Vector3d::UnitZ();
    const Eigen::Matrix3d r_t = Eigen::AngleAxisd(rotation, about).toRotationMatrix().transpose();
    double ref_near = 0.0, ref_far = 0.0;
    reference_radial_range(points, r_t, shift, basis, origin, ref_near, ref_far);
    double near = std::numeric_limits<double>::infinity(), far = 0.0;
    detail::radial_range_after_motion(points, r_t, shift, basis, origin, near, far);
    CHECK(same_bits(near, ref_near));
    CHECK(same_bits(far, ref_far));
    ++compared;
    // Every point's distance: a point at a time reproduces each of the reference's values.
    if (trial % 10 == 1) {
      const Eigen::Matrix3Xd local =
          basis.transpose() * ((r_t * (points.colwise() - shift)).colwise() - origin);
      for (Eigen::Index i = 0; i < n; ++i) {
        double one_near = std::numeric_limits<double>::infinity(), one_far = 0.0;
        detail::radial_range_after_motion(points.col(i), r_t, shift, basis, origin, one_near,
                                          one_far);
        const double radial = local.col(i).head<2>().norm();
        REQUIRE(same_bits(one_near, radial));
        REQUIRE(same_bits(one_far, radial));
      }
    }
  }
  CHECK(compared == 600);

  SECTION("no motion, zeros of both signs everywhere: the products' distances") {
    // The path without the rotation rests on a zero's sign never reaching u^2 + v^2: points
    // and origins made of +0.0, -0.0 and small integers, bases from the axes and tilted.
    std::mt19937_64 zr(99);
    std::uniform_int_distribution<int> pick(0, 4);
    const double values[] = {0.0, -0.0, 1.0, -2.0, 0.0};
    std::size_t same = 0, total = 0;
    for (int t = 0; t < 300; ++t) {
      Eigen::Matrix3Xd p(3, 40);
      for (Eigen::Index i = 0; i < p.size(); ++i) p.data()[i] = values[pick(zr)];
      const Eigen::Vector3d origin(values[pick(zr)], values[pick(zr)], values[pick(zr)]);
      const Eigen::Matrix3d basis =
          t % 2 == 0 ? Eigen::Matrix3d::Identity()
                     : detail::basis_from_direction(Eigen::Vector3d(values[pick(zr)], 0.25, 1.0));
      const Eigen::Vector3d shift =
          t % 3 == 0 ? Eigen::Vector3d(-0.0, -0.0, -0.0) : Eigen::Vector3d::Zero();
      double ref_near = 0.0, ref_far = 0.0, near = std::numeric_limits<double>::infinity(),
             far = 0.0;
      reference_radial_range(p, Eigen::Matrix3d::Identity(), shift, basis, origin, ref_near,
                             ref_far);
      detail::radial_range_after_motion(p, Eigen::Matrix3d::Identity(), shift, basis, origin,
                                        near, far);
      same += same_bits(near, ref_near) && same_bits(far, ref_far);
      ++total;
    }
    CHECK(same == total);
  }
  SECTION("no points leave the starting values") {
    double near = std::numeric_limits<double>::infinity(), far = 0.0;
    detail::radial_range_after_motion(Eigen::Matrix3Xd(3, 0), Eigen::Matrix3d::Identity(),
                                      Eigen::Vector3d::Zero(), Eigen::Matrix3d::Identity(),
                                      Eigen::Vector3d::Zero(), near, far);
    CHECK(near == std::numeric_limits<double>::infinity());
    CHECK(far == 0.0);
  }
  SECTION("a point on the axis is at distance zero; one at (3, 4) at 5") {
    Eigen::Matrix3Xd p(3, 2);
    p << 1.0, 4.0, 2.0, 6.0, -7.0, 9.0;
    double near = std::numeric_limits<double>::infinity(), far = 0.0;
    detail::radial_range_after_motion(p, Eigen::Matrix3d::Identity(), Eigen::Vector3d::Zero(),
                                      Eigen::Matrix3d::Identity(), Eigen::Vector3d(1.0, 2.0, 0.0),
                                      near, far);
    CHECK(near == 0.0);
    CHECK(far == 5.0);  // 3-4-5 triangle: exact (common practice)
  }
}
