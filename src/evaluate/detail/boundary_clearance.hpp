#pragma once
// Private: the one rule that turns a bore's measured distances from its true-position axis into
// the clearance of its virtual condition boundary (docs/evaluation.md, "Virtual condition").
// evaluate_bore applies it in the frame as built, virtual_condition_after_frame_motion and the
// boundary search of the datum mobility (datum_mobility.cpp) after a frame motion, so the
// figure the search maximises is the figure reported.

#include <algorithm>
#include <cmath>
#include <string>

#include <Eigen/Core>

#include "detail/fit_support.hpp"

namespace cylzone::detail {

/// A bore's distances from the (moved) true-position axis, zone coordinates.
struct BoundaryDistances {
  double nearest = 0.0;   ///< smallest radial distance of a point within the depth
  double farthest = 0.0;  ///< largest
  /// 2 x the largest offset of the envelope's axis (mating envelope at MMC, minimum material
  /// envelope at LMC) from the true-position axis over the evaluated range: a diameter, as
  /// position_over_range gives it.
  double envelope_reach = 0.0;
  double envelope_diameter = 0.0;
  /// The height (zone z) of the range's end where envelope_reach is taken, for the basis text.
  double reach_height = 0.0;
};

/// The smallest and largest radial distance from the zone's axis (zone coordinates x, y) of
/// the points moved into a new frame, p' = r_t (p - shift), into `nearest` (from +infinity)
/// and `farthest` (from 0): virtual_condition_after_frame_motion's distances. One pass over
/// the points, with no moved or local copy of them: each point takes the operations of the
/// two Eigen products it replaces, r_t (p - shift) and zone_basis^T (p' - zone_origin), in
/// their order. Eigen 3.4 evaluates a fixed 3 x 3 factor times a 3 x n block coefficient by
/// coefficient from w = p - shift: rows 0 and 1 of a plain (column-major) factor as one
/// two-lane packet, (a_k0 w_0 + a_k1 w_1) + a_k2 w_2, and row 2 as a reduction,
/// a_20 w_0 + (a_21 w_1 + a_22 w_2); every row of a transposed factor (zone_basis^T) in the
/// first order (as local_coordinates_into in detail/fit_support.cpp states). The radial
/// distance is Eigen's norm of the 2-vector, sqrt(x^2 + y^2). So the same bits (no FMA
/// contraction: the build has no -mfma and no -ffast-math). Only rows 0 and 1 of the zone
/// coordinates are formed: the height, row 2, is not read. test_boundary_clearance compares
/// it with the products bit for bit, for rotations about z (the frame's motions) and any.
inline void radial_range_after_motion(const Eigen::Matrix3Xd& points, const Eigen::Matrix3d& r_t,
                                      const Eigen::Vector3d& shift,
                                      const Eigen::Matrix3d& zone_basis,
                                      const Eigen::Vector3d& zone_origin, double& nearest,
                                      double& farthest) {
  const double r00 = r_t(0, 0), r01 = r_t(0, 1), r02 = r_t(0, 2);
  const double r10 = r_t(1, 0), r11 = r_t(1, 1), r12 = r_t(1, 2);
  const double r20 = r_t(2, 0), r21 = r_t(2, 1), r22 = r_t(2, 2);
  // zone_basis^T row k is zone_basis column k.
  const double b00 = zone_basis(0, 0), b10 = zone_basis(1, 0), b20 = zone_basis(2, 0);
  const double b01 = zone_basis(0, 1), b11 = zone_basis(1, 1), b21 = zone_basis(2, 1);
  const double sx = shift.x(), sy = shift.y(), sz = shift.z();
  const double ox = zone_origin.x(), oy = zone_origin.y(), oz = zone_origin.z();
  const double* p = points.data();
  const Eigen::Index n = points.cols();
  if (r_t == Eigen::Matrix3d::Identity() && shift == Eigen::Vector3d::Zero()) {
    // No motion (evaluate_bore's own clearance, every MMC bore of every trial): the moved
    // point is the point up to the sign of a zero coordinate (x - 0 = x, 1 x = x, x + 0 = x
    // for x != 0), and a zero's sign changes only the sign of zero terms and sums after it,
    // never u^2 + v^2: the same distances without the rotation's products.
    for (Eigen::Index i = 0; i < n; ++i, p += 3) {
      const double vx = p[0] - ox, vy = p[1] - oy, vz = p[2] - oz;
      const double u = (b00 * vx + b10 * vy) + b20 * vz;
      const double v = (b01 * vx + b11 * vy) + b21 * vz;
      const double radial = std::sqrt(u * u + v * v);
      nearest = std::min(nearest, radial);
      farthest = std::max(farthest, radial);
    }
    return;
  }
  for (Eigen::Index i = 0; i < n; ++i, p += 3) {
    const double wx = p[0] - sx, wy = p[1] - sy, wz = p[2] - sz;
    const double mx = (r00 * wx + r01 * wy) + r02 * wz;
    const double my = (r10 * wx + r11 * wy) + r12 * wz;
    const double mz = r20 * wx + (r21 * wy + r22 * wz);  // Eigen's reduction order, row 2
    const double vx = mx - ox, vy = my - oy, vz = mz - oz;
    const double u = (b00 * vx + b10 * vy) + b20 * vz;
    const double v = (b01 * vx + b11 * vy) + b21 * vz;
    const double radial = std::sqrt(u * u + v * v);
    nearest = std::min(nearest, radial);
    farthest = std::max(farthest, radial);
  }
}

struct BoundaryClearance {
  double clearance = 0.0;
  /// True when the figure is the exact one (nearest or farthest point); false when it is the
  /// conservative envelope figure.
  bool exact = true;
};

/// The clearance figure. `projected`: the boundary stands above A, where the bore has no
/// surface; the perfect envelope, extended, is compared with it. `surrounded`: the points
/// surround the mating envelope's axis in every section (VirtualConditionResult).
///  * MMC, in the material: an axis inside the mating envelope (2 max|e| < D) lies inside a
///    bore whose points surround the envelope, and 2 x nearest is then the largest cylinder on
///    it clear of the surface. Otherwise 2 x nearest measures nothing (the nearest point of a
///    surface the axis lies outside of), and D - 2 max|e| is taken: a cylinder of that size on
///    the true-position axis lies inside the envelope, which is clear of every point, so it is
///    a lower bound of the clearance, and it is negative when the axis leaves the envelope.
///  * LMC, in the material: 2 x farthest (a cylinder containing every point contains their
///    convex hull, wherever its axis lies).
///  * Projected: D - 2 max|e| at MMC, D + 2 max|e| at LMC.
inline BoundaryClearance boundary_clearance(bool at_mmc, bool projected, bool surrounded,
                                            const BoundaryDistances& d) {
  if (projected)
    return {at_mmc ? d.envelope_diameter - d.envelope_reach
                   : d.envelope_diameter + d.envelope_reach,
            false};
  if (!at_mmc) return {2.0 * d.farthest, true};
  const double conservative = d.envelope_diameter - d.envelope_reach;
  if (surrounded && d.envelope_reach < d.envelope_diameter) return {2.0 * d.nearest, true};
  return {std::min(2.0 * d.nearest, conservative), false};
}

/// For people: how the clearance of boundary_clearance was found.
inline std::string boundary_basis(bool at_mmc, bool projected, bool surrounded,
                                  const BoundaryDistances& d) {
  if (projected)
    return at_mmc ? "mating envelope extended into the projected zone"
                  : "minimum material envelope extended into the projected zone";
  if (!at_mmc) return "farthest point";
  if (!(d.envelope_reach < d.envelope_diameter))
    return "the true-position axis lies outside the actual mating envelope at z = " +
           format_number(d.reach_height, 4) +
           ": the boundary cannot be clear (clearance = envelope - 2 x offset, negative)";
  if (!surrounded)
    return "the points do not surround the actual mating envelope's axis in every section: "
           "conservative clearance, envelope - 2 x offset of its axis";
  return "nearest point";
}

}  // namespace cylzone::detail
