#pragma once
// Local coordinates of a large cloud a block of columns at a time. Not installed.
//
// A fit that reads each point's local coordinates once (a sum over the points, a row copied
// out) need not hold the whole D x n matrix: on a dense face that copy is freshly allocated
// and its pages zeroed by the system at every call. Each column is the same products and sums
// whichever block it falls in (the expression is detail::local_coordinates' own, so Eigen picks
// the same kernels; tests/test_fit_support.cpp checks detail::local_coordinates_into, a plain
// loop of the same operations, bit for bit against it).

#include <Eigen/Core>
#include <algorithm>

namespace cylzone::detail {

/// Columns per block: 4096 points of D doubles stay in the first-level caches' reach.
inline constexpr Eigen::Index local_block_columns = 4096;

/// Calls visit(start, local) for consecutive blocks of `points`, where `local` (D x len, a view
/// of `buffer`) holds basis^T (p_i - origin) for the points start .. start + len - 1.
/// `buffer` is resized to D x min(n, local_block_columns) once and may be kept by the caller
/// across calls.
template <int D, class Visit>
void for_each_local_block(const Eigen::Matrix<double, D, Eigen::Dynamic>& points,
                          const Eigen::Matrix<double, D, 1>& origin,
                          const Eigen::Matrix<double, D, D>& basis,
                          Eigen::Matrix<double, D, Eigen::Dynamic>& buffer, Visit&& visit) {
  const Eigen::Index n = points.cols();
  const Eigen::Index width = std::min(local_block_columns, n);
  if (buffer.cols() != width) buffer.resize(D, width);
  for (Eigen::Index start = 0; start < n; start += local_block_columns) {
    const Eigen::Index len = std::min(local_block_columns, n - start);
    buffer.leftCols(len).noalias() =
        basis.transpose() * (points.middleCols(start, len).colwise() - origin);
    visit(start, buffer.leftCols(len));
  }
}

}  // namespace cylzone::detail
