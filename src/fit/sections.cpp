// Cross-sections perpendicular to an axis and their least-squares circles: the extracted median
// line of ISO 1101 derived as ISO 17450-3 describes (sections perpendicular to the associated
// cylinder's axis, least-squares circle centres).
#include "cylzone/fit/sections.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <numeric>
#include <string>

#include "cylzone/core/errors.hpp"
#include "detail/even_guess.hpp"
#include "detail/fit_support.hpp"
#include "fit/detail/section_members.hpp"

#if defined(__x86_64__) && defined(__SSE2__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define CYLZONE_MEMBER_LANES 1
#else
#define CYLZONE_MEMBER_LANES 0
#endif

namespace cylzone {

namespace detail {
namespace {
/// Up to this many sections every point is tested against each: on the demo's probed bores
/// (a few levels each) the search and its bookkeeping took more instructions (callgrind).
constexpr std::size_t direct_sections = 8;

#if CYLZONE_MEMBER_LANES
/// append_members four points per step (AVX2; only on a processor that has it): a 4-bit mask
/// a step, its members in increasing order. Returns the first point not tested (n - n % 4).
__attribute__((target("avx2"))) std::size_t append_members_avx2(
    const double* t, std::size_t n, double h, double half, std::vector<std::size_t>& index) {
  const __m256d level = _mm256_set1_pd(h), limit = _mm256_set1_pd(half);
  const __m256d magnitude = _mm256_castsi256_pd(_mm256_set1_epi64x(0x7fffffffffffffff));
  std::size_t i = 0;
  for (; i + 4 <= n; i += 4) {
    const __m256d gap = _mm256_and_pd(_mm256_sub_pd(_mm256_loadu_pd(t + i), level), magnitude);
    auto in = static_cast<unsigned>(_mm256_movemask_pd(_mm256_cmp_pd(gap, limit, _CMP_LE_OQ)));
    for (; in != 0; in &= in - 1) index.push_back(i + static_cast<std::size_t>(__builtin_ctz(in)));
  }
  return i;
}
#endif
}  // namespace

void append_members(const double* t, std::size_t n, double h, double half, MemberLanes lanes,
                    std::vector<std::size_t>& index) {
  std::size_t i = 0;
#if CYLZONE_MEMBER_LANES
  if (lanes == MemberLanes::avx2) {
    i = append_members_avx2(t, n, h, half, index);
  } else if (lanes == MemberLanes::sse2) {
    // Two points per test: each lane's t - h, its absolute value (the sign bit cleared, as
    // std::abs) and <= half (false for NaN, as the scalar comparison) decide exactly as the
    // scalar test; most pairs are not members, and those cost one mask test for two points.
    const __m128d level = _mm_set1_pd(h), limit = _mm_set1_pd(half);
    const __m128d magnitude = _mm_castsi128_pd(_mm_set1_epi64x(0x7fffffffffffffff));
    for (; i + 2 <= n; i += 2) {
      const __m128d gap = _mm_and_pd(_mm_sub_pd(_mm_loadu_pd(t + i), level), magnitude);
      const int in = _mm_movemask_pd(_mm_cmple_pd(gap, limit));
      if (in == 0) continue;
      if (in & 1) index.push_back(i);
      if (in & 2) index.push_back(i + 1);
    }
  }
#else
  (void)lanes;
#endif
  for (; i < n; ++i)
    if (std::abs(t[i] - h) <= half) index.push_back(i);
}

MemberLanes member_lanes() {
#if CYLZONE_MEMBER_LANES
  return __builtin_cpu_supports("avx2") ? MemberLanes::avx2 : MemberLanes::sse2;
#else
  return MemberLanes::scalar;
#endif
}

SectionMembers section_members(const double* t, std::size_t n, const std::vector<double>& heights,
                               double half) {
  const std::size_t m = heights.size();
  SectionMembers out;
  out.start.assign(m + 1, 0);
  const auto all_finite = [](const std::vector<double>& v) {
    return std::all_of(v.begin(), v.end(), [](double x) { return std::isfinite(x); });
  };
  // The direct test of every pair for a few sections (probed levels: cheaper than the search
  // and its bookkeeping) and for non-finite input (no run structure is relied on).
  if (m <= direct_sections || !std::isfinite(half) || !all_finite(heights) ||
      !std::all_of(t, t + n, [](double x) { return std::isfinite(x); })) {
    // Section by section, into the one list (as the loop this replaces: one pass a section).
    out.index.reserve(n);
    const MemberLanes lanes = member_lanes();
    for (std::size_t k = 0; k < m; ++k) {
      append_members(t, n, heights[k], half, lanes, out.index);
      out.start[k + 1] = out.index.size();
    }
    return out;
  }
  // The heights in increasing order (equal heights in their given order), `sorted` their values.
  std::vector<std::size_t> by_height(m);
  std::iota(by_height.begin(), by_height.end(), std::size_t{0});
  std::stable_sort(by_height.begin(), by_height.end(),
                   [&](std::size_t a, std::size_t b) { return heights[a] < heights[b]; });
  std::vector<double> sorted(m);
  for (std::size_t j = 0; j < m; ++j) sorted[j] = heights[by_height[j]];
  // The run of a point: from the first height with t - h <= half (t - h falls as h rises) while
  // t - h >= -half; each pair is decided by the test itself.
  // First tried where evenly spaced heights (a scanned bore's slabs) would put it: j is the
  // run start exactly when the height before it is wholly below (t - h > half) and the one at
  // it is not, as partition_point decides; otherwise the binary search runs.
  const detail::EvenGuess guess(sorted.data(), m);
  const auto run_start = [&](double ti) {
    const std::size_t j = guess.lower_bound(ti - half);
    if ((j == 0 || ti - sorted[j - 1] > half) && (j == m || !(ti - sorted[j] > half))) return j;
    return static_cast<std::size_t>(
        std::partition_point(sorted.begin(), sorted.end(),
                             [&](double h) { return ti - h > half; }) -
        sorted.begin());
  };
  // Each point's run is searched once; the second pass starts from where the first found it
  // (4 bytes a point; heights beyond 2^32 - 1 sections search again).
  const bool keep_first = m <= std::numeric_limits<std::uint32_t>::max();
  std::vector<std::uint32_t> first_of(keep_first ? n : 0);
  const auto for_each_member = [&](double ti, std::size_t j, auto&& take) {
    for (; j < m && ti - sorted[j] >= -half; ++j)
      if (std::abs(ti - sorted[j]) <= half) take(j);
  };
  // Counted first, then filled in increasing point order: each section's list is increasing.
  std::vector<std::size_t> count(m + 1, 0);
  for (std::size_t i = 0; i < n; ++i) {
    const std::size_t j = run_start(t[i]);
    if (keep_first) first_of[i] = static_cast<std::uint32_t>(j);
    for_each_member(t[i], j, [&](std::size_t k) { ++count[by_height[k] + 1]; });
  }
  for (std::size_t k = 0; k < m; ++k) out.start[k + 1] = out.start[k] + count[k + 1];
  out.index.resize(out.start[m]);
  std::vector<std::size_t> next(out.start.begin(), out.start.end() - 1);
  for (std::size_t i = 0; i < n; ++i)
    for_each_member(t[i], keep_first ? first_of[i] : run_start(t[i]),
                    [&](std::size_t k) { out.index[next[by_height[k]]++] = i; });
  return out;
}

}  // namespace detail

SectionsResult fit_sections_least_squares(const Eigen::Matrix3Xd& points, const Axis& axis,
                                          const std::vector<double>& heights,
                                          const SectionOptions& options) {
  if (!(options.half_thickness > 0.0))
    throw FitError("section half thickness must be positive, got " +
                   detail::format_number(options.half_thickness, 6) + " mm");
  const Eigen::Vector3d w = detail::checked_direction(axis.direction, "section axis direction");
  Eigen::RowVectorXd t = w.transpose() * (points.colwise() - axis.point);
  FitOptions circle_options = options.fit;
  circle_options.fixed_direction = w;
  if (!circle_options.axis_hint) circle_options.axis_hint = w;  // circle normals follow the axis

  SectionsResult result;
  result.summary.method = FitMethod::least_squares;
  // Every section's points, in increasing order, from one search per point
  // (detail::section_members): the same points, in the same order, as testing every point
  // against every section.
  const detail::SectionMembers all_members = detail::section_members(
      t.data(), static_cast<std::size_t>(t.size()), heights, options.half_thickness);
  t = Eigen::RowVectorXd();  // its last reader
  const std::size_t needed = std::max<std::size_t>(options.min_points, 3);
  // One allocation for the circles, as many as the sections with enough points (each circle
  // holds vectors and strings: growing the list moved them again and again, the largest share
  // of this function's own work in a Monte Carlo trial, callgrind).
  std::size_t candidates = 0;
  for (std::size_t s = 0; s < heights.size(); ++s)
    candidates += all_members.start[s + 1] - all_members.start[s] >= needed;
  result.sections.reserve(candidates);
  for (std::size_t s = 0; s < heights.size(); ++s) {
    const double h = heights[s];
    const std::size_t* member = all_members.index.data() + all_members.start[s];
    const std::size_t count = all_members.start[s + 1] - all_members.start[s];
    // Named only in a warning: formatting the height costs more than selecting the points.
    const auto where = [h] { return "section at height " + detail::format_number(h, 4) + " mm"; };
    if (count < needed) {
      result.summary.warnings.push_back(where() + " skipped: " + std::to_string(count) +
                                        " points within +/-" +
                                        detail::format_number(options.half_thickness, 4) +
                                        " mm, at least " +
                                        std::to_string(needed) +
                                        " needed");
      continue;
    }
    Eigen::Matrix3Xd selected(3, static_cast<Eigen::Index>(count));
    for (std::size_t k = 0; k < count; ++k)
      selected.col(static_cast<Eigen::Index>(k)) = points.col(static_cast<Eigen::Index>(member[k]));
    try {
      SectionCircle section;
      section.height = h;
      section.circle = fit_circle_least_squares(selected, circle_options);
      // The circle was fitted in the plane through its points' centroid; the section plane is
      // the one at height h (the same circle, moved along the axis).
      Eigen::Vector3d& c = section.circle.centre;
      c += (h - (c - axis.point).dot(w)) * w;
      if (section.circle.summary.status == FitStatus::iteration_limit)
        result.summary.status = FitStatus::iteration_limit;
      result.summary.iterations = std::max(result.summary.iterations,
                                           section.circle.summary.iterations);
      result.summary.point_count += count;
      for (const std::string& warning : section.circle.summary.warnings)
        result.summary.warnings.push_back(where() + ": " + warning);
      result.sections.push_back(std::move(section));
    } catch (const FitError& e) {
      result.summary.warnings.push_back(where() + " skipped: " + e.what());
    }
  }
  // FitOptions::result_messages off (a Monte Carlo trial): no caller reads the account.
  if (options.fit.result_messages)
    result.summary.message = std::to_string(result.sections.size()) + " of " +
                             std::to_string(heights.size()) + " sections fitted";
  return result;
}

std::vector<double> find_section_levels(const Eigen::Matrix3Xd& points, const Axis& axis,
                                        double gap) {
  if (!(gap > 0.0))
    throw FitError("section gap must be positive, got " + detail::format_number(gap, 6) + " mm");
  const Eigen::Vector3d w = detail::checked_direction(axis.direction, "section axis direction");
  std::vector<double> t(static_cast<std::size_t>(points.cols()));
  for (Eigen::Index i = 0; i < points.cols(); ++i)
    t[static_cast<std::size_t>(i)] = w.dot(points.col(i) - axis.point);
  std::sort(t.begin(), t.end());
  return detail::levels_of_sorted_heights(t.size(), [&](std::size_t k) { return t[k]; }, gap);
}

}  // namespace cylzone
