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
#include <cmath>
#include <cstdint>
#include <cstring>
#include <iterator>
#include <limits>
#include <random>
#include <stdexcept>
#include <utility>
#include <vector>

#include "cylzone/prepare/neighbour_index.hpp"
#include "prepare/detail/compact_within.hpp"

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

/// Test clouds shared by the KD-tree's and the grid's tests, drawn from `rng`.
Eigen::Matrix3Xd uniform_box(std::mt19937_64& rng, Eigen::Index n) {
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  Eigen::Matrix3Xd points(3, n);
  for (Eigen::Index i = 0; i < n; ++i)
    points.col(i) = Eigen::Vector3d(120.0 + 5.0 * unit(rng), -40.0 + 3.0 * unit(rng), unit(rng));
  return points;
}

/// Seven tight blobs (0.01 sigma) 50 apart.
Eigen::Matrix3Xd clustered_blobs(std::mt19937_64& rng, Eigen::Index n) {
  std::normal_distribution<double> normal(0.0, 1.0);
  Eigen::Matrix3Xd points(3, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double centre = 50.0 * static_cast<double>(i % 7);
    points.col(i) = Eigen::Vector3d(centre + 0.01 * normal(rng), 0.01 * normal(rng),
                                    -centre + 0.01 * normal(rng));
  }
  return points;
}

/// A 40 x 20 face turned about x and y, as a scanned datum.
Eigen::Matrix3Xd tilted_face(std::mt19937_64& rng, Eigen::Index n) {
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  const Eigen::Matrix3d turn = (Eigen::AngleAxisd(0.3, Eigen::Vector3d::UnitX()) *
                                Eigen::AngleAxisd(0.2, Eigen::Vector3d::UnitY()))
                                   .toRotationMatrix();
  Eigen::Matrix3Xd points(3, n);
  for (Eigen::Index i = 0; i < n; ++i)
    points.col(i) = turn * Eigen::Vector3d(20.0 * unit(rng), 10.0 * unit(rng), 0.0) +
                    Eigen::Vector3d(5.0, 6.0, 7.0);
  return points;
}

/// A 14 x 12 x 9 integer lattice stored in an order scrambled by `seed`: many exactly equal
/// distances, so the (distance, index) order decides which neighbours are taken.
Eigen::Matrix3Xd scrambled_lattice(std::uint64_t seed) {
  const int nx = 14, ny = 12, nz = 9;
  const std::size_t n = static_cast<std::size_t>(nx) * ny * nz;
  std::vector<std::uint32_t> slot(n);
  for (std::size_t i = 0; i < n; ++i) slot[i] = static_cast<std::uint32_t>(i);
  std::shuffle(slot.begin(), slot.end(), std::mt19937_64(seed));
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(n));
  for (std::size_t g = 0; g < n; ++g)
    points.col(slot[g]) = Eigen::Vector3d(-30.0 + static_cast<double>(g % nx),
                                          static_cast<double>((g / nx) % ny),
                                          7.0 + static_cast<double>(g / (nx * ny)));
  return points;
}

}  // namespace

TEST_CASE("nearest_in_order gives the exhaustive search's neighbours on uniform, clustered and "
          "planar clouds",
          "[neighbour_index]") {
  std::mt19937_64 rng(71);
  const Eigen::Index n = 2500;
  SECTION("uniform in a box, off the origin") {
    const Eigen::Matrix3Xd points = uniform_box(rng, n);
    check_against_exhaustive(points, 8);
    check_against_exhaustive(points, 1);
    check_against_exhaustive(points, 30);  // more than a tree leaf holds
  }
  SECTION("clustered: tight blobs far apart") {
    check_against_exhaustive(clustered_blobs(rng, n), 8);
  }
  SECTION("planar: a tilted face, as a scanned datum") {
    const Eigen::Matrix3Xd points = tilted_face(rng, n);
    check_against_exhaustive(points, 8);
  }
}

TEST_CASE("nearest_in_order breaks ties by the lower index and handles coincident points",
          "[neighbour_index]") {
  SECTION("an integer grid stored in a scrambled order: many equal distances") {
    const Eigen::Matrix3Xd points = scrambled_lattice(73);
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

// ---------------------------------------------------------------------------------------------
// all_nearest: the grid with certification, the KD-tree for the rest. Reference: the exhaustive
// search above (the definition), and the KD-tree's single query (Query::of_point) on large
// clouds where the exhaustive search of every point would be too slow.

namespace {

/// Every point's neighbours from all_nearest on `threads` threads, in input order; checks
/// each point is handed over exactly once, and every row has k entries.
std::vector<std::vector<std::uint32_t>> grid_rows(const Eigen::Matrix3Xd& points, std::size_t k,
                                                  std::size_t threads,
                                                  AllNearestSummary* summary = nullptr) {
  const std::size_t n = static_cast<std::size_t>(points.cols());
  std::vector<std::vector<std::uint32_t>> rows(n);
  std::vector<int> seen(n, 0);
  const AllNearestSummary s = all_nearest(
      points, k, threads,
      [&](std::size_t worker, std::size_t count, const std::uint32_t* at,
          const std::uint32_t* found) {
        CHECK(worker < std::max<std::size_t>(1, threads));
        for (std::size_t j = 0; j < count; ++j) {
          // Workers own disjoint points, so these writes never race.
          ++seen[at[j]];
          rows[at[j]].assign(found + j * k, found + (j + 1) * k);
        }
      });
  CHECK(std::count(seen.begin(), seen.end(), 1) == static_cast<std::ptrdiff_t>(n));
  CHECK(s.certified + s.widened + s.tree == n);
  if (summary) *summary = s;
  return rows;
}

/// all_nearest on one and two threads against the exhaustive search, every point.
AllNearestSummary check_grid_exhaustive(const Eigen::Matrix3Xd& points, std::size_t k) {
  AllNearestSummary summary;
  const auto one = grid_rows(points, k, 1, &summary);
  const auto two = grid_rows(points, k, 2);
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const std::vector<std::uint32_t> expected = exhaustive(points, i, k);
    INFO("point " << i << " at " << points.col(i).transpose() << ", cell " << summary.cell);
    REQUIRE(one[static_cast<std::size_t>(i)] == expected);
    REQUIRE(two[static_cast<std::size_t>(i)] == expected);
  }
  return summary;
}

/// A scanned bore: rows of `per_row` points `pitch` apart around a circle of radius 5, rows
/// `pitch` apart, 1 um radial noise.
Eigen::Matrix3Xd scanned_bore(Eigen::Index n, Eigen::Index per_row, double pitch, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> noise(0.0, 0.001);
  Eigen::Matrix3Xd points(3, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double a = 2.0 * 3.14159265358979323846 * static_cast<double>(i % per_row) /
                     static_cast<double>(per_row);
    const double r = 5.0 + noise(rng);
    points.col(i) = Eigen::Vector3d(40.0 + r * std::cos(a), 25.0 + r * std::sin(a),
                                    -pitch * static_cast<double>(i / per_row));
  }
  return points;
}

}  // namespace

TEST_CASE("all_nearest gives the exhaustive search's neighbours on uniform, clustered, planar "
          "and cylindrical clouds",
          "[neighbour_index][grid]") {
  std::mt19937_64 rng(101);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  const Eigen::Index n = 3000;
  SECTION("uniform in a box") {
    const Eigen::Matrix3Xd points = uniform_box(rng, n);
    const AllNearestSummary s = check_grid_exhaustive(points, 8);
    CHECK(s.certified > static_cast<std::size_t>(n) / 2);  // the grid does the work
    check_grid_exhaustive(points, 1);
    check_grid_exhaustive(points, 30);
  }
  SECTION("clustered: tight blobs far apart, and a few lone points") {
    Eigen::Matrix3Xd points = clustered_blobs(rng, n);
    for (Eigen::Index i = 0; i < 5; ++i) points.col(10 * i) = Eigen::Vector3d(25.0 * i, 30.0, 3.0);
    const AllNearestSummary s = check_grid_exhaustive(points, 8);
    CHECK(s.tree >= 5);  // the lone points are far from any 7x7x7 block's reach
  }
  SECTION("planar: a tilted face") {
    const Eigen::Matrix3Xd points = tilted_face(rng, n);
    check_grid_exhaustive(points, 8);
  }
  SECTION("planar, axis-aligned: one coordinate the same for all points") {
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i)
      points.col(i) = Eigen::Vector3d(20.0 * unit(rng), 10.0 * unit(rng), 4.0);
    check_grid_exhaustive(points, 8);
  }
  SECTION("a scanned bore (points on a cylindrical surface, rows and columns)") {
    const AllNearestSummary s = check_grid_exhaustive(scanned_bore(4000, 314, 0.1, 103), 8);
    CHECK(s.certified > 3000);
  }
  SECTION("density graded 400-fold, two populations interleaved: the k-th distance jumps") {
    // Each point's selection is first bounded by the previous point's k-th distance plus a
    // margin; here consecutive points of a cell often have k-th distances far apart, so that
    // bound is too small (and must be abandoned) or far too large (and must still be exact).
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i) {
      const double x = std::exp(6.0 * (unit(rng) + 1.0) / 2.0);  // density falls as 1/x
      const double z = i % 2 == 0 ? 0.0 : 0.05 * unit(rng);         // a face and a thin slab
      points.col(i) = Eigen::Vector3d(x, 10.0 * unit(rng), z);
    }
    check_grid_exhaustive(points, 8);
    check_grid_exhaustive(points, 3);
  }
  SECTION("a face and points 1.5 and 2.5 cells off it: certified by the wider blocks") {
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i)
      points.col(i) = Eigen::Vector3d(10.0 * unit(rng), 10.0 * unit(rng), 0.0);
    AllNearestSummary face;
    grid_rows(points, 8, 1, &face);
    points.col(5) = Eigen::Vector3d(0.1, 0.2, 1.5 * face.cell);
    points.col(6) = Eigen::Vector3d(-3.1, 2.2, -2.5 * face.cell);
    const AllNearestSummary s = check_grid_exhaustive(points, 8);
    INFO("cell " << s.cell << " on the face alone " << face.cell);
    CHECK(s.widened >= 2);
  }
}

TEST_CASE("all_nearest: exact ties, coincident points, cell edges, tiny clouds",
          "[neighbour_index][grid]") {
  SECTION("integer grid in a scrambled order: many equal distances") {
    const Eigen::Matrix3Xd points = scrambled_lattice(107);
    check_grid_exhaustive(points, 8);
    check_grid_exhaustive(points, 6);
    check_grid_exhaustive(points, 26);
  }
  SECTION("coincident points: a pile larger than a block may hold, and small piles") {
    std::mt19937_64 rng(109);
    std::uniform_real_distribution<double> unit(0.0, 1.0);
    Eigen::Matrix3Xd points(3, 2000);
    for (Eigen::Index i = 0; i < points.cols(); ++i)
      points.col(i) = Eigen::Vector3d(unit(rng), unit(rng), unit(rng));
    for (Eigen::Index i = 100; i < 1900; i += 3) points.col(i) = Eigen::Vector3d(0.5, 0.5, 0.5);
    for (Eigen::Index i = 0; i < 5; ++i) points.col(1990 + i) = points.col(7);
    const AllNearestSummary s = check_grid_exhaustive(points, 8);
    CHECK(s.tree >= 600);  // the pile's cell holds more candidates than the cap
  }
  SECTION("k + 1 coincident points, and k + 1 points in all") {
    check_grid_exhaustive(Eigen::Vector3d(1.0, 2.0, 3.0).replicate(1, 9), 8);
    std::mt19937_64 rng(113);
    std::uniform_real_distribution<double> unit(-1.0, 1.0);
    Eigen::Matrix3Xd points(3, 9);
    for (Eigen::Index i = 0; i < 9; ++i) points.col(i) = Eigen::Vector3d(unit(rng), unit(rng), unit(rng));
    check_grid_exhaustive(points, 8);
    check_grid_exhaustive(points.leftCols(2), 1);
  }
  SECTION("points exactly on the cells' edges") {
    // Half the points snapped down to multiples of the cell edge from the lowest corner. On a
    // uniform cloud the grid keeps its first cell edge, (volume x (k + 1) / 3 / n)^(1/3) of the
    // bounding box (about (k + 1) / 3 points per occupied cell), which snapping down does not
    // change; the test checks that it was the edge snapped to.
    std::mt19937_64 rng(127);
    std::uniform_real_distribution<double> unit(0.0, 10.0);
    const Eigen::Index n = 3000;
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i)
      points.col(i) = Eigen::Vector3d(unit(rng), unit(rng), 0.5 * unit(rng));
    points.col(0) = points.rowwise().minCoeff();
    points.col(1) = points.rowwise().maxCoeff();
    const Eigen::Vector3d corner = points.col(0), extent = points.col(1) - corner;
    const double cell = std::cbrt(extent(0) * extent(1) * extent(2) * 3.0 / static_cast<double>(n));
    for (Eigen::Index i = 2; i < n; i += 2)
      for (int a = 0; a < 3; ++a)
        points(a, i) = corner(a) + cell * std::floor((points(a, i) - corner(a)) / cell);
    const AllNearestSummary s = check_grid_exhaustive(points, 8);
    CHECK(s.cell == cell);
  }
  SECTION("a lattice shaken by 1e-9 and by 1e-6: distances distinct in double, equal or not "
          "in float") {
    // select_kept ranks the kept candidates by their distances rounded to float and falls
    // back to ordered insertion on a tie in float: at 1e-9 mm on a 1 mm lattice most ties
    // are float ties between distinct doubles (whose order the index must not decide), at
    // 1e-6 mm the floats mostly differ.
    for (const double shake : {1e-9, 1e-6}) {
      std::mt19937_64 rng(139);
      std::uniform_real_distribution<double> unit(-1.0, 1.0);
      Eigen::Matrix3Xd points = scrambled_lattice(149);
      for (Eigen::Index i = 0; i < points.cols(); ++i)
        for (int a = 0; a < 3; ++a) points(a, i) += shake * unit(rng);
      INFO("shaken by " << shake);
      check_grid_exhaustive(points, 8);
      check_grid_exhaustive(points, 5);
    }
  }
  SECTION("far from the origin: 1e6 mm") {
    std::mt19937_64 rng(131);
    std::uniform_real_distribution<double> unit(-1.0, 1.0);
    Eigen::Matrix3Xd points(3, 2000);
    for (Eigen::Index i = 0; i < points.cols(); ++i)
      points.col(i) = Eigen::Vector3d(1e6 + unit(rng), -1e6 + unit(rng), 1e6 + 0.01 * unit(rng));
    check_grid_exhaustive(points, 8);
  }
}

namespace {

/// How many of `rows` (every point's k nearest, input order) differ from the KD-tree's single
/// query, the reference on clouds too large for the exhaustive search of every point.
std::size_t rows_differing_from_tree(const Eigen::Matrix3Xd& points, std::size_t k,
                                     const std::vector<std::vector<std::uint32_t>>& rows) {
  const NeighbourIndex index(points, 2);
  NeighbourIndex::Query query(k);
  std::size_t differ = 0;
  for (Eigen::Index i = 0; i < points.cols(); ++i)
    differ += query.of_point(index, static_cast<std::size_t>(i)) == rows[static_cast<std::size_t>(i)] ? 0 : 1;
  return differ;
}

}  // namespace

TEST_CASE("all_nearest on a large scanned bore equals the KD-tree on one and two threads",
          "[neighbour_index][grid]") {
  const Eigen::Matrix3Xd points = scanned_bore(300000, 314, 0.1, 137);
  const std::size_t k = 8;
  AllNearestSummary summary, two_summary;
  const auto one = grid_rows(points, k, 1, &summary);
  // Two threads set the grid up in parallel (5 chunks of 2^16 points): the same cells.
  CHECK(grid_rows(points, k, 2, &two_summary) == one);
  CHECK(two_summary.cell == summary.cell);
  CHECK(two_summary.certified == summary.certified);
  CHECK(summary.certified > 290000);
  CHECK(rows_differing_from_tree(points, k, one) == 0);
}

TEST_CASE("all_nearest with the previous point's guess widened and the wider blocks bounded by "
          "the narrower block's k-th distance: the exhaustive search's neighbours",
          "[neighbour_index][grid]") {
  // A point whose guess (the previous point's k-th distance plus 25 %) holds fewer than k
  // candidates has it widened in proportion to the shortfall, at most twice, before the
  // previous point's k + 1 nearest (or no bound) decide; a point the 3x3x3 block does not
  // certify is searched in the 5x5x5 (7x7x7) block only among the candidates within the
  // 3x3x3 (5x5x5) block's k-th distance, not among all. Both replace unbounded or looser
  // selections; the neighbours must stay the definition's. Here the rows of a scanned bore
  // are alternately 0.05 and 0.4 mm apart (points 0.1 mm apart along a row), so consecutive
  // points' k-th distances differ several-fold, and every 37th point stands off the surface
  // by 0.15 to 0.6 mm, beyond the 3x3x3 block's reach but within the 7x7x7 block's.
  Eigen::Matrix3Xd points = scanned_bore(3000, 314, 0.1, 173);
  std::mt19937_64 rng(179);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const Eigen::Index row = i / 314;
    points(2, i) = -0.05 * static_cast<double>((row + 1) / 2) - 0.4 * static_cast<double>(row / 2);
    if (i % 37 != 0) continue;
    const Eigen::Vector2d radial =
        (points.col(i).head<2>() - Eigen::Vector2d(40.0, 25.0)).normalized();
    points.col(i).head<2>() += (0.15 + 0.45 * unit(rng)) * radial;
  }
  const AllNearestSummary s = check_grid_exhaustive(points, 8);
  INFO("cell " << s.cell << ", certified " << s.certified << ", widened " << s.widened
               << ", tree " << s.tree);
  CHECK(s.widened >= 20);  // the bounded wider blocks answer points
  CHECK(s.tree == 0);  // none left to the tree: a bound too tight would send them there
  check_grid_exhaustive(points, 3);
  check_grid_exhaustive(points, 20);
}

TEST_CASE("all_nearest on two dense clusters 10 m apart: a grid box of more than 2^32 cells",
          "[neighbour_index][grid]") {
  // The cell edge shrinks from the bounding box's guess by at most 8 per trial, two trials:
  // clusters far apart then leave thousands of cells along each axis, and cell keys of more
  // than 32 bits (sorted with the input indices apart, not packed in one word). The reference
  // is the KD-tree's single query, itself checked against the exhaustive search above.
  std::mt19937_64 rng(151);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  Eigen::Matrix3Xd points(3, 1 << 17);
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const double corner = i % 2 == 0 ? 0.0 : 1e4;
    points.col(i) = Eigen::Vector3d(corner + unit(rng), corner + unit(rng), corner + unit(rng));
  }
  const std::size_t k = 8;
  AllNearestSummary summary;
  const auto one = grid_rows(points, k, 1, &summary);
  CHECK(grid_rows(points, k, 2) == one);
  const Eigen::Vector3d extent = points.rowwise().maxCoeff() - points.rowwise().minCoeff();
  INFO("cell " << summary.cell);
  CHECK((extent / summary.cell).prod() > std::ldexp(1.0, 32));
  CHECK(rows_differing_from_tree(points, k, one) == 0);
}

TEST_CASE("all_nearest refuses what it cannot answer", "[neighbour_index][grid]") {
  const Eigen::Matrix3Xd points = Eigen::Matrix3Xd::Random(3, 20);
  const auto ignore = [](std::size_t, std::size_t, const std::uint32_t*, const std::uint32_t*) {};
  CHECK_THROWS_AS(all_nearest(points, 0, 1, ignore), std::invalid_argument);
  CHECK_THROWS_AS(all_nearest(points, 20, 1, ignore), std::invalid_argument);
}

TEST_CASE("compact_within keeps the slots the one-at-a-time loop keeps, in the same order",
          "[neighbour_index][grid]") {
  // References: the loop it replaced (compact_within_serial, all_nearest's keep_within before
  // the four-a-step form) and the definition itself, every j with d[j] <= bound in increasing
  // order (an IEEE comparison, false for a NaN; common practice). Values drawn from a few
  // levels so that many equal the bound exactly, with NaNs (the query's own slot) and
  // infinities; every length 0 to 67 covers each remainder of the four-a-step loop.
  std::mt19937_64 random(20261204);
  const double levels[] = {0.0, 1e-300, 0.25, 0.5, 0.5, 1.0, 2.0, 1e300,
                           std::numeric_limits<double>::infinity(),
                           std::numeric_limits<double>::quiet_NaN()};
  const double bounds[] = {-1.0, 0.0, 0.25, 0.5, 0.7, 1.0, 1e300,
                           std::numeric_limits<double>::infinity(),
                           std::numeric_limits<double>::quiet_NaN()};
  std::size_t cases = 0, kept_some = 0, kept_all = 0;
  for (int trial = 0; trial < 40; ++trial)
    for (std::size_t m = 0; m < 68; ++m) {
      std::vector<double> d(m);
      for (double& v : d) v = levels[random() % std::size(levels)];
      if (trial % 3 == 1)  // continuous values too, as the screen's distances are
        for (double& v : d) v = std::ldexp(static_cast<double>(random() >> 11), -53);
      for (const double bound : bounds) {
        std::vector<std::uint32_t> fast(m + detail::compact_slack, 7u), serial(m, 7u);
        const std::size_t n_fast = detail::compact_within(d.data(), m, bound, fast.data());
        const std::size_t n_serial =
            detail::compact_within_serial(d.data(), 0, m, bound, serial.data());
        std::vector<std::uint32_t> definition;
        for (std::size_t j = 0; j < m; ++j)
          if (d[j] <= bound) definition.push_back(static_cast<std::uint32_t>(j));
        INFO("m " << m << ", bound " << bound << ", trial " << trial);
        REQUIRE(n_fast == n_serial);
        REQUIRE(n_fast == definition.size());
        fast.resize(n_fast);
        serial.resize(n_serial);
        CHECK(fast == serial);
        CHECK(fast == definition);
        ++cases;
        kept_some += n_fast > 0 && n_fast < m ? 1 : 0;
        kept_all += m > 0 && n_fast == m ? 1 : 0;
      }
    }
  // The cases exercise partial and full selections, not only empty ones.
  CHECK(cases == 40 * 68 * std::size(bounds));
  CHECK(kept_some > cases / 4);
  CHECK(kept_all > 0);
}

TEST_CASE("distances_within: the same distances, bit for bit, and slots as the loops it replaced",
          "[neighbour_index][grid]") {
  // Reference: the one-at-a-time loops all_nearest ran before (squared_distance per candidate,
  // then compact_within_serial), and the definition of the slots (every j with d[j] <= bound
  // in increasing order). Candidates around the query at scales from 1e-9 to 1e6 mm (so that
  // the sums round), coincident with it, and with one NaN coordinate (the query's own slot,
  // as all_nearest marks it); the AVX2 path is checked where this processor has it (reported).
  std::mt19937_64 random(4122026);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  const bool avx2 = detail::distances_within_uses_avx2();
  WARN("AVX2 path " << (avx2 ? "checked" : "not available on this processor"));
  std::size_t cases = 0, kept_some = 0;
  for (int trial = 0; trial < 60; ++trial)
    for (std::size_t m = 0; m < 70; m += 1 + static_cast<std::size_t>(trial % 3)) {
      const double scale = std::pow(10.0, -9 + trial % 16);
      const double q[3] = {1e3 * unit(random), 1e3 * unit(random), unit(random)};
      std::vector<double> x(m), y(m), z(m);
      for (std::size_t j = 0; j < m; ++j) {
        x[j] = q[0] + scale * unit(random);
        y[j] = q[1] + scale * unit(random);
        z[j] = q[2] + scale * unit(random);
        if (random() % 7 == 0) x[j] = q[0], y[j] = q[1], z[j] = q[2];
      }
      if (m > 0) x[random() % m] = std::numeric_limits<double>::quiet_NaN();
      std::vector<double> reference(m);
      for (std::size_t j = 0; j < m; ++j)
        reference[j] = detail::squared_distance(q, x[j], y[j], z[j]);
      std::vector<double> sorted = reference;
      std::sort(sorted.begin(), sorted.end());  // NaN placement irrelevant: a middle value
      const double bounds[] = {0.0, m > 0 ? sorted[m / 2] : 1.0, scale * scale,
                               std::numeric_limits<double>::infinity()};
      for (const double bound : bounds) {
        std::vector<std::uint32_t> want(m, 0u);
        want.resize(detail::compact_within_serial(reference.data(), 0, m, bound, want.data()));
        std::vector<std::uint32_t> definition;
        for (std::size_t j = 0; j < m; ++j)
          if (reference[j] <= bound) definition.push_back(static_cast<std::uint32_t>(j));
        REQUIRE(want == definition);
        using Path = std::size_t (*)(const double*, const double*, const double*, const double*,
                                     std::size_t, double, double*, std::uint32_t*);
        std::vector<Path> paths = {&detail::distances_within, &detail::distances_within_sse2};
#if defined(CYLZONE_HAVE_AVX2_PATH)
        if (avx2) paths.push_back(&detail::distances_within_avx2);
#endif
        for (std::size_t path = 0; path < paths.size(); ++path) {
          std::vector<double> d(m, -1.0);
          std::vector<std::uint32_t> got(m + detail::compact_slack, 7u);
          got.resize(paths[path](q, x.data(), y.data(), z.data(), m, bound, d.data(), got.data()));
          INFO("path " << path << ", m " << m << ", trial " << trial << ", bound " << bound);
          CHECK(got == want);
          bool same_bits = true;
          for (std::size_t j = 0; j < m; ++j)
            same_bits = same_bits && (std::memcmp(&d[j], &reference[j], sizeof(double)) == 0 ||
                                      (std::isnan(d[j]) && std::isnan(reference[j])));
          CHECK(same_bits);
        }
        ++cases;
        kept_some += !want.empty() && want.size() + 1 < m ? 1 : 0;
      }
    }
  CHECK(kept_some > cases / 4);
}
