#pragma once
// Private: which points belong to which cross-section (fit_sections_least_squares). A point at
// height t belongs to the section at h when |t - h| <= half (sections.hpp); this finds every
// section's points, in increasing point order, with one binary search per point instead of one
// pass over all points per section.

#include <cstddef>
#include <vector>

namespace cylzone::detail {

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
/// every member passes the test itself. Non-finite heights t, section heights or half (where t - h may be
/// NaN inside the run) take the direct test of every pair instead.
SectionMembers section_members(const double* t, std::size_t n, const std::vector<double>& heights,
                               double half);

}  // namespace cylzone::detail
