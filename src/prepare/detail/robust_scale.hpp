#pragma once
// Median, normal-consistent MAD scale and local excess, shared by the stray-point screen
// (stray_points.cpp) and the residual rejection's form guard (outlier_rejection.cpp). Not
// installed.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <vector>

#include <Eigen/Core>

#include "cylzone/prepare/neighbour_index.hpp"

namespace cylzone::detail {

/// 1 / Phi^-1(3/4): makes the MAD a consistent estimate of a normal standard deviation
/// (Rousseeuw & Croux, J. Amer. Statist. Assoc. 88 (1993) 1273-1283, from memory; common
/// practice).
constexpr double mad_to_sigma = 1.4826;

/// Median of `values` (reordered in place); the mean of the two middle values for an even
/// count. `values` must not be empty.
inline double median_in_place(std::vector<double>& values) {
  const std::size_t n = values.size();
  if (n == 8) {
    // The default neighbourhood (k = 8): a 19-comparator sorting network (Knuth, TAOCP vol. 3,
    // section 5.3.4, from memory; checked exhaustively by the 0-1 principle), min and max
    // without a branch. The sorted values are those of any sort, so the median is the same.
    static constexpr std::uint8_t network[19][2] = {
        {0, 2}, {1, 3}, {4, 6}, {5, 7}, {0, 4}, {1, 5}, {2, 6}, {3, 7}, {0, 1}, {2, 3},
        {4, 5}, {6, 7}, {2, 4}, {3, 5}, {1, 4}, {3, 6}, {1, 2}, {3, 4}, {5, 6}};
    double v[8];
    std::copy(values.begin(), values.end(), v);
    for (const auto& pair : network) {
      const double low = std::min(v[pair[0]], v[pair[1]]);
      v[pair[1]] = std::max(v[pair[0]], v[pair[1]]);
      v[pair[0]] = low;
    }
    std::copy(v, v + 8, values.begin());
    return 0.5 * (v[3] + v[4]);
  }
  if (n <= 32) {
    // A neighbourhood: insertion sort is cheaper than selection at this size.
    for (std::size_t i = 1; i < n; ++i)
      for (std::size_t j = i; j > 0 && values[j] < values[j - 1]; --j)
        std::swap(values[j], values[j - 1]);
    return n % 2 == 1 ? values[n / 2] : 0.5 * (values[n / 2 - 1] + values[n / 2]);
  }
  const auto middle = values.begin() + static_cast<std::ptrdiff_t>(n / 2);
  std::nth_element(values.begin(), middle, values.end());
  const double upper = *middle;
  if (n % 2 == 1) return upper;
  // After nth_element everything before `middle` is <= it: the lower middle is their largest.
  const double lower = *std::max_element(values.begin(), middle);
  return 0.5 * (lower + upper);
}

/// The centre (median) and robust scale (1.4826 x median absolute deviation from it) of
/// `values` (taken by value: reordered). `values` must not be empty.
struct RobustSpread {
  double centre = 0.0;
  double scale = 0.0;
};
inline RobustSpread robust_spread(std::vector<double> values) {
  RobustSpread s;
  s.centre = median_in_place(values);
  for (double& v : values) v = std::abs(v - s.centre);
  s.scale = mad_to_sigma * median_in_place(values);
  return s;
}

/// The local excess of point i (stray_points.hpp): its residual minus the median residual of
/// its nearest neighbours in `index`, found with `query`; `buffer` is scratch space. The index
/// must hold at least two points.
inline double local_excess(const NeighbourIndex& index, NeighbourIndex::Query& query,
                           const Eigen::VectorXd& residuals, std::size_t i,
                           std::vector<double>& buffer) {
  buffer.clear();
  for (const std::uint32_t other : query.of_point(index, i)) buffer.push_back(residuals(other));
  return residuals(static_cast<Eigen::Index>(i)) - median_in_place(buffer);
}

}  // namespace cylzone::detail
