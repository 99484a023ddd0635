#pragma once
// Private: a bore's points taken into the datum frame (evaluate_part, part_check.cpp), the
// value of DatumFrame::points_to_frame, rotation (p - origin), written straight into the
// cloud the bore is prepared from. Eigen 3.4 evaluates that product of a fixed, plain
// (column-major) 3 x 3 factor and a 3 x n block coefficient by coefficient from
// w = p - origin: rows 0 and 1 as one two-lane packet, (r_k0 w_0 + r_k1 w_1) + r_k2 w_2, and
// row 2 as a reduction, r_20 w_0 + (r_21 w_1 + r_22 w_2). Here each point takes those
// operations in that order (no FMA contraction: the build has no -mfma and no -ffast-math),
// so the same bits, with the expression's evaluation machinery left out of a loop that every
// bore of every Monte Carlo trial runs. test_evaluate_part compares it with points_to_frame
// bit for bit.

#include <Eigen/Core>

namespace cylzone::detail {

/// rotation (p - origin) for every column p of `points`, into `out` (resized; not `points`).
inline void points_to_frame_into(const Eigen::Matrix3Xd& points, const Eigen::Matrix3d& rotation,
                                 const Eigen::Vector3d& origin, Eigen::Matrix3Xd& out) {
  // Local copies: no store into `out` can change them, so they stay in registers.
  const Eigen::Matrix3d r = rotation;
  const Eigen::Vector3d o = origin;
  out.resize(3, points.cols());
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const double wx = points(0, i) - o.x(), wy = points(1, i) - o.y(), wz = points(2, i) - o.z();
    out(0, i) = (r(0, 0) * wx + r(0, 1) * wy) + r(0, 2) * wz;
    out(1, i) = (r(1, 0) * wx + r(1, 1) * wy) + r(1, 2) * wz;
    out(2, i) = r(2, 0) * wx + (r(2, 1) * wy + r(2, 2) * wz);  // Eigen's reduction order, row 2
  }
}

}  // namespace cylzone::detail
