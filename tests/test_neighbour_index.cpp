// Nearest spatial neighbours (neighbour_index.hpp): the batch search the stray-point screen
// uses (NeighbourIndex::nearest_in_order) and the single query (Query::of_point).
//
// Reference outside the code under test: the exhaustive search, i.e. the definition of the k
// nearest neighbours (every other point sorted by squared Euclidean distance, summed
// dx^2 + dy^2 + dz^2 in that order, ties to the lower index; common practice), on clouds of the
// shapes a screen meets: uniform, clustered, planar, with coincident points (more than k + 1 at
// one place), and on integer grids where many distances tie exactly.

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <algorithm>
#include <cstdint>
#include <random>
#include <stdexcept>
#include <utility>
#include <vector>

#include "cylzone/prepare/neighbour_index.hpp"

using namespace cylzone;

namespace {

/// The exhaustive k nearest of point i (itself excluded), (distance, index) order.
std::vector<std::uint32_t> exhaustive(const Eigen::Matrix3Xd& points, Eigen::Index i,
                                      std::size_t k) {
  std::vector<std::pair<double, std::uint32_t>> all;
  all.reserve(static_cast<std::size_t>(points.cols()));
  for (Eigen::Index j = 0; j < points.cols(); ++j) {
    if (j == i) continue;
    const double dx = points(0, i) - points(0, j), dy = points(1, i) - points(1, j),
                 dz = points(2, i) - points(2, j);
    double d = dx * dx;
    d += dy * dy;
    d += dz * dz;
    all.emplace_back(d, static_cast<std::uint32_t>(j));
  }
  std::partial_sort(all.begin(), all.begin() + static_cast<std::ptrdiff_t>(k), all.end());
  std::vector<std::uint32_t> nearest;
  for (std::size_t m = 0; m < k; ++m) nearest.push_back(all[m].second);
  return nearest;
}

/// Every point's neighbours from nearest_in_order, in input order (row i: point i), the
/// positions visited in chunks of `chunk`.
std::vector<std::vector<std::uint32_t>> batch(const NeighbourIndex& index, std::size_t k,
                                              std::size_t chunk) {
  const std::size_t n = index.size();
  std::vector<std::vector<std::uint32_t>> rows(n);
  std::vector<std::uint32_t> out;
  for (std::size_t first = 0; first < n; first += chunk) {
    const std::size_t last = std::min(n, first + chunk);
    index.nearest_in_order(k, first, last, out);
    REQUIRE(out.size() == (last - first) * k);
    for (std::size_t p = first; p < last; ++p) {
      const auto row = out.begin() + static_cast<std::ptrdiff_t>((p - first) * k);
      rows[index.locality_order()[p]].assign(row, row + static_cast<std::ptrdiff_t>(k));
    }
  }
  return rows;
}

/// Checks the batch search (in several chunkings) and the single query against the exhaustive
/// search for every point, on indexes built with one and with two threads.
void check_against_exhaustive(const Eigen::Matrix3Xd& points, std::size_t k) {
  const NeighbourIndex serial(points, 1), parallel(points, 2);
  CHECK(serial.locality_order() == parallel.locality_order());
  const auto whole = batch(serial, k, points.cols());
  const auto chunked = batch(parallel, k, 37);
  const auto single = batch(serial, k, 1);
  NeighbourIndex::Query query(k);
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const std::vector<std::uint32_t> expected = exhaustive(points, i, k);
    const auto row = static_cast<std::size_t>(i);
    INFO("point " << i << " at " << points.col(i).transpose());
    REQUIRE(whole[row] == expected);
    REQUIRE(chunked[row] == expected);
    REQUIRE(single[row] == expected);
    REQUIRE(query.of_point(serial, row) == expected);
  }
}

}  // namespace

TEST_CASE("nearest_in_order gives the exhaustive search's neighbours on uniform, clustered and "
          "planar clouds",
          "[neighbour_index]") {
  std::mt19937_64 rng(71);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::normal_distribution<double> normal(0.0, 1.0);
  const Eigen::Index n = 2500;
  SECTION("uniform in a box, off the origin") {
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i)
      points.col(i) = Eigen::Vector3d(120.0 + 5.0 * unit(rng), -40.0 + 3.0 * unit(rng), unit(rng));
    check_against_exhaustive(points, 8);
    check_against_exhaustive(points, 1);
    check_against_exhaustive(points, 30);  // more than a tree leaf holds
  }
  SECTION("clustered: tight blobs far apart") {
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i) {
      const double centre = 50.0 * static_cast<double>(i % 7);
      points.col(i) = Eigen::Vector3d(centre + 0.01 * normal(rng), 0.01 * normal(rng),
                                      -centre + 0.01 * normal(rng));
    }
    check_against_exhaustive(points, 8);
  }
  SECTION("planar: a tilted face, as a scanned datum") {
    const Eigen::Matrix3d turn =
        (Eigen::AngleAxisd(0.3, Eigen::Vector3d::UnitX()) * Eigen::AngleAxisd(0.2, Eigen::Vector3d::UnitY()))
            .toRotationMatrix();
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i)
      points.col(i) = turn * Eigen::Vector3d(20.0 * unit(rng), 10.0 * unit(rng), 0.0) +
                      Eigen::Vector3d(5.0, 6.0, 7.0);
    check_against_exhaustive(points, 8);
  }
}

TEST_CASE("nearest_in_order breaks ties by the lower index and handles coincident points",
          "[neighbour_index]") {
  SECTION("an integer grid stored in a scrambled order: many equal distances") {
    const int nx = 14, ny = 12, nz = 9;
    const std::size_t n = static_cast<std::size_t>(nx) * ny * nz;
    std::vector<std::uint32_t> slot(n);
    for (std::size_t i = 0; i < n; ++i) slot[i] = static_cast<std::uint32_t>(i);
    std::shuffle(slot.begin(), slot.end(), std::mt19937_64(73));
    Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(n));
    for (std::size_t g = 0; g < n; ++g)
      points.col(slot[g]) = Eigen::Vector3d(-30.0 + static_cast<double>(g % nx),
                                            static_cast<double>((g / nx) % ny),
                                            7.0 + static_cast<double>(g / (nx * ny)));
    check_against_exhaustive(points, 8);
    check_against_exhaustive(points, 6);  // exactly the face neighbours inside the grid
  }
  SECTION("coincident points: 25 copies of one point among others") {
    std::mt19937_64 rng(79);
    std::uniform_real_distribution<double> unit(0.0, 1.0);
    Eigen::Matrix3Xd points(3, 400);
    for (Eigen::Index i = 0; i < points.cols(); ++i)
      points.col(i) = Eigen::Vector3d(unit(rng), unit(rng), unit(rng));
    for (Eigen::Index i = 100; i < 400; i += 12) points.col(i) = Eigen::Vector3d(0.5, 0.5, 0.5);
    for (Eigen::Index i = 0; i < 5; ++i) points.col(390 + i) = points.col(3);  // a second pile
    check_against_exhaustive(points, 8);
  }
  SECTION("k + 1 points, all coincident") {
    const Eigen::Matrix3Xd points = Eigen::Vector3d(1.0, 2.0, 3.0).replicate(1, 9);
    check_against_exhaustive(points, 8);
  }
}

TEST_CASE("nearest_in_order on a scanned bore cut into several slabs matches the single query "
          "and the exhaustive search",
          "[neighbour_index]") {
  // 200,000 points on a bore (rows of 400 points 0.05 mm apart, 1 um noise): more than two
  // slabs of the index, so the search crosses slab boundaries.
  std::mt19937_64 rng(83);
  std::normal_distribution<double> noise(0.0, 0.001);
  const Eigen::Index n = 200000, per_row = 400;
  Eigen::Matrix3Xd points(3, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double a = 2.0 * 3.14159265358979323846 * static_cast<double>(i % per_row) / per_row;
    const double r = 4.0 + noise(rng);
    points.col(i) = Eigen::Vector3d(30.0 + r * std::cos(a), -12.0 + r * std::sin(a),
                                    -0.05 * static_cast<double>(i / per_row));
  }
  const std::size_t k = 8;
  const NeighbourIndex serial(points, 1), parallel(points, 2);
  const auto rows = batch(serial, k, 4096);
  CHECK(rows == batch(parallel, k, 1000));
  NeighbourIndex::Query query(k);
  bool same = true;
  for (Eigen::Index i = 0; same && i < n; ++i)
    same = query.of_point(serial, static_cast<std::size_t>(i)) == rows[static_cast<std::size_t>(i)];
  CHECK(same);
  std::vector<Eigen::Index> samples = {0, n - 1, per_row - 1};
  for (int s = 0; s < 60; ++s) samples.push_back(static_cast<Eigen::Index>(rng() % static_cast<std::uint64_t>(n)));
  for (const Eigen::Index i : samples) {
    INFO("point " << i);
    CHECK(rows[static_cast<std::size_t>(i)] == exhaustive(points, i, k));
  }
}

TEST_CASE("nearest_in_order refuses what it cannot answer", "[neighbour_index]") {
  const Eigen::Matrix3Xd points = Eigen::Matrix3Xd::Random(3, 20);
  const NeighbourIndex index(points);
  std::vector<std::uint32_t> out;
  CHECK_THROWS_AS(index.nearest_in_order(0, 0, 20, out), std::invalid_argument);
  CHECK_THROWS_AS(index.nearest_in_order(20, 0, 20, out), std::invalid_argument);  // n <= k
  CHECK_THROWS_AS(index.nearest_in_order(8, 5, 21, out), std::invalid_argument);
  CHECK_THROWS_AS(index.nearest_in_order(8, 6, 5, out), std::invalid_argument);
  index.nearest_in_order(8, 7, 7, out);
  CHECK(out.empty());
}
