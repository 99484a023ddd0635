// Tests of the nearest-level assignment (src/evaluate/detail/nearest_level.hpp). Reference: a
// linear scan of every level for the nearest (the definition: smallest |t - level|, a tie to
// the upper level), and the binary-search path the forward cursor replaces in plan_sections.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <random>
#include <vector>

#include "evaluate/detail/nearest_level.hpp"

using namespace cylzone;

namespace {
/// The definition, by scanning every level: the smallest distance, the upper one of a tie
/// (levels distinct).
std::size_t nearest_by_scan(const std::vector<double>& levels, double t) {
  std::size_t best = 0;
  for (std::size_t k = 1; k < levels.size(); ++k)
    if (std::abs(t - levels[k]) <= std::abs(t - levels[best])) best = k;
  return best;
}
}  // namespace

TEST_CASE("nearest_level is the nearest level, a tie to the upper one", "[nearest_level]") {
  const std::vector<double> levels = {-3.0, -1.0, 0.0, 2.0, 5.0};
  CHECK(detail::nearest_level(levels, -10.0) == 0);  // below every level
  CHECK(detail::nearest_level(levels, 10.0) == 4);   // above every level
  CHECK(detail::nearest_level(levels, -2.0) == 1);   // halfway: the upper
  CHECK(detail::nearest_level(levels, 1.0) == 3);    // halfway: the upper
  CHECK(detail::nearest_level(levels, 0.9) == 2);
  CHECK(detail::nearest_level(levels, 2.0) == 3);  // on a level
  std::mt19937_64 rng(3);
  std::uniform_real_distribution<double> u(-6.0, 6.0);
  std::size_t differing = 0;
  for (int k = 0; k < 20000; ++k) {
    const double t = u(rng);
    differing += detail::nearest_level(levels, t) != nearest_by_scan(levels, t);
  }
  CHECK(differing == 0);
}

TEST_CASE("the forward cursor gives nearest_level's index for increasing heights",
          "[nearest_level]") {
  // The computation it replaces: a binary search per point (nearest_level). Random level sets
  // and sorted heights, with adversarial ones mixed in: heights on the levels, halfway between
  // two, equal heights in runs, below the first and above the last level, a single level.
  std::mt19937_64 rng(17);
  std::uniform_real_distribution<double> u(-50.0, 50.0);
  std::uniform_int_distribution<int> count(1, 12);
  std::size_t differing = 0, compared = 0;
  for (int trial = 0; trial < 2000; ++trial) {
    std::vector<double> levels(static_cast<std::size_t>(count(rng)));
    for (double& l : levels) l = std::round(u(rng));  // integers: exact halfway points
    std::sort(levels.begin(), levels.end());
    levels.erase(std::unique(levels.begin(), levels.end()), levels.end());
    std::vector<double> heights;
    for (int k = 0; k < 200; ++k) heights.push_back(u(rng) * 1.2);
    for (std::size_t k = 0; k < levels.size(); ++k) {
      heights.push_back(levels[k]);
      heights.push_back(levels[k]);
      if (k > 0) heights.push_back(0.5 * (levels[k - 1] + levels[k]));
    }
    heights.push_back(levels.front() - 100.0);
    heights.push_back(levels.back() + 100.0);
    std::sort(heights.begin(), heights.end());
    detail::NearestLevelCursor cursor(levels);
    for (double t : heights) {
      differing += cursor(t) != detail::nearest_level(levels, t);
      ++compared;
    }
  }
  CHECK(compared > 400000);
  CHECK(differing == 0);
}

TEST_CASE("the hinted search gives nearest_level's index in any order of heights",
          "[nearest_level]") {
  // The computation it replaces in surrounds_axis: a binary search per point (nearest_level).
  // Heights in runs of one level (probed rings), in random order, on the levels and halfway.
  std::mt19937_64 rng(29);
  std::uniform_real_distribution<double> u(-50.0, 50.0);
  std::uniform_int_distribution<int> count(1, 12);
  std::size_t differing = 0, compared = 0;
  for (int trial = 0; trial < 2000; ++trial) {
    std::vector<double> levels(static_cast<std::size_t>(count(rng)));
    for (double& l : levels) l = std::round(u(rng));
    std::sort(levels.begin(), levels.end());
    levels.erase(std::unique(levels.begin(), levels.end()), levels.end());
    std::vector<double> heights;
    for (double l : levels)  // a ring per level, then scattered heights
      for (int k = 0; k < 20; ++k) heights.push_back(l + 0.01 * u(rng));
    for (int k = 0; k < 100; ++k) heights.push_back(u(rng) * 1.2);
    for (std::size_t k = 0; k < levels.size(); ++k) {
      heights.push_back(levels[k]);
      if (k > 0) heights.push_back(0.5 * (levels[k - 1] + levels[k]));
    }
    heights.push_back(levels.front() - 100.0);
    heights.push_back(levels.back() + 100.0);
    detail::NearestLevelHint hinted(levels);
    for (double t : heights) {
      differing += hinted(t) != detail::nearest_level(levels, t);
      ++compared;
    }
  }
  CHECK(compared > 200000);
  CHECK(differing == 0);
}
