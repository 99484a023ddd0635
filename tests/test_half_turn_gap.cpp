// The half-turn gap test of a section's directions (src/evaluate/detail/half_turn_gap.hpp)
// against the computation it replaces in surrounds_axis: the directions' angles (polar_angle),
// sorted, and their largest gap (wrap-around included) compared with pi. Cross-checked with the
// angles of libm's atan2 too.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include "detail/fit_support.hpp"
#include "evaluate/detail/half_turn_gap.hpp"

using namespace cylzone;

namespace {
constexpr double pi = 3.14159265358979323846;

/// The replaced computation: sorted polar angles, largest gap below pi.
bool gap_below_half_turn_by_angles(const std::vector<double>& x, const std::vector<double>& y,
                                   bool libm) {
  std::vector<double> a;
  for (std::size_t i = 0; i < x.size(); ++i) {
    double angle = libm ? std::atan2(y[i], x[i]) : detail::polar_angle(x[i], y[i]);
    if (libm && angle < 0.0) angle += 2.0 * pi;
    a.push_back(angle);
  }
  std::sort(a.begin(), a.end());
  double gap = a.front() + 2.0 * pi - a.back();
  for (std::size_t j = 1; j < a.size(); ++j) gap = std::max(gap, a[j] - a[j - 1]);
  return gap < pi;
}

using Verdict = detail::HalfTurnGap::Verdict;

Verdict verdict_of(const std::vector<double>& x, const std::vector<double>& y) {
  detail::HalfTurnGap g;
  for (std::size_t i = 0; i < x.size(); ++i) g.add(x[i], y[i]);
  REQUIRE(g.count() == x.size());
  return g.verdict();
}
}  // namespace

TEST_CASE("half-turn gap without angles decides as the sorted angles do", "[half_turn_gap]") {
  std::mt19937_64 rng(4242);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::size_t decided = 0, below = 0, not_below = 0;
  for (int trial = 0; trial < 4000; ++trial) {
    // Directions on an arc of random extent around a random start (often near half a turn,
    // the boundary), at radius 7 to 9 about a centre off the origin of coordinates; a few
    // points exactly opposite each other or on the axes.
    const std::size_t n = 3 + static_cast<std::size_t>(unit(rng) * 60);
    const double start = 2.0 * pi * unit(rng);
    const double extent = trial % 4 == 0 ? pi * (1.0 + 1e-3 * (unit(rng) - 0.5))
                                         : 2.0 * pi * unit(rng);
    std::vector<double> x, y;
    for (std::size_t i = 0; i < n; ++i) {
      const double theta = start + extent * unit(rng);
      const double r = 7.0 + 2.0 * unit(rng);
      x.push_back(r * std::cos(theta));
      y.push_back(r * std::sin(theta));
    }
    if (trial % 7 == 0) {  // an exactly opposite pair and axis directions
      x.push_back(-x[0]);
      y.push_back(-y[0]);
      x.push_back(0.0);
      y.push_back(trial % 2 ? 3.0 : -3.0);
      x.push_back(-2.0);
      y.push_back(0.0);
    }
    const Verdict v = verdict_of(x, y);
    if (v == Verdict::undecided) continue;
    ++decided;
    const bool by_polar = gap_below_half_turn_by_angles(x, y, false);
    CHECK((v == Verdict::below) == by_polar);
    CHECK((v == Verdict::below) == gap_below_half_turn_by_angles(x, y, true));
    (by_polar ? below : not_below) += 1;
  }
  // Both answers occur often, and the undecided band is rare.
  CHECK(below > 500);
  CHECK(not_below > 500);
  CHECK(decided > 3900);
}

TEST_CASE("half-turn gap: exact half turns, the centre and one direction are handled",
          "[half_turn_gap]") {
  // Exactly half a turn between neighbours (within the margin): undecided, the caller sorts.
  CHECK(verdict_of({1.0, -1.0, 0.0}, {0.0, 0.0, 1.0}) == Verdict::undecided);
  // A point at the centre has no direction: undecided.
  CHECK(verdict_of({1.0, -1.0, 0.0, 0.0}, {0.0, 0.5, -1.0, 0.0}) == Verdict::undecided);
  // Three directions 120 degrees apart surround the centre; three within a quarter turn do not.
  CHECK(verdict_of({1.0, -0.5, -0.5}, {0.0, 0.8660254, -0.8660254}) == Verdict::below);
  CHECK(gap_below_half_turn_by_angles({1.0, -0.5, -0.5}, {0.0, 0.8660254, -0.8660254}, false));
  CHECK(verdict_of({1.0, 0.9, 0.8}, {0.0, 0.1, 0.3}) == Verdict::not_below);
  CHECK_FALSE(gap_below_half_turn_by_angles({1.0, 0.9, 0.8}, {0.0, 0.1, 0.3}, false));
  // One direction repeated: a full turn of gap. Directions near +x on both sides of the axis
  // (pseudo-angles near 0 and near 4): small gaps across the wrap.
  CHECK(verdict_of({2.0, 2.0, 2.0}, {1.0, 1.0, 1.0}) == Verdict::not_below);
  CHECK(verdict_of({1.0, 1.0, -1.0, 0.0}, {1e-300, -1e-300, 0.1, -1.0}) == Verdict::below);
  CHECK(gap_below_half_turn_by_angles({1.0, 1.0, -1.0, 0.0}, {1e-300, -1e-300, 0.1, -1.0}, false));
}
