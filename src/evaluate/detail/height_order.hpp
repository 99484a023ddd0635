#pragma once
// Private: a bore's points in order of height (evaluate_bore: the section plan and the
// two-point sizes read them so). The heights are sorted with their point index beside them, so
// a comparison reads two adjacent keys instead of two heights scattered over the bore (a cache
// miss each on a dense bore). The permutation is the one std::sort gives the point indices
// compared by height, ties included: the same algorithm runs on the same sequence of heights
// from the same start (index order), and its comparisons and moves depend only on the heights
// compared, so it takes the same steps; the index travels with its height.

#include <algorithm>
#include <cstddef>
#include <vector>

#include <Eigen/Core>

namespace cylzone::detail {

struct HeightKey {
  double height;
  Eigen::Index index;
};

/// The points 0 .. heights.size() - 1 by increasing height (std::sort's order of ties).
inline std::vector<HeightKey> order_by_height(const std::vector<double>& heights) {
  std::vector<HeightKey> keys(heights.size());
  for (std::size_t i = 0; i < heights.size(); ++i)
    keys[i] = {heights[i], static_cast<Eigen::Index>(i)};
  std::sort(keys.begin(), keys.end(),
            [](const HeightKey& a, const HeightKey& b) { return a.height < b.height; });
  return keys;
}

}  // namespace cylzone::detail
