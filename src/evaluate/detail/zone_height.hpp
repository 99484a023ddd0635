#pragma once
// Private: the heights of a bore's points along its zone's axis (evaluate_bore: the probed
// extent and the depth range's points). The height of p is row 2 of basis^T (p - origin), the
// zone coordinates of detail::local_coordinates; here that one row alone, point by point, with
// the operations local_coordinates_into (detail/fit_support.cpp) takes for it in their order,
// w = p - origin and then (b_02 w_0 + b_12 w_1) + b_22 w_2: the same bits (no FMA contraction:
// the build has no -mfma and no -ffast-math), without a copy of the points or of their other
// two coordinates. test_zone_height compares it with local_coordinates bit for bit.

#include <Eigen/Core>

namespace cylzone::detail {

/// Row 2 of basis^T (p - origin) for every column p of `points`, into `heights` (resized).
inline void zone_heights_into(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& origin,
                              const Eigen::Matrix3d& basis, Eigen::VectorXd& heights) {
  const Eigen::Index n = points.cols();
  heights.resize(n);
  const double b02 = basis(0, 2), b12 = basis(1, 2), b22 = basis(2, 2);
  const double ox = origin.x(), oy = origin.y(), oz = origin.z();
  const double* p = points.data();
  double* out = heights.data();
  for (Eigen::Index i = 0; i < n; ++i, p += 3) {
    const double wx = p[0] - ox, wy = p[1] - oy, wz = p[2] - oz;
    out[i] = (b02 * wx + b12 * wy) + b22 * wz;
  }
}

}  // namespace cylzone::detail
