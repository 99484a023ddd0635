// The points by height with the index beside its key (src/evaluate/detail/height_order.hpp)
// against the computation it replaces in evaluate_bore: std::sort of the point indices compared
// through their heights. The same permutation is required, ties included (many equal heights
// here, so the order among them is exercised), and the result must be sorted (checked directly).
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <random>
#include <vector>

#include "evaluate/detail/height_order.hpp"

using namespace cylzone;

TEST_CASE("heights sorted with their index give std::sort's order of the indices, ties included",
          "[height_order]") {
  std::mt19937_64 rng(77);
  for (const std::size_t n : {std::size_t{0}, std::size_t{1}, std::size_t{15}, std::size_t{17},
                              std::size_t{1000}, std::size_t{200000}}) {
    for (const int distinct : {3, 1000, 0}) {  // few distinct heights, some, all distinct
      std::vector<double> heights(n);
      std::uniform_real_distribution<double> unit(-40.0, 2.0);
      for (double& h : heights) {
        h = unit(rng);
        if (distinct > 0) h = std::round(h * distinct / 42.0);
      }
      if (n > 2) heights[n / 2] = -0.0;  // equal to +0.0 in the comparison
      std::vector<Eigen::Index> reference(n);
      std::iota(reference.begin(), reference.end(), Eigen::Index{0});
      std::sort(reference.begin(), reference.end(), [&](Eigen::Index a, Eigen::Index b) {
        return heights[static_cast<std::size_t>(a)] < heights[static_cast<std::size_t>(b)];
      });
      const std::vector<detail::HeightKey> keys = detail::order_by_height(heights);
      REQUIRE(keys.size() == n);
      bool same = true, sorted = true, heights_match = true;
      for (std::size_t k = 0; k < n; ++k) {
        same = same && keys[k].index == reference[k];
        heights_match = heights_match &&
                        std::signbit(keys[k].height) ==
                            std::signbit(heights[static_cast<std::size_t>(keys[k].index)]) &&
                        keys[k].height == heights[static_cast<std::size_t>(keys[k].index)];
        if (k > 0) sorted = sorted && !(keys[k].height < keys[k - 1].height);
      }
      CHECK(same);
      CHECK(sorted);
      CHECK(heights_match);
    }
  }
}
