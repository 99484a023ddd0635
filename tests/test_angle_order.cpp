// A section's (angle, point) pairs sorted by buckets (src/evaluate/detail/angle_order.hpp)
// against the computation it replaces in two_point_sizes: std::sort of the pairs. The same
// sequence is required for evenly spread, clustered, repeated and end-of-range angles.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <random>
#include <utility>
#include <vector>

#include "detail/fit_support.hpp"
#include "evaluate/detail/angle_order.hpp"

using namespace cylzone;

TEST_CASE("angles sorted by buckets equal std::sort of the pairs", "[angle_order]") {
  constexpr double two_pi = 6.283185307179586476925286766559;
  std::mt19937_64 rng(5150);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::vector<std::size_t> start;
  std::vector<std::pair<double, std::size_t>> scratch;
  std::size_t cases = 0;
  for (const std::size_t n : {std::size_t{3}, std::size_t{15}, std::size_t{16}, std::size_t{17},
                              std::size_t{30}, std::size_t{36}, std::size_t{63}, std::size_t{64},
                              std::size_t{500}, std::size_t{5000}}) {
    for (int kind = 0; kind < 5; ++kind) {
      std::vector<std::pair<double, std::size_t>> pairs;
      for (std::size_t k = 0; k < n; ++k) {
        double angle;
        switch (kind) {
          case 0:  // points round a circle, angles as two_point_sizes takes them
            angle = detail::polar_angle(std::cos(two_pi * unit(rng)), std::sin(two_pi * unit(rng)));
            break;
          case 1:  // a short arc: crowded buckets
            angle = 0.3 + 0.01 * unit(rng);
            break;
          case 2:  // many equal angles (coincident directions), ties broken by the index
            angle = two_pi * std::floor(8.0 * unit(rng)) / 8.0;
            break;
          case 3:  // the ends of the range: 0 and just below 2 pi, and 2 pi itself
            angle = k % 3 == 0 ? 0.0 : k % 3 == 1 ? std::nextafter(two_pi, 0.0) : two_pi;
            break;
          default:  // evenly spaced, a probed ring, in shuffled order
            angle = two_pi * static_cast<double>(k) / static_cast<double>(n);
        }
        pairs.push_back({angle, k});
      }
      if (kind == 4) std::shuffle(pairs.begin(), pairs.end(), rng);
      std::vector<std::pair<double, std::size_t>> reference = pairs;
      std::sort(reference.begin(), reference.end());
      detail::sort_by_angle(pairs, start, scratch);
      CHECK(pairs == reference);
      ++cases;
    }
  }
  CHECK(cases == 50);
}
