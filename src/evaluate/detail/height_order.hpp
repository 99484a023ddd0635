#pragma once
// Private: a bore's points in order of height (evaluate_bore: the section plan and the
// two-point sizes read them so). The heights are sorted with their point index beside them, so
// a comparison reads two adjacent keys instead of two heights scattered over the bore (a cache
// miss each on a dense bore). The permutation is the one std::sort gives the point indices
// compared by height, ties included: the same algorithm runs on the same sequence of heights
// from the same start (index order), and its comparisons and moves depend only on the heights
// compared, so it takes the same steps; the index travels with its height.
//
// A dense bore (a scanned cloud, its heights spread along the depth) is put in order by
// buckets instead (detail::bucket_order_by_height): as many equal buckets of height as points,
// each bucket in order by insertion (a bucket sort, Knuth TAOCP vol. 3, 5.2.5, from memory for
// the section), about one point a bucket where std::sort makes some 2 log2 n comparisons a
// point. Its order is std::sort's whenever no two heights are equal: the sorted order of
// distinct values is unique. Equal heights (+0.0 and -0.0 included) are looked for afterwards,
// between neighbours of the result; when there are any, std::sort runs as before on the keys in
// index order and its own order of the ties is the one returned.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <vector>

#include <Eigen/Core>

namespace cylzone::detail {

struct HeightKey {
  double height;
  Eigen::Index index;
};

/// Fewer points than this are sorted by std::sort directly: a probed bore's few levels crowd
/// its buckets, and the counting pass would be wasted.
inline constexpr std::size_t bucketed_from = 4096;
/// A bucket holding more points than this (a crowded level, a ring of the scanner) would make
/// insertion slow: the bucket order then declines.
inline constexpr std::size_t crowded_bucket = 32;

/// The keys in index order, sorted by std::sort (the reference order of ties).
inline std::vector<HeightKey> std_sort_by_height(const std::vector<double>& heights) {
  std::vector<HeightKey> keys(heights.size());
  for (std::size_t i = 0; i < heights.size(); ++i)
    keys[i] = {heights[i], static_cast<Eigen::Index>(i)};
  std::sort(keys.begin(), keys.end(),
            [](const HeightKey& a, const HeightKey& b) { return a.height < b.height; });
  return keys;
}

/// The points by increasing height by buckets, into `keys`, when the heights are finite, not
/// all equal, spread (no bucket crowded) and pairwise distinct; otherwise returns false (and
/// `keys` holds no meaning). A bucket of height h is floor((h - lowest) x n / span), capped at
/// n - 1: a correctly rounded difference and product are monotone, so a higher height never
/// falls in a lower bucket and every bucket's points precede the next one's.
inline bool bucket_order_by_height(const std::vector<double>& heights,
                                   std::vector<HeightKey>& keys) {
  const std::size_t n = heights.size();
  if (n < 2 || n >= std::numeric_limits<std::uint32_t>::max()) return false;
  double lowest = heights[0], highest = heights[0];
  bool finite = true;
  for (const double h : heights) {
    finite = finite && std::isfinite(h);
    lowest = std::min(lowest, h);
    highest = std::max(highest, h);
  }
  if (!finite || !(highest > lowest)) return false;
  const double per_unit = static_cast<double>(n) / (highest - lowest);
  if (!(per_unit > 0.0) || !std::isfinite(per_unit)) return false;
  const auto bucket = [&](double h) {
    return std::min(n - 1, static_cast<std::size_t>((h - lowest) * per_unit));
  };
  // start[b + 1] counts bucket b, then (prefix sums) start[b] is where bucket b begins.
  std::vector<std::uint32_t> start(n + 1, 0);
  for (const double h : heights) ++start[bucket(h) + 1];
  for (std::size_t b = 0; b < n; ++b) {
    if (start[b + 1] > crowded_bucket) return false;
    start[b + 1] += start[b];
  }
  keys.resize(n);
  for (std::size_t i = 0; i < n; ++i)  // afterwards start[b] is where bucket b ends
    keys[start[bucket(heights[i])]++] = {heights[i], static_cast<Eigen::Index>(i)};
  // Each bucket [end of b - 1, end of b) put in order by insertion.
  std::size_t begin = 0;
  for (std::size_t b = 0; b < n; ++b) {
    const std::size_t end = start[b];
    for (std::size_t i = begin + 1; i < end; ++i) {
      const HeightKey key = keys[i];
      std::size_t j = i;
      for (; j > begin && key.height < keys[j - 1].height; --j) keys[j] = keys[j - 1];
      keys[j] = key;
    }
    begin = end;
  }
  // Equal neighbours are equal heights: std::sort's order of them is not known here.
  for (std::size_t k = 1; k < n; ++k)
    if (!(keys[k - 1].height < keys[k].height)) return false;
  return true;
}

/// The points 0 .. heights.size() - 1 by increasing height (std::sort's order of ties).
inline std::vector<HeightKey> order_by_height(const std::vector<double>& heights) {
  if (heights.size() >= bucketed_from) {
    std::vector<HeightKey> keys;
    if (bucket_order_by_height(heights, keys)) return keys;
  }
  return std_sort_by_height(heights);
}

}  // namespace cylzone::detail
