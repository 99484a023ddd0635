// Tests of the nearest-level assignment (src/evaluate/detail/nearest_level.hpp). Reference: a
// linear scan of every level for the nearest (the definition: smallest |t - level|, a tie to
// the upper level), and the binary-search path the forward cursor replaces in plan_sections.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <random>
#include <utility>
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

/// A random level set for the trials below: 1 to 12 distinct integers in [-50, 50] (exact
/// halfway points between them).
std::vector<double> random_levels(std::mt19937_64& rng) {
  std::uniform_real_distribution<double> u(-50.0, 50.0);
  std::uniform_int_distribution<int> count(1, 12);
  std::vector<double> levels(static_cast<std::size_t>(count(rng)));
  for (double& l : levels) l = std::round(u(rng));
  std::sort(levels.begin(), levels.end());
  levels.erase(std::unique(levels.begin(), levels.end()), levels.end());
  return levels;
}

/// The adversarial heights of a level set: on each level, halfway between neighbours, far
/// below the first and far above the last.
void add_edge_heights(const std::vector<double>& levels, std::vector<double>& heights) {
  for (std::size_t k = 0; k < levels.size(); ++k) {
    heights.push_back(levels[k]);
    heights.push_back(levels[k]);
    if (k > 0) heights.push_back(0.5 * (levels[k - 1] + levels[k]));
  }
  heights.push_back(levels.front() - 100.0);
  heights.push_back(levels.back() + 100.0);
}
/// Over 2000 random level sets, the indices `Finder` (constructed on the levels, then called on
/// each height in turn) gives against nearest_level's binary search: heights in a ring per
/// level (rings = true), 100 scattered ones and the edge heights, sorted when `sorted`.
/// Returns {differing, compared}.
template <class Finder>
std::pair<std::size_t, std::size_t> against_binary_search(std::uint64_t seed, bool rings,
                                                          bool sorted) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> u(-50.0, 50.0);
  std::size_t differing = 0, compared = 0;
  for (int trial = 0; trial < 2000; ++trial) {
    const std::vector<double> levels = random_levels(rng);
    std::vector<double> heights;
    if (rings)
      for (double l : levels)
        for (int k = 0; k < 20; ++k) heights.push_back(l + 0.01 * u(rng));
    for (int k = 0; k < 100; ++k) heights.push_back(u(rng) * 1.2);
    add_edge_heights(levels, heights);
    if (sorted) std::sort(heights.begin(), heights.end());
    Finder find(levels);
    for (double t : heights) {
      differing += find(t) != detail::nearest_level(levels, t);
      ++compared;
    }
  }
  return {differing, compared};
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

TEST_CASE("the forward cursor and the hinted search give nearest_level's index",
          "[nearest_level]") {
  // The computations they replace: a binary search per point (nearest_level). The cursor (in
  // plan_sections) on sorted heights with adversarial ones mixed in: on the levels (equal
  // heights in runs), halfway between two, below the first and above the last level, a single
  // level; the hinted search (in surrounds_axis and sampling_coverage) on heights ring by ring
  // (a probed bore in its file's order), then scattered at random.
  const auto cursor = against_binary_search<detail::NearestLevelCursor>(17, false, true);
  const auto hinted = against_binary_search<detail::NearestLevelHint>(29, true, false);
  CHECK(cursor.second > 200000);
  CHECK(cursor.first == 0);
  CHECK(hinted.second > 200000);
  CHECK(hinted.first == 0);
}

TEST_CASE("the hinted search on evenly spaced slabs, heights in no order: nearest_level's index",
          "[nearest_level]") {
  // A scanned bore's slabs (t0 + (k + 0.5) x thickness, as plan_sections cuts them, so their
  // spacing is even only to the rounding) with its points in no order of height: the previous
  // point's bound rarely holds and the evenly spaced guess (detail::EvenGuess) is tried before
  // the binary search. Reference: nearest_level's binary search (on the scattered heights and
  // the adversarial ones: on a level, just below one, halfway, beyond the ends); and the guess
  // itself against std::lower_bound on the scattered heights, to show it is the path taken.
  std::mt19937_64 rng(4711);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::size_t differing = 0, compared = 0, guessed = 0, scattered = 0;
  for (int trial = 0; trial < 300; ++trial) {
    const std::size_t m = 1 + static_cast<std::size_t>(u(rng) * 150.0);
    const double t0 = -60.0 * u(rng), thickness = 0.05 + u(rng);
    std::vector<double> levels;
    for (std::size_t k = 0; k < m; ++k)
      levels.push_back(t0 + (static_cast<double>(k) + 0.5) * thickness);
    std::vector<double> heights;
    const double span = static_cast<double>(m) * thickness;
    for (int k = 0; k < 500; ++k) heights.push_back(t0 - 0.1 * span + 1.2 * span * u(rng));
    const detail::EvenGuess guess(levels.data(), levels.size());
    for (double t : heights) {  // the scattered heights: how often the guess is the bound
      guessed += guess.lower_bound(t) ==
                 static_cast<std::size_t>(std::lower_bound(levels.begin(), levels.end(), t) -
                                          levels.begin());
      ++scattered;
    }
    add_edge_heights(levels, heights);
    for (double l : levels) heights.push_back(std::nextafter(l, -1e300));
    std::shuffle(heights.begin(), heights.end(), rng);
    detail::NearestLevelHint hinted(levels);
    for (double t : heights) {
      differing += hinted(t) != detail::nearest_level(levels, t);
      ++compared;
    }
  }
  CHECK(compared > 150000);
  CHECK(differing == 0);
  CHECK(guessed > scattered * 99 / 100);  // the guess is right nearly always on slabs
}

TEST_CASE("the hinted search on rings whose heights straddle their levels: nearest_level's index",
          "[nearest_level]") {
  // A probed bore in its file's order: ring after ring, each point's height just above or just
  // below its ring's level at random (form and tilt), so that the bound of consecutive points
  // moves by one place, up or down; the first and last levels included (bounds 0 and m), and
  // rings visited upward, downward and in random order. Reference: nearest_level.
  std::mt19937_64 rng(60221);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::size_t differing = 0, compared = 0;
  for (int trial = 0; trial < 1000; ++trial) {
    const std::size_t m = 1 + static_cast<std::size_t>(u(rng) * 9.0);
    std::vector<double> levels;
    for (std::size_t k = 0; k < m; ++k) levels.push_back(-60.0 + 7.5 * static_cast<double>(k) + u(rng));
    std::vector<std::size_t> rings(m);
    for (std::size_t k = 0; k < m; ++k) rings[k] = k;
    if (trial % 3 == 1) std::reverse(rings.begin(), rings.end());
    if (trial % 3 == 2) std::shuffle(rings.begin(), rings.end(), rng);
    detail::NearestLevelHint hinted(levels);
    for (std::size_t k : rings)
      for (int i = 0; i < 40; ++i) {
        const double jitter = (u(rng) < 0.5 ? -1.0 : 1.0) * 1e-3 * u(rng);
        const double t = i % 13 == 0 ? levels[k] : levels[k] + jitter;  // some exactly on it
        differing += hinted(t) != detail::nearest_level(levels, t);
        ++compared;
      }
  }
  CHECK(compared > 150000);
  CHECK(differing == 0);
}
