// Cross-sections of a bore and their least-squares circles (ISO 17450-3: extracted median line
// from least-squares circle centres in sections perpendicular to the associated axis), against
// null-space reference circles with known centres (Forbes & Minh 2012, as for ISO 10360-6).
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <random>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/sections.hpp"
#include "evaluate/detail/height_order.hpp"
#include "fit/detail/section_members.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using namespace cylzone::testing;
using Catch::Matchers::Contains;

namespace {

// A bore whose median line bends: level k has its own known centre and radius.
struct BentBore {
  Axis axis;
  std::vector<double> heights;
  std::vector<Eigen::Vector3d> centres;
  std::vector<double> radii;
  Eigen::Matrix3Xd points;
};

BentBore make_bent_bore() {
  BentBore bore;
  bore.axis = {{2500.0, -1800.0, 3200.0}, direction_from_angles(10.0, 70.0)};
  const Eigen::Vector3d u = bore.axis.direction.unitOrthogonal();
  const Eigen::Vector3d v = bore.axis.direction.cross(u);
  bore.heights = {2.0, 8.0, 14.0, 20.0, 26.0};
  std::vector<ReferenceSet> levels;
  Eigen::Index total = 0;
  for (std::size_t k = 0; k < bore.heights.size(); ++k) {
    const double h = bore.heights[k];
    bore.centres.push_back(bore.axis.point + h * bore.axis.direction + 0.003 * std::sin(h) * u +
                           0.002 * std::cos(h) * v);
    bore.radii.push_back(7.5 + 0.001 * static_cast<double>(k));
    levels.push_back(make_circle_reference(bore.centres.back(), bore.axis.direction,
                                           bore.radii.back(), 15.0 * k, 360.0, 36, 0.001, 50 + k));
    total += levels.back().points.cols();
  }
  bore.points.resize(3, total);
  Eigen::Index at = 0;
  for (const ReferenceSet& level : levels) {
    bore.points.middleCols(at, level.points.cols()) = level.points;
    at += level.points.cols();
  }
  return bore;
}

}  // namespace

TEST_CASE("find_section_levels clusters the probed levels", "[sections]") {
  const BentBore bore = make_bent_bore();
  const std::vector<double> levels = find_section_levels(bore.points, bore.axis, 1.0);
  REQUIRE(levels.size() == bore.heights.size());
  for (std::size_t k = 0; k < levels.size(); ++k) CHECK(levels[k] == Approx(bore.heights[k]).margin(1e-9));
  // A gap larger than the level spacing merges everything into one level at the mean height.
  const std::vector<double> one = find_section_levels(bore.points, bore.axis, 10.0);
  REQUIRE(one.size() == 1);
  CHECK(one[0] == Approx(14.0).margin(1e-9));
  CHECK(find_section_levels(Eigen::Matrix3Xd(3, 0), bore.axis, 1.0).empty());
  CHECK_THROWS_WITH(find_section_levels(bore.points, bore.axis, 0.0), Contains("gap must be positive"));
}

TEST_CASE("section circles reproduce the known centres of a bent bore", "[sections][least_squares]") {
  const BentBore bore = make_bent_bore();
  const SectionsResult result = fit_sections_least_squares(bore.points, bore.axis, bore.heights);
  REQUIRE(result.sections.size() == bore.heights.size());
  CHECK(result.summary.warnings.empty());
  CHECK(result.summary.point_count == static_cast<std::size_t>(bore.points.cols()));
  CHECK_THAT(result.summary.message, Contains("5 of 5 sections"));
  for (std::size_t k = 0; k < bore.heights.size(); ++k) {
    const SectionCircle& s = result.sections[k];
    CHECK(s.height == bore.heights[k]);
    CHECK((s.circle.centre - bore.centres[k]).norm() < 1e-9);
    CHECK(std::abs(s.circle.radius - bore.radii[k]) < 1e-9);
    CHECK(angle_between_lines(s.circle.normal, bore.axis.direction) < 1e-15);
    CHECK(s.circle.normal.dot(bore.axis.direction) > 0.0);  // normals follow the axis
    CHECK((s.circle.centre - bore.axis.point).dot(bore.axis.direction) ==
          Approx(bore.heights[k]).margin(1e-9));
  }
}

TEST_CASE("sections without the summary's account: the same circles and warnings",
          "[sections][least_squares]") {
  // FitOptions::result_messages off (a Monte Carlo trial) leaves the summary's one-line account
  // empty and changes nothing else: every circle compared by its bits with the account on,
  // with skipped sections (too few points, an empty level) among fitted ones.
  const BentBore bore = make_bent_bore();
  std::vector<double> heights = bore.heights;
  heights.insert(heights.begin() + 2, 11.0);  // between two levels: no points
  heights.push_back(100.0);                   // beyond the bore
  SectionOptions on;
  on.half_thickness = 0.5;
  SectionOptions off = on;
  off.fit.result_messages = false;
  const SectionsResult a = fit_sections_least_squares(bore.points, bore.axis, heights, on);
  const SectionsResult b = fit_sections_least_squares(bore.points, bore.axis, heights, off);
  CHECK_THAT(a.summary.message, Contains("5 of 7 sections"));
  CHECK(b.summary.message.empty());
  CHECK(a.summary.warnings == b.summary.warnings);
  CHECK(a.summary.warnings.size() == 2);
  CHECK(a.summary.point_count == b.summary.point_count);
  CHECK(a.summary.iterations == b.summary.iterations);
  REQUIRE(a.sections.size() == 5);
  REQUIRE(b.sections.size() == a.sections.size());
  const auto same = [](const auto& x, const auto& y) {
    return std::memcmp(x.data(), y.data(), sizeof(double) * static_cast<std::size_t>(x.size())) == 0;
  };
  for (std::size_t k = 0; k < a.sections.size(); ++k) {
    const CircleFit& x = a.sections[k].circle;
    const CircleFit& y = b.sections[k].circle;
    CHECK(a.sections[k].height == b.sections[k].height);
    CHECK(same(x.centre, y.centre));
    CHECK(same(x.normal, y.normal));
    CHECK(std::memcmp(&x.radius, &y.radius, sizeof(double)) == 0);
    CHECK(same(x.residuals.values, y.residuals.values));
    CHECK(x.residuals.values.size() == 36);
  }
}

TEST_CASE("section membership, placement and skipped sections", "[sections]") {
  const BentBore bore = make_bent_bore();
  SectionOptions options;
  options.half_thickness = 0.5;
  SECTION("a section height between planes takes the points within the half thickness") {
    const SectionsResult r = fit_sections_least_squares(bore.points, bore.axis, {2.4, 7.4}, options);
    REQUIRE(r.sections.size() == 1);  // 7.4 is 0.6 from the level at 8
    CHECK(r.sections[0].height == 2.4);
    // The level-2 circle, moved along the axis into the plane at 2.4.
    CHECK((r.sections[0].circle.centre - (bore.centres[0] + 0.4 * bore.axis.direction)).norm() < 1e-9);
    REQUIRE(r.summary.warnings.size() == 1);
    CHECK_THAT(r.summary.warnings[0], Contains("section at height 7.4000 mm skipped") &&
                                          Contains("0 points"));
  }
  SECTION("too few points") {
    options.min_points = 40;
    const SectionsResult r = fit_sections_least_squares(bore.points, bore.axis, {8.0}, options);
    CHECK(r.sections.empty());
    REQUIRE(r.summary.warnings.size() == 1);
    CHECK_THAT(r.summary.warnings[0], Contains("36 points") && Contains("at least 40"));
    CHECK_THAT(r.summary.message, Contains("0 of 1"));
  }
  SECTION("a section whose points cannot fix a circle is skipped with the reason") {
    Eigen::Matrix3Xd wall(3, 6);
    for (int i = 0; i < 6; ++i)
      wall.col(i) = bore.axis.point + bore.axis.direction.unitOrthogonal() * i;
    const SectionsResult r = fit_sections_least_squares(wall, bore.axis, {0.0}, options);
    CHECK(r.sections.empty());
    REQUIRE(r.summary.warnings.size() == 1);
    CHECK_THAT(r.summary.warnings[0], Contains("straight line"));
  }
  SECTION("bad options") {
    options.half_thickness = 0.0;
    CHECK_THROWS_WITH(fit_sections_least_squares(bore.points, bore.axis, {8.0}, options),
                      Contains("half thickness must be positive"));
    Axis no_direction = bore.axis;
    no_direction.direction.setZero();
    CHECK_THROWS_AS(fit_sections_least_squares(bore.points, no_direction, {8.0}), FitError);
  }
}

namespace {
// The computation section_members replaces: every point tested against every section, in
// point order (each section's list increasing).
std::vector<std::vector<std::size_t>> members_by_direct_test(const std::vector<double>& t,
                                                             const std::vector<double>& heights,
                                                             double half) {
  std::vector<std::vector<std::size_t>> lists(heights.size());
  for (std::size_t k = 0; k < heights.size(); ++k)
    for (std::size_t i = 0; i < t.size(); ++i)
      if (std::abs(t[i] - heights[k]) <= half) lists[k].push_back(i);
  return lists;
}

std::vector<std::vector<std::size_t>> as_lists(const detail::SectionMembers& m) {
  std::vector<std::vector<std::size_t>> lists(m.start.size() - 1);
  for (std::size_t k = 0; k + 1 < m.start.size(); ++k)
    lists[k].assign(m.index.begin() + static_cast<std::ptrdiff_t>(m.start[k]),
                    m.index.begin() + static_cast<std::ptrdiff_t>(m.start[k + 1]));
  return lists;
}
}  // namespace

TEST_CASE("section membership by one search per point equals the test of every pair",
          "[sections]") {
  // Reference: the direct test |t - h| <= half of every point against every section (the loop
  // fit_sections_least_squares ran before), same lists in the same order.
  std::mt19937_64 rng(20261204);
  std::uniform_real_distribution<double> height(-30.0, 5.0);
  const auto check = [](const std::vector<double>& t, const std::vector<double>& heights,
                        double half) {
    const detail::SectionMembers m = detail::section_members(t.data(), t.size(), heights, half);
    REQUIRE(m.start.size() == heights.size() + 1);
    CHECK(as_lists(m) == members_by_direct_test(t, heights, half));
  };
  SECTION("slabs of a scan, points on the slab boundaries and sections overlapping") {
    for (int trial = 0; trial < 20; ++trial) {
      std::vector<double> t(5000);
      for (double& x : t) x = height(rng);
      // Evenly spaced slabs; half exactly half the spacing (boundary points in two sections)
      // or wider (overlap) or narrower (gaps).
      const double spacing = 35.0 / 23.0;
      std::vector<double> heights;
      for (int k = 0; k < 23; ++k) heights.push_back(-30.0 + (k + 0.5) * spacing);
      for (int k = 0; k < 23; ++k) t.push_back(heights[k] + 0.5 * spacing);  // on a boundary
      for (int k = 0; k < 23; ++k) t.push_back(std::nextafter(heights[k] - 0.5 * spacing, 0.0));
      const double half = (trial % 3 == 0 ? 0.5 : trial % 3 == 1 ? 0.9 : 0.2) * spacing;
      check(t, heights, half);
    }
  }
  SECTION("probed levels: unsorted and repeated heights, more than 8 (the search) and fewer") {
    std::vector<double> t;
    const std::vector<double> heights = {-4.0,  -12.0, -8.0, -12.0, 0.0, -8.0 + 1e-12,
                                         -20.0, -16.0, -16.0, 4.0, -2.0};
    for (double h : heights)
      for (int i = 0; i < 40; ++i) t.push_back(h + 1e-4 * (i - 20));
    std::shuffle(t.begin(), t.end(), rng);
    check(t, heights, 1e-3);
    check(t, heights, 2e-3);
    check(t, heights, 4.0);  // each point in several sections
    const std::vector<double> few(heights.begin(), heights.begin() + 6);
    check(t, few, 1e-3);
    check(t, few, 4.0);
  }
  SECTION("the direct test of a few sections: odd and even counts, boundaries, signed zeros") {
    // Up to 8 sections every pair is tested, two points at a time: every count of points from
    // 0 to 9 and 1001 (a last point alone), points exactly on a boundary and next to it.
    const std::vector<double> heights = {0.0, -5.0, 2.5, -0.0, 7.25, -5.0, 1e-300, 3.0};
    for (std::size_t m = 1; m <= heights.size(); ++m) {
      const std::vector<double> some(heights.begin(), heights.begin() + m);
      for (const std::size_t n : {0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 1001}) {
        std::vector<double> t(n);
        for (std::size_t i = 0; i < n; ++i) {
          const double base = some[i % m];
          t[i] = i % 5 == 0   ? base + 0.75
                 : i % 5 == 1 ? std::nextafter(base - 0.75, -1e9)
                 : i % 5 == 2 ? -0.0
                 : i % 5 == 3 ? 0.0
                              : height(rng);
        }
        check(t, some, 0.75);
        check(t, some, 0.0);
      }
    }
  }
  SECTION("non-finite heights, points or half thickness take the direct test") {
    const double inf = std::numeric_limits<double>::infinity();
    const double nan = std::numeric_limits<double>::quiet_NaN();
    const std::vector<double> t = {-inf, -3.0, 0.0, 2.0, inf, nan};
    check(t, {-3.0, inf, nan, -inf, 2.0}, 1.0);
    check(t, {-3.0, inf, -inf, 2.0}, inf);
    check({-3.0, 0.0, 2.0}, {-inf, 2.0, -3.0}, inf);
    check({-3.0, 0.0, 2.0}, {}, 1.0);
    check({}, {1.0, 2.0}, 1.0);
  }
}

TEST_CASE("a section's members one, two and four points at a time: the scalar test's",
          "[sections]") {
  // Reference: the test |t - h| <= half of every point in turn (the loop of the direct path
  // before it took points in lanes). Every lane width this processor runs, every point count
  // from 0 to 9 and 1001, points on and next to the boundaries, signed zeros, infinities and
  // NaN among the points, and zero, infinite and NaN half thicknesses.
  const double inf = std::numeric_limits<double>::infinity();
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::mt19937_64 rng(77);
  std::uniform_real_distribution<double> height(-3.0, 3.0);
  std::vector<detail::MemberLanes> widths = {detail::MemberLanes::scalar};
  if (detail::member_lanes() != detail::MemberLanes::scalar) widths.push_back(detail::MemberLanes::sse2);
  if (detail::member_lanes() == detail::MemberLanes::avx2) widths.push_back(detail::MemberLanes::avx2);
  int members = 0;
  for (const double h : {0.0, -0.0, 1.25, -inf, nan})
    for (const double half : {0.5, 0.0, inf, nan})
      for (const std::size_t n : {0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 1001}) {
        std::vector<double> t(n);
        for (std::size_t i = 0; i < n; ++i) {
          const double base = std::isfinite(h) ? h : 0.0;
          const double b = std::isfinite(half) ? half : 1.0;
          switch (i % 7) {
            case 0: t[i] = base + b; break;
            case 1: t[i] = std::nextafter(base - b, -inf); break;
            case 2: t[i] = -0.0; break;
            case 3: t[i] = i % 2 ? inf : -inf; break;
            case 4: t[i] = i % 3 ? nan : 0.0; break;
            default: t[i] = height(rng);
          }
        }
        std::vector<std::size_t> expected;
        for (std::size_t i = 0; i < n; ++i)
          if (std::abs(t[i] - h) <= half) expected.push_back(i);
        members += static_cast<int>(expected.size());
        for (const detail::MemberLanes lanes : widths) {
          std::vector<std::size_t> got = {7};  // appended after what the list holds
          detail::append_members(t.data(), n, h, half, lanes, got);
          INFO("h " << h << ", half " << half << ", n " << n << ", lanes "
                    << static_cast<int>(lanes));
          REQUIRE(got.size() == expected.size() + 1);
          CHECK(got.front() == 7);
          CHECK(std::equal(expected.begin(), expected.end(), got.begin() + 1));
        }
      }
  CHECK(members > 1000);  // the cases have members, not only empty lists
}

TEST_CASE("levels of heights already sorted equal find_section_levels' to the bit",
          "[sections]") {
  // Reference: find_section_levels, which computes the heights along the axis and sorts them.
  // The keys are the heights evaluate_bore computes (the same expression) sorted with their
  // index (evaluate/detail/height_order.hpp). Levels at zero height mix -0.0 and +0.0.
  std::mt19937_64 rng(99);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  for (const Axis& axis : {Axis{{0.0, 0.0, 0.0}, {0.0, 0.0, 1.0}},
                           Axis{{3.0, -2.0, 1.0}, {0.6, 0.0, 0.8}},
                           Axis{{3.0, -2.0, 1.0}, {0.0, -1.0, 0.0}}}) {
    Eigen::Matrix3Xd points(3, 4000);
    for (Eigen::Index i = 0; i < points.cols(); ++i) {
      const double level = static_cast<double>(i % 9 - 4) * 3.0;  // 9 levels, one at 0
      const Eigen::Vector3d across(unit(rng), unit(rng), unit(rng));
      const Eigen::Vector3d off = 8.0 * (across - across.dot(axis.direction) * axis.direction);
      const double jitter = i % 9 == 4 ? 0.0 : 0.01 * unit(rng);
      points.col(i) = axis.point + (level + jitter) * axis.direction + off;
    }
    REQUIRE(axis.direction / axis.direction.norm() == axis.direction);
    std::vector<double> heights(static_cast<std::size_t>(points.cols()));
    for (Eigen::Index i = 0; i < points.cols(); ++i)
      heights[static_cast<std::size_t>(i)] = axis.direction.dot(points.col(i) - axis.point);
    const std::vector<detail::HeightKey> keys = detail::order_by_height(heights);
    for (const double gap : {0.5, 2.0, 10.0}) {
      const std::vector<double> by_keys = detail::levels_of_sorted_heights(
          keys.size(), [&](std::size_t k) { return keys[k].height; }, gap);
      const std::vector<double> reference = find_section_levels(points, axis, gap);
      REQUIRE(by_keys.size() == reference.size());
      for (std::size_t k = 0; k < reference.size(); ++k) {
        CHECK(by_keys[k] == reference[k]);
        CHECK(std::signbit(by_keys[k]) == std::signbit(reference[k]));
      }
    }
  }
}
