#pragma once
// Private: which points belong to which cross-section (fit_sections_least_squares), and the
// probed levels of heights already sorted (find_section_levels). A point at
// height t belongs to the section at h when |t - h| <= half (sections.hpp); this finds every
// section's points, in increasing point order, with one binary search per point instead of one
// pass over all points per section.

#include <cstddef>
#include <vector>

namespace cylzone::detail {

/// How append_members tests the points: one at a time, two (SSE2) or four (AVX2) per step.
enum class MemberLanes { scalar, sse2, avx2 };

/// The widest MemberLanes this processor runs (scalar where the build has no x86 lanes).
MemberLanes member_lanes();

/// Appends to `index`, in increasing order, the points i < n with std::abs(t[i] - h) <= half,
/// exactly as that test decides (the lanes compute t - h, clear the sign bit as std::abs does,
/// and compare with <= half, false for NaN, as the scalar test; the remaining points one at
/// a time). `lanes` no wider than member_lanes().
void append_members(const double* t, std::size_t n, double h, double half, MemberLanes lanes,
                    std::vector<std::size_t>& index);

/// Every section's points as one list: section k's are index[start[k] .. start[k + 1]), in
/// increasing order.
struct SectionMembers {
  std::vector<std::size_t> start;  ///< heights.size() + 1 entries
  std::vector<std::size_t> index;
};

/// The points i < n with std::abs(t[i] - heights[k]) <= half, for every k, exactly as that test
/// decides it. Why one search per point is exact: for a fixed t, fl(t - h) does not increase as
/// h increases (correctly rounded subtraction is monotone), so the sections a point belongs to
/// are one run of the heights in increasing order; the run is found by a binary search and
/// every member passes the test itself. Up to 8 sections, and for non-finite heights t, section
/// heights or half (where t - h may be NaN inside the run), every pair is tested directly.
SectionMembers section_members(const double* t, std::size_t n, const std::vector<double>& heights,
                               double half);

/// The probed levels of n heights in increasing order, height(k) the k-th (find_section_levels'
/// clustering: a new level wherever consecutive heights are more than `gap` apart; each level
/// the mean of its heights, summed as offsets from its lowest). A caller that already holds
/// the heights sorted passes them here instead of sorting them again. -0.0 and +0.0 may stand
/// in either order in a sorted sequence; the levels are the same bits for both: their
/// differences are zeros that never exceed a gap, a sum of zeros started at +0.0 stays +0.0, a
/// non-zero value minus either zero is itself, and -0.0 + +0.0 is +0.0.
template <class Height>
std::vector<double> levels_of_sorted_heights(std::size_t n, const Height& height, double gap) {
  std::vector<double> levels;
  std::size_t first = 0;
  for (std::size_t i = 1; i <= n; ++i) {
    if (i == n || height(i) - height(i - 1) > gap) {
      double sum = 0.0;
      for (std::size_t k = first; k < i; ++k) sum += height(k) - height(first);
      levels.push_back(height(first) + sum / static_cast<double>(i - first));
      first = i;
    }
  }
  return levels;
}

}  // namespace cylzone::detail
