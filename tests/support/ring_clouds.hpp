#pragma once
// Test clouds with known geometry: datum plane A as a grid on z = 0, and bores as rings of points
// centred on a straight axis (each ring perpendicular to the axis), so the least-squares axis of
// noise-free rings is that axis (symmetry of the unique optimum). Shared by the part-level tests.

#include <Eigen/Geometry>
#include <cmath>
#include <random>
#include <vector>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone::testing {

/// Datum A: the plane z = 0 sampled on a 13 x 13 grid of 15 mm, material below.
inline PointCloud plane_a() {
  PointCloud plane;
  plane.points.resize(3, 169);
  for (int i = 0; i < 13; ++i)
    for (int j = 0; j < 13; ++j)
      plane.points.col(13 * i + j) = Eigen::Vector3d(-90.0 + 15.0 * i, -90.0 + 15.0 * j, 0.0);
  return plane;
}

/// Rings of `per_ring` points on a cylinder of `radius` whose axis passes through (x, y, 0)
/// with slope `slope` in x per unit of z, one ring at each depth (z of the ring's centre), each
/// perpendicular to the axis and started at a different angle; `noise` > 0 adds normal radial
/// noise of that sigma (seeded).
inline PointCloud rings(double x, double y, double slope, double radius,
                        const std::vector<double>& depths, int per_ring = 24, double noise = 0.0,
                        unsigned seed = 1) {
  constexpr double pi = 3.14159265358979323846;
  const Eigen::Vector3d w = Eigen::Vector3d(slope, 0.0, 1.0).normalized();
  const Eigen::Vector3d u = Eigen::Vector3d::UnitY().cross(w).normalized();
  const Eigen::Vector3d v = w.cross(u);
  std::mt19937 rng(seed);
  std::normal_distribution<double> normal(0.0, noise > 0.0 ? noise : 1.0);
  PointCloud cloud;
  cloud.points.resize(3, static_cast<Eigen::Index>(depths.size()) * per_ring);
  Eigen::Index n = 0;
  for (std::size_t level = 0; level < depths.size(); ++level)
    for (int k = 0; k < per_ring; ++k) {
      const double angle = 2.0 * pi * (k + 0.3 * static_cast<double>(level)) / per_ring;
      const Eigen::Vector3d centre(x + slope * depths[level], y, depths[level]);
      const double r = radius + (noise > 0.0 ? normal(rng) : 0.0);
      cloud.points.col(n++) = centre + r * (std::cos(angle) * u + std::sin(angle) * v);
    }
  return cloud;
}

/// The datum features of a part whose frame is the measurement frame: A the plane z = 0 (material
/// below, plane_a), B a bore of diameter 20.02 at the origin, C a bore of diameter 8.01 at
/// (60, 0), both probed in rings at `depths`; plans (A, B, C) and clouds in that order.
struct AbcDatums {
  std::vector<PlanDatum> plans;
  std::vector<PointCloud> clouds;
};

inline AbcDatums abc_datums(const std::vector<double>& depths, int b_per_ring = 36,
                            int c_per_ring = 24) {
  AbcDatums d;
  PlanDatum a;
  a.label = 'A';
  a.kind = FeatureKind::plane;
  a.material_side = Eigen::Vector3d(0.0, 0.0, -1.0);
  PlanDatum b;
  b.label = 'B';
  b.kind = FeatureKind::bore;
  b.size = SizeLimits{19.99, 20.04};
  PlanDatum c;
  c.label = 'C';
  c.kind = FeatureKind::bore;
  c.basic_location = Eigen::Vector2d(60.0, 0.0);
  c.size = SizeLimits{7.99, 8.03};
  d.plans = {a, b, c};
  d.clouds = {plane_a(), rings(0.0, 0.0, 0.0, 10.01, depths, b_per_ring),
              rings(60.0, 0.0, 0.0, 4.005, depths, c_per_ring)};
  return d;
}

}  // namespace cylzone::testing
