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
  const Eigen::Index n = points.cols();
  out.resize(3, n);
  const double r00 = rotation(0, 0), r01 = rotation(0, 1), r02 = rotation(0, 2);
  const double r10 = rotation(1, 0), r11 = rotation(1, 1), r12 = rotation(1, 2);
  const double r20 = rotation(2, 0), r21 = rotation(2, 1), r22 = rotation(2, 2);
  const double ox = origin.x(), oy = origin.y(), oz = origin.z();
  const double* __restrict p = points.data();
  double* __restrict q = out.data();
  for (Eigen::Index i = 0; i < n; ++i, p += 3, q += 3) {
    const double wx = p[0] - ox, wy = p[1] - oy, wz = p[2] - oz;
    q[0] = (r00 * wx + r01 * wy) + r02 * wz;
    q[1] = (r10 * wx + r11 * wy) + r12 * wz;
    q[2] = r20 * wx + (r21 * wy + r22 * wz);  // Eigen's reduction order, row 2
  }
}

}  // namespace cylzone::detail
