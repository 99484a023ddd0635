// The points by height with the index beside its key (src/evaluate/detail/height_order.hpp)
// against the computation it replaces in evaluate_bore: std::sort of the point indices compared
// through their heights. The same permutation is required, ties included (many equal heights
// here, so the order among them is exercised), and the result must be sorted (checked directly).
// The bucket order of a dense bore is compared with the same reference, and it is checked that
// it is taken where the heights are spread and distinct and declined on ties and crowding.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <numeric>
#include <random>
#include <vector>

#include "evaluate/detail/height_order.hpp"

using namespace cylzone;

namespace {

/// The computation replaced: std::sort of the point indices compared by height.
std::vector<Eigen::Index> index_sort(const std::vector<double>& heights) {
  std::vector<Eigen::Index> reference(heights.size());
  std::iota(reference.begin(), reference.end(), Eigen::Index{0});
  std::sort(reference.begin(), reference.end(), [&](Eigen::Index a, Eigen::Index b) {
    return heights[static_cast<std::size_t>(a)] < heights[static_cast<std::size_t>(b)];
  });
  return reference;
}

/// Whether `keys` are the reference permutation with each point's own height, bit for bit.
bool same_order(const std::vector<detail::HeightKey>& keys, const std::vector<double>& heights) {
  const std::vector<Eigen::Index> reference = index_sort(heights);
  if (keys.size() != reference.size()) return false;
  for (std::size_t k = 0; k < keys.size(); ++k) {
    const double h = heights[static_cast<std::size_t>(reference[k])];
    if (keys[k].index != reference[k] || std::memcmp(&keys[k].height, &h, sizeof h) != 0)
      return false;
  }
  return true;
}

}  // namespace

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

TEST_CASE("a dense bore's heights ordered by buckets: std::sort's permutation, declined on ties "
          "and crowding", "[height_order]") {
  std::mt19937_64 rng(4242);
  std::uniform_real_distribution<double> depth(-60.0, 0.5);
  std::normal_distribution<double> gauss(-20.0, 8.0);
  for (const std::size_t n : {detail::bucketed_from, std::size_t{10007}, std::size_t{300000}}) {
    // Spread and distinct (a scanned wall, uniform along the depth; a bell-shaped spread,
    // whose tails leave buckets empty and whose middle fills some several deep): taken.
    for (const bool bell : {false, true}) {
      std::vector<double> heights(n);
      for (double& h : heights) h = bell ? gauss(rng) : depth(rng);
      std::vector<detail::HeightKey> keys;
      const bool taken = detail::bucket_order_by_height(heights, keys);
      CHECK(taken);
      if (taken) CHECK(same_order(keys, heights));
      CHECK(same_order(detail::order_by_height(heights), heights));
    }
    // One pair of equal heights far apart in the data, and +0.0 beside -0.0: declined, and
    // order_by_height gives std::sort's order of the ties.
    for (const int tie : {0, 1}) {
      std::vector<double> heights(n);
      for (double& h : heights) h = depth(rng);
      if (tie == 0) {
        heights[n - 1] = heights[3];
      } else {
        heights[5] = 0.0;
        heights[n / 2] = -0.0;
      }
      std::vector<detail::HeightKey> keys;
      CHECK_FALSE(detail::bucket_order_by_height(heights, keys));
      CHECK(same_order(detail::order_by_height(heights), heights));
    }
    // Rings of a scanner, 200 distinct heights each within 1e-9 mm: crowded, declined.
    {
      std::vector<double> heights(n);
      for (std::size_t i = 0; i < n; ++i)
        heights[i] = -static_cast<double>(i % 40) * 1.5 + 1e-9 * depth(rng) / 60.0;
      std::vector<detail::HeightKey> keys;
      CHECK_FALSE(detail::bucket_order_by_height(heights, keys));
      CHECK(same_order(detail::order_by_height(heights), heights));
    }
    // All equal, and a non-finite height: declined.
    {
      std::vector<double> heights(n, -7.25);
      std::vector<detail::HeightKey> keys;
      CHECK_FALSE(detail::bucket_order_by_height(heights, keys));
      CHECK(same_order(detail::order_by_height(heights), heights));
      for (double& h : heights) h = depth(rng);
      heights[n / 3] = std::numeric_limits<double>::infinity();
      CHECK_FALSE(detail::bucket_order_by_height(heights, keys));
    }
  }
}
