#pragma once
// Private: a section's (angle, point) pairs in increasing order (two_point_sizes,
// bore_evaluation.cpp). The points of a section are spread round the circle, so the pairs are
// distributed into as many equal buckets of angle as there are pairs and each bucket is put in
// order by insertion (a bucket sort, Knuth TAOCP vol. 3, 5.2.5, from memory for the section):
// about one pair a bucket, no comparison sort over the whole section. The order is the same as
// std::sort's: the pairs are distinct (each point once), so their order is unique, and the
// bucket of an angle, floor(angle x buckets / 2 pi) rounded, never decreases as the angle
// increases (a product by a positive constant, correctly rounded, is monotone), so every
// bucket's pairs precede the next one's. A crowded bucket (many equal or near angles, a
// section probed on a short arc) makes insertion slow: the whole section is then sorted by
// std::sort instead.

#include <algorithm>
#include <cstddef>
#include <utility>
#include <vector>

namespace cylzone::detail {

/// Sorts `pairs` (angle in [0, 2 pi], index) increasingly, as std::sort does; `start` and
/// `scratch` are buffers kept by the caller across sections.
inline void sort_by_angle(std::vector<std::pair<double, std::size_t>>& pairs,
                          std::vector<std::size_t>& start,
                          std::vector<std::pair<double, std::size_t>>& scratch) {
  constexpr double two_pi = 6.283185307179586476925286766559;
  constexpr std::size_t crowded = 32;
  const std::size_t n = pairs.size();
  if (n < 64) {
    std::sort(pairs.begin(), pairs.end());
    return;
  }
  const double per_radian = static_cast<double>(n) / two_pi;
  const auto bucket = [&](double angle) {
    const double x = angle * per_radian;
    return x > 0.0 ? std::min(n - 1, static_cast<std::size_t>(x)) : std::size_t{0};
  };
  start.assign(n + 1, 0);
  for (const auto& p : pairs) ++start[bucket(p.first) + 1];
  for (std::size_t b = 0; b < n; ++b) {
    if (start[b + 1] > crowded) {
      std::sort(pairs.begin(), pairs.end());
      return;
    }
    start[b + 1] += start[b];
  }
  scratch.resize(n);
  for (const auto& p : pairs) scratch[start[bucket(p.first)]++] = p;  // start[b]: end of b
  // Each bucket [end of b - 1, end of b) put in order by insertion.
  std::size_t begin = 0;
  for (std::size_t b = 0; b < n; ++b) {
    const std::size_t end = start[b];
    for (std::size_t i = begin + 1; i < end; ++i) {
      const std::pair<double, std::size_t> p = scratch[i];
      std::size_t j = i;
      for (; j > begin && p < scratch[j - 1]; --j) scratch[j] = scratch[j - 1];
      scratch[j] = p;
    }
    begin = end;
  }
  pairs.swap(scratch);
}

}  // namespace cylzone::detail
