#pragma once
// Reference point sets with KNOWN associated elements, built by the null-space method used for
// ISO 10360-6 software tests (Forbes & Minh, Int. J. Metrol. Qual. Eng. 3(3), 2012):
// foot points are placed on the ideal element, the Jacobian J of the orthogonal distance with
// respect to the element's parameters is formed at those points, deviations e are drawn in the
// null space of J^T, and each point is moved by e_i along its surface normal. Then J^T e = 0
// (the least-squares normal equations hold at the ideal element) and, for deviations small
// against the element's size, the ideal element is the least-squares solution exactly.
//
// The lobed sets use the shortcut of the same source: on N equally spaced points per level (N a
// multiple of 6), e_i = eps cos(3 theta_i) is orthogonal to {1, cos, sin} at every level, so the
// ideal cylinder / circle is at once the least-squares, minimum-zone (width 2 eps),
// maximum-inscribed (radius r - eps) and minimum-circumscribed (radius r + eps) solution.

#include <Eigen/Core>
#include <cstdint>
#include <random>

#include "cylzone/fit/fit_types.hpp"

namespace cylzone::testing {

struct ReferenceSet {
  Eigen::Matrix3Xd points;   ///< displaced points
  Eigen::Matrix3Xd normals;  ///< unit surface normals at the foot points
  Eigen::VectorXd deviations;  ///< e_i, the signed displacement along the normal
};

/// Random e with J^T e = 0 (to rounding), scaled so max |e_i| == amplitude.
Eigen::VectorXd null_space_deviations(const Eigen::MatrixXd& jacobian, double amplitude,
                                      std::mt19937_64& rng);

/// Unit vector from spherical angles: polar angle from +z and azimuth, both in degrees.
Eigen::Vector3d direction_from_angles(double polar_deg, double azimuth_deg);

/// Line through axis.point along axis.direction; points at heights t in [t0, t1], displaced
/// perpendicular to the line in random directions.
ReferenceSet make_line_reference(const Axis& axis, double t0, double t1, int count,
                                 double amplitude, std::uint64_t seed);

/// Plane through `point` with `normal`; points on a w x h rectangle of the plane.
ReferenceSet make_plane_reference(const Eigen::Vector3d& point, const Eigen::Vector3d& normal,
                                  double width, double height, int count, double amplitude,
                                  std::uint64_t seed);

/// Circle in the plane through `centre` perpendicular to `normal`, on an arc of `arc_deg`
/// starting at `start_deg`, displaced radially in the plane.
ReferenceSet make_circle_reference(const Eigen::Vector3d& centre, const Eigen::Vector3d& normal,
                                   double radius, double start_deg, double arc_deg, int count,
                                   double amplitude, std::uint64_t seed);

/// Sphere points on a cap of polar half-angle `cap_deg` about `pole`.
ReferenceSet make_sphere_reference(const Eigen::Vector3d& centre, double radius,
                                   const Eigen::Vector3d& pole, double cap_deg, int count,
                                   double amplitude, std::uint64_t seed);

/// Cylinder: `levels` sections between heights t0 and t1 from axis.point, `per_level` points
/// on an arc of `arc_deg` (random angles within the arc), displaced radially.
ReferenceSet make_cylinder_reference(const Axis& axis, double radius, double t0, double t1,
                                     int levels, int per_level, double arc_deg, double amplitude,
                                     std::uint64_t seed);

/// Three-lobed cylinder (see file comment): per_level must be a multiple of 6. With levels == 1
/// and t0 == t1 it is a three-lobed circle.
ReferenceSet make_lobed_cylinder(const Axis& axis, double radius, double t0, double t1,
                                 int levels, int per_level, double eps, double phase_deg = 0.0);

/// Angle in radians between two lines with directions a and b (sign-insensitive), computed as
/// atan2(|a x b|, |a . b|), accurate for tiny angles where acos is not.
double angle_between_lines(const Eigen::Vector3d& a, const Eigen::Vector3d& b);

/// Largest distance of the points of line `fitted` at parameters t0 and t1 (from fitted.point)
/// from the line `reference`: the axis-position agreement over the points' extent.
double axis_distance_over_extent(const Axis& fitted, const Axis& reference, double t0, double t1);

}  // namespace cylzone::testing
