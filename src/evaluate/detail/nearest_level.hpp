#pragma once
// Private: the level (section height) nearest to a height, as the section plan assigns points
// (plan_sections, surrounds_axis in bore_evaluation.cpp; sampling_coverage.cpp). Each point
// belongs to its nearest level, a tie going to the upper one. The lower bound (first level not
// below the height) is found by binary search (std::lower_bound), or, for heights that come in
// increasing order (a bore's points by height), by a cursor that only moves forward: the
// lower bound of a larger height is never before that of a smaller one, since every level
// below the smaller height is below the larger, so the cursor stops where the binary search
// would (common practice; test_nearest_level compares the two).

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <vector>

#include "detail/even_guess.hpp"

namespace cylzone::detail {

/// From the lower bound k of t in `levels` (sorted, non-empty): the nearest level's index.
inline std::size_t nearest_from_bound(const std::vector<double>& levels, std::size_t k,
                                      double t) {
  if (k == levels.size() || (k > 0 && t - levels[k - 1] < levels[k] - t)) --k;
  return k;
}

/// Index of the level in `levels` (sorted, non-empty) nearest to t, a tie to the upper one.
inline std::size_t nearest_level(const std::vector<double>& levels, double t) {
  const auto it = std::lower_bound(levels.begin(), levels.end(), t);
  return nearest_from_bound(levels, static_cast<std::size_t>(it - levels.begin()), t);
}

/// nearest_level for heights given in increasing order: O(levels + heights) in all.
class NearestLevelCursor {
 public:
  explicit NearestLevelCursor(const std::vector<double>& levels) : levels_(levels) {}
  /// t must not be below the previous call's.
  std::size_t operator()(double t) {
    while (bound_ < levels_.size() && levels_[bound_] < t) ++bound_;
    return nearest_from_bound(levels_, bound_, t);
  }

 private:
  const std::vector<double>& levels_;
  std::size_t bound_ = 0;
};

/// nearest_level that first tries the previous call's lower bound: points that come level by
/// level (a probed ring after ring, in the file's order) find it at once. A position b is the
/// lower bound of t exactly when the level before it is below t and the one at it is not (the
/// levels being sorted, so are all before and after), so the check, not a guess, decides;
/// otherwise the places next to it are checked the same way (a ring's heights straddle its
/// level), then the binary search runs. The same index as nearest_level for any order of calls.
/// Before the binary search, the position evenly spaced levels would give is tried, checked the
/// same way (detail::EvenGuess): a scanned bore's slabs are evenly spaced and its points come
/// in no order of height, where the previous point's bound rarely holds.
class NearestLevelHint {
 public:
  explicit NearestLevelHint(const std::vector<double>& levels)
      : levels_(levels), guess_(levels.data(), levels.size()) {}
  std::size_t operator()(double t) {
    if (!is_bound(bound_, t)) {
      // A probed ring's heights straddle its level (form, tilt, noise), so between two points
      // of one ring the bound moves by one place, up or down: both are checked (the same
      // check) before the guess, whose ceil costs more.
      if (bound_ < levels_.size() && is_bound(bound_ + 1, t)) {
        ++bound_;
        return nearest_from_bound(levels_, bound_, t);
      }
      if (bound_ > 0 && is_bound(bound_ - 1, t)) {
        --bound_;
        return nearest_from_bound(levels_, bound_, t);
      }
      const std::size_t guess = guess_.lower_bound(t);
      bound_ = is_bound(guess, t)
                   ? guess
                   : static_cast<std::size_t>(
                         std::lower_bound(levels_.begin(), levels_.end(), t) - levels_.begin());
    }
    return nearest_from_bound(levels_, bound_, t);
  }

 private:
  /// Whether b is std::lower_bound's position of t: every level before it below t, none from it.
  bool is_bound(std::size_t b, double t) const {
    return (b == 0 || levels_[b - 1] < t) && (b == levels_.size() || !(levels_[b] < t));
  }
  const std::vector<double>& levels_;
  EvenGuess guess_;
  std::size_t bound_ = 0;
};

}  // namespace cylzone::detail
