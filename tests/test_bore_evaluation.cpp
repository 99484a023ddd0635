// evaluate_bore on synthetic bores whose every figure is known in closed form:
//  * three-lobed cylinders (tests/support/reference_data.hpp, the Chebyshev shortcut of the
//    null-space method of ISO 10360-6 test sets; Forbes & Minh 2012): the generating cylinder is
//    at once the least-squares, minimum-zone (cylindricity 2 eps) and both mating envelopes
//    (radius r - eps inscribed, r + eps circumscribed), so the toleranced axis is the known one;
//    and an odd number of lobes gives every two-point size 2r exactly (a fact of roundness
//    measurement: two-point measurement does not see odd lobing; common practice);
//  * circles with known centres on a symmetrically bent axis, so the least-squares axis is
//    parallel to the bend's chord and the section centres are the generated ones;
//  * position, perpendicularity, bonus and virtual condition from their definitions
//    (ASME Y14.5-2018; ISO 1101:2017; ISO 2692:2021 -- clause numbers from memory), evaluated
//    here directly on the generating geometry, not with the library's helpers.

#include <catch2/catch.hpp>
#include <algorithm>
#include <cstdio>

#include <Eigen/Geometry>
#include <cmath>
#include <limits>
#include <random>

#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/core/errors.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;
using cylzone::testing::direction_from_angles;
using cylzone::testing::make_lobed_cylinder;

namespace {

/// The decided verdict of the characteristics of `r` whose id starts with "<bore>/<prefix>"
/// (decide/bore_characteristics.hpp), combined; empty when there is none.
std::optional<Verdict> verdict_of(const BoreResult& r, const std::string& prefix) {
  std::vector<Characteristic> group;
  for (const Characteristic& c : bore_characteristics(r))
    if (c.id.rfind(r.id + "/" + prefix, 0) == 0) group.push_back(c);
  if (group.empty()) return std::nullopt;
  return combine(group);
}

std::string size_reason_of(const BoreResult& r) { return size_reason(bore_characteristics(r), r.id); }

constexpr double pi = 3.14159265358979323846;
constexpr double deg = pi / 180.0;
/// Agreement required with the closed forms, mm (measured: within 1e-13 mm on these sets).
constexpr double agreement = 1e-11;

PlanTolerance tolerance(double t, MaterialCondition condition = MaterialCondition::rfs) {
  PlanTolerance p;
  p.tolerance = t;
  p.condition = condition;
  p.datums = {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::rmb}};
  return p;
}

/// The actual axis' deviation from the true-position axis at height h along the zone's w, by
/// its definition: the point of the axis in the plane perpendicular to w at height h, in (u, v)
/// of a zone frame built here independently.
struct TrueAxis {
  Eigen::Vector3d origin;  // true position on A
  Eigen::Vector3d u, v, w;
};

TrueAxis true_axis(const Eigen::Vector2d& basic, const Eigen::Vector3d& w) {
  TrueAxis t;
  t.origin = Eigen::Vector3d(basic.x(), basic.y(), 0.0);
  t.w = w.normalized();
  t.u = (Eigen::Vector3d::UnitX() - t.w.x() * t.w).normalized();
  t.v = t.w.cross(t.u);
  return t;
}

Eigen::Vector2d deviation_at(const Axis& actual, const TrueAxis& zone, double h) {
  const Eigen::Vector3d d = actual.direction.normalized();
  const double s = (h - (actual.point - zone.origin).dot(zone.w)) / d.dot(zone.w);
  const Eigen::Vector3d p = actual.point + s * d - zone.origin;
  return {p.dot(zone.u), p.dot(zone.v)};
}

/// Distance of the two axes' lines at the given heights of the first one (0 when identical).
double axis_gap(const Axis& a, const Axis& b, double h1, double h2) {
  double worst = 0.0;
  for (double h : {h1, h2}) {
    const Eigen::Vector3d p = a.point + h * a.direction.normalized();
    const Eigen::Vector3d q = p - b.point;
    worst = std::max(worst, (q - q.dot(b.direction.normalized()) * b.direction.normalized()).norm());
  }
  return worst;
}

/// Radial distance of every point from the true-position axis (for the virtual condition).
std::pair<double, double> radial_extremes(const Eigen::Matrix3Xd& p, const TrueAxis& zone) {
  double lo = 1e300, hi = 0.0;
  for (Eigen::Index i = 0; i < p.cols(); ++i) {
    const Eigen::Vector3d q = p.col(i) - zone.origin;
    const double r = (q - q.dot(zone.w) * zone.w).norm();
    lo = std::min(lo, r);
    hi = std::max(hi, r);
  }
  return {lo, hi};
}

struct LobedBore {
  PlanBore plan;
  Axis axis;  // generating axis (datum frame)
  double radius = 6.005;
  double eps = 0.002;
  Eigen::Matrix3Xd points;
};

/// A perpendicular bore P1 at (40, 25): deviation e0 at z = 0, tilted by `tilt` rad at azimuth
/// 30 degrees, three-lobed, 9 levels of 24 points from z ~ -1 to -63.
LobedBore tilted_bore(double tilt = 3e-4) {
  LobedBore b;
  b.plan.id = "P1";
  b.plan.basic_location = {40.0, 25.0};
  b.plan.size = SizeLimits{12.000, 12.018};
  b.axis.point = Eigen::Vector3d(40.006, 24.995, 0.0);
  b.axis.direction =
      Eigen::Vector3d(std::tan(tilt) * std::cos(30 * deg), std::tan(tilt) * std::sin(30 * deg), 1.0)
          .normalized();
  b.points = make_lobed_cylinder(b.axis, b.radius, -1.0, -63.0, 9, 24, b.eps, 11.0).points;
  return b;
}

/// tilted_bore() toleranced over its full depth: position 0.025 at MMC to A|B, perpendicularity
/// 0.015 to A.
LobedBore toleranced_bore() {
  LobedBore b = tilted_bore();
  b.plan.depth_top = 0.0;
  b.plan.depth_bottom = -64.0;
  b.plan.position = tolerance(0.025, MaterialCondition::mmc);
  b.plan.perpendicularity = tolerance(0.015);
  b.plan.perpendicularity->datums = {{'A', MaterialBoundary::rmb}};
  return b;
}

}  // namespace

TEST_CASE("tilted, offset, lobed bore: every figure against its closed form", "[bore_evaluation]") {
  LobedBore b = toleranced_bore();
  b.plan.cylindricity = 0.005;
  const BoreResult r = evaluate_bore(b.plan, b.points);
  const TrueAxis zone = true_axis(b.plan.basic_location, Eigen::Vector3d::UnitZ());

  // Fits: the generating cylinder (reference-set construction, see file comment).
  CHECK(axis_gap(r.least_squares.axis, b.axis, -1.0, -63.0) < agreement);
  CHECK(axis_gap(r.mating_envelope.axis, b.axis, -1.0, -63.0) < agreement);
  CHECK(r.axis_method == BoreAxisMethod::mating_envelope);
  CHECK(axis_gap(r.axis, b.axis, -1.0, -63.0) < agreement);

  // Size.
  CHECK(r.size.least_squares == Approx(2 * b.radius).margin(agreement));
  CHECK(r.size.mating_envelope == Approx(2 * (b.radius - b.eps)).margin(agreement));
  CHECK(r.size.minimum_material_envelope == Approx(2 * (b.radius + b.eps)).margin(agreement));
  // A cylinder constrained in orientation cannot be larger than the free one.
  CHECK(r.size.related_mating_envelope <= r.size.mating_envelope + 1e-12);
  CHECK(r.size.two_point_min == Approx(2 * b.radius).margin(1e-10));
  CHECK(r.size.two_point_max == Approx(2 * b.radius).margin(1e-10));
  CHECK(r.size.two_point_count == 9 * 12);  // 12 diametral pairs per level of 24 points
  REQUIRE(verdict_of(r, "size/").has_value());
  CHECK(*verdict_of(r, "size/") == Verdict::conforms);  // 12.006 >= 12.000, 12.010 <= 12.018
  CHECK(r.sections.size() == 9);

  // Form.
  CHECK(r.form.cylindricity == Approx(2 * b.eps).margin(agreement));
  REQUIRE(verdict_of(r, "cylindricity").has_value());
  CHECK(*verdict_of(r, "cylindricity") == Verdict::conforms);

  // Position over the full depth: 2 max |e| at the ends of [-64, 0].
  REQUIRE(r.position.has_value());
  const PositionResult& p = *r.position;
  const Eigen::Vector2d e_top = deviation_at(b.axis, zone, 0.0);
  const Eigen::Vector2d e_bottom = deviation_at(b.axis, zone, -64.0);
  CHECK((e_top - Eigen::Vector2d(0.006, -0.005)).norm() < 1e-14);  // the construction itself
  CHECK(p.range_top == 0.0);
  CHECK(p.range_bottom == -64.0);
  CHECK_FALSE(p.projected);
  CHECK((p.top.offset - e_top).norm() < agreement);
  CHECK((p.bottom.offset - e_bottom).norm() < agreement);
  CHECK(p.top.diameter() == Approx(2 * e_top.norm()).margin(agreement));
  CHECK(p.value == Approx(2 * std::max(e_top.norm(), e_bottom.norm())).margin(agreement));
  CHECK(p.worst.height == -64.0);
  // Bonus at MMC from the unrelated mating envelope: 12.006 - 12.000.
  CHECK(p.bonus == Approx(2 * (b.radius - b.eps) - 12.000).margin(agreement));
  CHECK(p.allowed == Approx(0.025 + p.bonus).margin(1e-15));
  CHECK(p.value > p.allowed);
  CHECK(*verdict_of(r, "position") == Verdict::does_not_conform);
  // Where the axis leaves the allowed zone: |e0 + h k| = allowed / 2, solved here directly.
  {
    const Eigen::Vector2d k = (e_bottom - e_top) / -64.0;
    const double R = 0.5 * p.allowed;
    const double A = k.squaredNorm(), B = e_top.dot(k), C = e_top.squaredNorm() - R * R;
    const double h = (-B - std::sqrt(B * B - A * C)) / A;  // the root below the mouth
    REQUIRE(p.leaves_zone_at.has_value());
    CHECK(*p.leaves_zone_at == Approx(h).margin(1e-5));
    CHECK(*p.leaves_zone_at < 0.0);
    CHECK(*p.leaves_zone_at > -64.0);
  }

  // Perpendicularity over the bore's own depth: 64 tan(tilt).
  REQUIRE(r.perpendicularity.has_value());
  CHECK(r.perpendicularity->value == Approx(64.0 * std::tan(3e-4)).margin(agreement));
  CHECK(r.perpendicularity->bonus == 0.0);  // RFS
  CHECK(*verdict_of(r, "perpendicularity") == Verdict::does_not_conform);  // 0.0192 > 0.015

  // Tilt.
  CHECK(r.tilt.angle_rad == Approx(3e-4).margin(1e-10));
  CHECK(r.tilt.azimuth_deg == Approx(30.0).margin(1e-5));

  // Virtual condition at MMC: 12.000 - 0.025; the largest cylinder on the true-position axis
  // clear of every point.
  REQUIRE(r.virtual_condition.has_value());
  CHECK(r.virtual_condition->boundary == Approx(11.975).margin(1e-15));
  CHECK(r.virtual_condition->on_true_position);
  CHECK(r.virtual_condition->condition == MaterialCondition::mmc);
  CHECK(r.virtual_condition->clearance == Approx(2 * radial_extremes(b.points, zone).first).margin(1e-12));
  CHECK(*verdict_of(r, "virtual-condition") == (r.virtual_condition->clearance >= 11.975
                                             ? Verdict::conforms : Verdict::does_not_conform));

  // The plan's depth reaches 1 mm beyond each end of a 62 mm probed band: normal (a probe
  // cannot reach the edges), not warned about.
  for (const std::string& w : r.warnings) CHECK(w.find("extrapolated") == std::string::npos);

  // Judged over 90 mm from a 62 mm band: the extrapolation (28 mm) is warned about, with both
  // ends' lengths.
  LobedBore deep = b;
  deep.plan.depth_bottom = -90.0;
  const BoreResult d = evaluate_bore(deep.plan, deep.points);
  std::string warning;
  for (const std::string& w : d.warnings)
    if (w.find("extrapolated") != std::string::npos) warning = w;
  INFO(warning);
  CHECK(warning.find(" mm above and 2") != std::string::npos);  // ~1 mm above, ~27 mm below
  char span[32];
  std::snprintf(span, sizeof span, "band of %.4f mm", d.probed_top - d.probed_bottom);
  CHECK(warning.find(span) != std::string::npos);
}

TEST_CASE("probed extent is the default range; a bore inside its zone conforms", "[bore_evaluation]") {
  LobedBore b = tilted_bore(1e-4);
  b.plan.position = tolerance(0.030);
  const BoreResult r = evaluate_bore(b.plan, b.points);
  const TrueAxis zone = true_axis(b.plan.basic_location, Eigen::Vector3d::UnitZ());
  double zmin = 1e300, zmax = -1e300;
  for (Eigen::Index i = 0; i < b.points.cols(); ++i) {
    zmin = std::min(zmin, b.points(2, i));
    zmax = std::max(zmax, b.points(2, i));
  }
  CHECK(r.probed_top == Approx(zmax).margin(1e-12));
  CHECK(r.probed_bottom == Approx(zmin).margin(1e-12));
  REQUIRE(r.position.has_value());
  CHECK(r.position->range_top == r.probed_top);
  CHECK(r.position->range_bottom == r.probed_bottom);
  const double expected = 2 * std::max(deviation_at(b.axis, zone, zmax).norm(),
                                        deviation_at(b.axis, zone, zmin).norm());
  CHECK(r.position->value == Approx(expected).margin(agreement));
  CHECK(r.position->bonus == 0.0);
  CHECK(*verdict_of(r, "position") == Verdict::conforms);
  CHECK_FALSE(r.position->leaves_zone_at.has_value());
  CHECK_FALSE(r.virtual_condition.has_value());  // RFS
  for (const std::string& w : r.warnings) CHECK(w.find("extrapolated") == std::string::npos);
}

TEST_CASE("the least-squares axis method uses the least-squares cylinder", "[bore_evaluation]") {
  LobedBore b = tilted_bore();
  b.plan.axis = BoreAxisMethod::least_squares;
  b.plan.position = tolerance(0.05);
  const BoreResult r = evaluate_bore(b.plan, b.points);
  CHECK(axis_gap(r.axis, r.least_squares.axis, -1.0, -63.0) < 1e-12);
  CHECK(axis_gap(r.axis, b.axis, -1.0, -63.0) < agreement);
}

TEST_CASE("projected tolerance zone: position on the axis' extension above A", "[bore_evaluation]") {
  // ASME Y14.5-2018 projected tolerance zone (from memory): the zone of height P lies above A,
  // out of the material, and the straight axis is extended into it.
  LobedBore b = tilted_bore();
  b.plan.position = tolerance(0.050, MaterialCondition::mmc);
  b.plan.position->projected_height = 15.0;
  b.plan.perpendicularity = tolerance(0.030);
  const BoreResult r = evaluate_bore(b.plan, b.points);
  const TrueAxis zone = true_axis(b.plan.basic_location, Eigen::Vector3d::UnitZ());
  REQUIRE(r.position.has_value());
  const PositionResult& p = *r.position;
  CHECK(p.projected);
  CHECK(p.range_top == 15.0);
  CHECK(p.range_bottom == 0.0);
  const Eigen::Vector2d at_top = deviation_at(b.axis, zone, 15.0);
  const Eigen::Vector2d at_a = deviation_at(b.axis, zone, 0.0);
  CHECK(p.value == Approx(2 * std::max(at_top.norm(), at_a.norm())).margin(agreement));
  CHECK((p.top.offset - at_top).norm() < agreement);
  CHECK(p.top.height == 15.0);
  // Perpendicularity keeps the bore's own (probed) depth.
  REQUIRE(r.perpendicularity.has_value());
  CHECK(r.perpendicularity->range_top == r.probed_top);
  CHECK(r.perpendicularity->value ==
        Approx((r.probed_top - r.probed_bottom) * std::tan(3e-4)).margin(agreement));
  // Virtual condition in the projected zone: the extended mating envelope against the boundary
  // cylinder on the true axis, worst at an end of the zone: 2 (R - max |e|).
  REQUIRE(r.virtual_condition.has_value());
  CHECK(r.virtual_condition->clearance ==
        Approx(2 * (b.radius - b.eps) - 2 * std::max(at_top.norm(), at_a.norm())).margin(agreement));
  CHECK(r.virtual_condition->boundary == Approx(12.000 - 0.050).margin(1e-15));

  // The median line has no extension: refused.
  b.plan.axis = BoreAxisMethod::median_line;
  CHECK_THROWS_WITH(evaluate_bore(b.plan, b.points),
                    Contains("bore P1") && Contains("projected"));
}

TEST_CASE("projected zone standing on a face above A: [from, from + height]", "[bore_evaluation]") {
  // A zone projected from the top of a boss 6 mm above A (ASME Y14.5-2018 projected tolerance
  // zone, from memory for the clause: it starts at the face the mating part rests on). Position
  // from its definition: twice the largest distance of the extended straight axis from the true
  // axis, at an end of the zone (the distance is convex along a straight line).
  LobedBore b = tilted_bore();
  b.plan.position = tolerance(0.025, MaterialCondition::mmc);
  b.plan.position->projected_height = 15.0;
  b.plan.position->projected_from = 6.0;
  const BoreResult r = evaluate_bore(b.plan, b.points);
  REQUIRE(r.position.has_value());
  const PositionResult& p = *r.position;
  CHECK(p.projected);
  CHECK(p.range_bottom == 6.0);
  CHECK(p.range_top == 21.0);
  const TrueAxis zone = true_axis(b.plan.basic_location, Eigen::Vector3d::UnitZ());
  const Eigen::Vector2d at_top = deviation_at(b.axis, zone, 21.0);
  const Eigen::Vector2d at_face = deviation_at(b.axis, zone, 6.0);
  CHECK(p.value == Approx(2 * std::max(at_top.norm(), at_face.norm())).margin(agreement));
  // The same zone from A would end lower and read less: the axis leans away with height.
  b.plan.position->projected_from.reset();
  const BoreResult from_a = evaluate_bore(b.plan, b.points);
  CHECK(from_a.position->range_top == 15.0);
  CHECK(from_a.position->value < p.value);
}

TEST_CASE("median line on a bent axis: section centres, position, perpendicularity", "[bore_evaluation]") {
  // Circles of radius 5 with centres c(z) = basic + (dx - k (z - zm)^2, dy): symmetric about zm,
  // so the least-squares axis is parallel to z and the sections at the probed levels are the
  // circles' own planes; each least-squares circle is then the generating circle. The bow is
  // largest mid-depth: the mouth is inside the zone, the middle outside.
  const Eigen::Vector2d basic(-30.0, 12.5);
  const double dx = 0.009, dy = -0.004, zm = -32.0, k = 0.012 / (30.0 * 30.0), radius = 5.0;
  std::vector<double> levels;
  for (int j = 0; j <= 10; ++j) levels.push_back(-2.0 - 6.0 * j);
  const int per_level = 24;
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(levels.size()) * per_level);
  std::vector<Eigen::Vector2d> expected_offset;
  Eigen::Index col = 0;
  for (double z : levels) {
    const Eigen::Vector2d off(dx - k * (z - zm) * (z - zm), dy);
    expected_offset.push_back(off);
    for (int i = 0; i < per_level; ++i) {
      const double a = 7.0 * deg + 2 * pi * i / per_level;
      points.col(col++) << basic.x() + off.x() + radius * std::cos(a),
          basic.y() + off.y() + radius * std::sin(a), z;
    }
  }
  PlanBore plan;
  plan.id = "M1";
  plan.basic_location = basic;
  plan.axis = BoreAxisMethod::median_line;
  plan.position = tolerance(0.016);
  plan.perpendicularity = tolerance(0.010);
  const BoreResult r = evaluate_bore(plan, points);
  REQUIRE(r.sections.size() == levels.size());
  REQUIRE(r.position.has_value());
  const PositionResult& p = *r.position;
  REQUIRE(p.section_centres.size() == levels.size());
  // From the top down, each centre is the generated one.
  double largest = 0.0;
  for (std::size_t j = 0; j < levels.size(); ++j) {
    CHECK(p.section_centres[j].height == Approx(levels[j]).margin(1e-9));
    CHECK((p.section_centres[j].offset - expected_offset[j]).norm() < 1e-9);
    largest = std::max(largest, expected_offset[j].norm());
  }
  CHECK(p.value == Approx(2 * largest).margin(1e-9));
  CHECK(p.value == Approx(2 * std::hypot(dx, dy)).margin(1e-9));
  // Perpendicularity: the centres lie on a line in x from dx - 0.012 to dx: the smallest
  // enclosing circle is that segment's.
  REQUIRE(r.perpendicularity.has_value());
  CHECK(r.perpendicularity->value == Approx(0.012).margin(1e-9));
  CHECK(*verdict_of(r, "perpendicularity") == Verdict::does_not_conform);
  // The top centre is inside the 0.016 zone, the middle one outside: the median line leaves the
  // zone between two sections, where the straight segment joining them crosses radius 0.008.
  REQUIRE(p.leaves_zone_at.has_value());
  const double h = *p.leaves_zone_at;
  std::size_t j = 1;
  while (j < levels.size() && levels[j] > h) ++j;
  REQUIRE(j < levels.size());
  CHECK(expected_offset[0].norm() < 0.008);
  CHECK(expected_offset[j - 1].norm() <= 0.008);
  CHECK(expected_offset[j].norm() > 0.008);
  const double f = (h - levels[j - 1]) / (levels[j] - levels[j - 1]);
  const Eigen::Vector2d at = expected_offset[j - 1] + f * (expected_offset[j] - expected_offset[j - 1]);
  CHECK(at.norm() == Approx(0.008).margin(1e-9));
  CHECK(*verdict_of(r, "position") == Verdict::does_not_conform);
  // The reported axis is the centres' least-squares line: parallel to z here.
  CHECK(r.tilt.angle_rad < 1e-9);
}

TEST_CASE("a scanned cloud without levels is cut into slabs", "[bore_evaluation]") {
  // 20,000 points on an exact cylinder at random angles and evenly spread heights: no probed
  // levels, so sections are slabs of the section gap.
  std::mt19937_64 rng(5150);
  std::uniform_real_distribution<double> angle(0.0, 2 * pi);
  Axis axis;
  axis.point = Eigen::Vector3d(-12.0, 8.004, 0.0);
  axis.direction = Eigen::Vector3d(2e-4, -1e-4, 1.0).normalized();
  const double radius = 4.0;
  const Eigen::Vector3d u = axis.direction.cross(Eigen::Vector3d::UnitX()).normalized();
  const Eigen::Vector3d v = axis.direction.cross(u);
  const int n = 20000;
  Eigen::Matrix3Xd points(3, n);
  for (int i = 0; i < n; ++i) {
    const double t = -0.5 - 39.5 * i / (n - 1.0), a = angle(rng);
    points.col(i) = axis.point + t * axis.direction + radius * (std::cos(a) * u + std::sin(a) * v);
  }
  PlanBore plan;
  plan.id = "S1";
  plan.basic_location = {-12.0, 8.0};
  plan.size = SizeLimits{7.995, 8.010};
  plan.position = tolerance(0.020, MaterialCondition::mmc);
  BoreEvaluationOptions options;
  options.section_gap = 0.5;
  const BoreResult r = evaluate_bore(plan, points, options);
  CHECK(r.sections.size() == 79);  // ceil(39.5 / 0.5)
  const TrueAxis zone = true_axis(plan.basic_location, Eigen::Vector3d::UnitZ());
  REQUIRE(r.position.has_value());
  const double expected = 2 * std::max(deviation_at(axis, zone, r.probed_top).norm(),
                                       deviation_at(axis, zone, r.probed_bottom).norm());
  CHECK(r.position->value == Approx(expected).margin(1e-11));
  CHECK(r.size.mating_envelope == Approx(8.0).margin(1e-11));
  CHECK(r.form.cylindricity < 1e-11);
  // Two-point sizes: chords between points whose directions differ from opposite by at most
  // half the mean spacing pi / n_section, so 2r cos(pi / (2 n)) <= size <= 2r.
  std::size_t fewest = n;
  for (const SectionCircle& s : r.sections)
    fewest = std::min<std::size_t>(fewest, static_cast<std::size_t>(s.circle.residuals.values.size()));
  CHECK(r.size.two_point_count > 79 * 50);
  CHECK(r.size.two_point_max <= 2 * radius + 1e-9);
  CHECK(r.size.two_point_min >= 2 * radius * std::cos(pi / (2.0 * fewest)) - 1e-9);

  // The plan's section gap for the bore (the `section_gap` plan key) overrides the option's:
  // slabs of 1 mm over the 39.5 mm probed span.
  plan.section_gap = 1.0;
  const BoreResult coarse = evaluate_bore(plan, points, options);
  CHECK(coarse.sections.size() == 40);  // ceil(39.5 / 1.0)
}

TEST_CASE("a dense bore: blocks of boundary points, residuals released above the cap",
          "[bore_evaluation]") {
  // 20,000 points on an exact cylinder of radius 4 about the true-position axis shifted by
  // (3, -4) um: more boundary points than one 4096-column block. References: the closed-form
  // radial distances of the moved points (the frame motion written out), and the same bore
  // evaluated with the residuals kept.
  std::mt19937_64 rng(8191);
  std::uniform_real_distribution<double> angle(0.0, 2 * pi);
  const Eigen::Vector2d basic(20.0, -15.0);
  const Eigen::Vector3d centre(20.003, -15.004, 0.0);
  const double radius = 4.0;
  const int n = 20000;
  Eigen::Matrix3Xd points(3, n);
  for (int i = 0; i < n; ++i) {
    const double t = -0.5 - 39.5 * i / (n - 1.0), a = angle(rng);
    points.col(i) = centre + Eigen::Vector3d(radius * std::cos(a), radius * std::sin(a), t);
  }
  PlanBore plan;
  plan.id = "D1";
  plan.basic_location = basic;
  plan.size = SizeLimits{7.995, 8.010};
  plan.depth_top = 0.0;
  plan.depth_bottom = -40.0;
  plan.position = tolerance(0.020, MaterialCondition::mmc);
  const BoreResult r = evaluate_bore(plan, points);
  REQUIRE(r.virtual_condition.has_value());
  REQUIRE(r.boundary_points.cols() == n);  // every point lies within the depth
  CHECK(r.least_squares.residuals.values.size() == n);  // 20,000 <= the default cap

  FrameMotion motion;
  motion.shift = {0.002, -0.001};
  motion.rotation_rad = 1.5e-4;
  const VirtualConditionResult vc = virtual_condition_after_frame_motion(r, motion);
  // Closed form: the moved frame's coordinates R^T (p - s); the true-position axis is the
  // vertical line through `basic` there, so a point's radial distance is a 2D distance.
  const double c = std::cos(motion.rotation_rad), sn = std::sin(motion.rotation_rad);
  double nearest = std::numeric_limits<double>::infinity();
  for (int i = 0; i < n; ++i) {
    const double x = points(0, i) - motion.shift.x(), y = points(1, i) - motion.shift.y();
    nearest = std::min(nearest, std::hypot(c * x + sn * y - basic.x(), -sn * x + c * y - basic.y()));
  }
  REQUIRE_FALSE(vc.conservative);
  CHECK(vc.clearance == Approx(2.0 * nearest).margin(1e-12));

  // Above the cap the values go and nothing else changes.
  BoreEvaluationOptions lean;
  lean.residuals_kept_up_to = 1000;
  const BoreResult released = evaluate_bore(plan, points, lean);
  for (const CylinderFit* f : {&released.least_squares, &released.mating_envelope,
                               &released.related_envelope, &released.minimum_material,
                               &released.minimum_zone})
    CHECK(f->residuals.values.size() == 0);
  for (const SectionCircle& section : released.sections)
    CHECK(section.circle.residuals.values.size() == 0);
  CHECK(released.least_squares.residuals.rms == r.least_squares.residuals.rms);
  CHECK(released.minimum_zone.residuals.form == r.minimum_zone.residuals.form);
  CHECK(released.position->value == r.position->value);
  CHECK(released.size.mating_envelope == r.size.mating_envelope);
  CHECK(released.size.two_point_min == r.size.two_point_min);
  CHECK(released.form.cylindricity == r.form.cylindricity);
  CHECK(released.virtual_condition->clearance == r.virtual_condition->clearance);
  CHECK(released.surface_map.mean == r.surface_map.mean);
  CHECK(virtual_condition_after_frame_motion(released, motion).clearance == vc.clearance);
}

TEST_CASE("a dense bore's residual values go as soon as they are read: the suspect-point warning "
          "and every figure as with the values kept",
          "[bore_evaluation][memory]") {
  // A bore with one point pushed 20 um inward: the innermost point, so a contact of both mating
  // envelopes (test_stray_points.cpp shows why, independently of the screen). Evaluated with
  // the values kept (624 points, below the default cap) and released above a cap of 100: the
  // envelopes' contacts, read from the values before they go, must name the same point.
  PlanBore plan;
  plan.id = "P1";
  plan.basic_location = {40.0, 25.0};
  plan.size = SizeLimits{12.000, 12.018};
  plan.position = tolerance(0.030, MaterialCondition::mmc);
  Axis axis;
  axis.point = Eigen::Vector3d(40.006, 24.995, 0.0);
  axis.direction = direction_from_angles(0.3e-3 * 180.0 / 3.14159265358979, 30.0);
  testing::ReferenceSet set = make_lobed_cylinder(axis, 6.005, -1.0, -61.0, 13, 48, 0.002, 11.0);
  const Eigen::Index spike = 7 * 48 + 29;
  set.points.col(spike) -= 0.020 * set.normals.col(spike);
  BoreEvaluationOptions released_options;
  released_options.residuals_kept_up_to = 100;
  const BoreResult kept = evaluate_bore(plan, set.points);
  const BoreResult released = evaluate_bore(plan, set.points, released_options);
  REQUIRE(kept.least_squares.residuals.values.size() == set.points.cols());
  for (const CylinderFit* f : {&released.least_squares, &released.mating_envelope,
                               &released.related_envelope, &released.minimum_material,
                               &released.minimum_zone})
    CHECK(f->residuals.values.size() == 0);
  REQUIRE(released.stray_points.points.size() == 1);
  CHECK(released.stray_points.points[0].index == static_cast<std::size_t>(spike));
  const std::string number = "#" + std::to_string(spike + 1);
  const auto warning = std::find_if(released.warnings.begin(), released.warnings.end(),
                                    [](const std::string& w) {
                                      return w.find("suspect point") != std::string::npos;
                                    });
  REQUIRE(warning != released.warnings.end());
  CHECK_THAT(*warning, Contains("point " + number + " is a contact of the actual and the related "
                                "mating envelopes"));
  CHECK(released.warnings == kept.warnings);
  CHECK(released.size.mating_envelope == kept.size.mating_envelope);
  CHECK(released.size.related_mating_envelope == kept.size.related_mating_envelope);
  CHECK(released.size.minimum_material_envelope == kept.size.minimum_material_envelope);
  CHECK(released.size.two_point_min == kept.size.two_point_min);
  CHECK(released.size.two_point_max == kept.size.two_point_max);
  CHECK(released.form.cylindricity == kept.form.cylindricity);
  CHECK(released.position->value == kept.position->value);
  CHECK(released.virtual_condition->clearance == kept.virtual_condition->clearance);
  CHECK(released.boundary_points == kept.boundary_points);
  CHECK(released.surface_map.mean == kept.surface_map.mean);
  CHECK(released.surface_map.count == kept.surface_map.count);
  CHECK(released.probed_top == kept.probed_top);
  CHECK(released.probed_bottom == kept.probed_bottom);
}

TEST_CASE("an inclined bore is evaluated along its nominal direction", "[bore_evaluation]") {
  const Eigen::Vector3d nominal = direction_from_angles(15.0, 120.0);
  const Eigen::Vector2d basic(10.0, -5.0);
  const TrueAxis zone = true_axis(basic, nominal);
  // Actual axis: through the true position + (0.004, 0.002) in (u, v) on A, tilted 2e-4 rad.
  Axis axis;
  axis.point = zone.origin + 0.004 * zone.u + 0.002 * zone.v;
  axis.direction = (nominal + 2e-4 * zone.u).normalized();
  const Eigen::Matrix3Xd points = make_lobed_cylinder(axis, 3.0, -2.0, -30.0, 8, 18, 0.001).points;
  PlanBore plan;
  plan.id = "I1";
  plan.basic_location = basic;
  plan.nominal_direction = nominal;
  plan.depth_top = 0.0;
  plan.depth_bottom = -25.0;  // frame z; heights along w are z / w_z
  plan.position = tolerance(0.03);
  const BoreResult r = evaluate_bore(plan, points);
  REQUIRE(r.position.has_value());
  const double h_bottom = -25.0 / nominal.z();
  CHECK(r.position->range_bottom == Approx(h_bottom).epsilon(1e-15));
  const Eigen::Vector2d e0 = deviation_at(axis, zone, 0.0), e1 = deviation_at(axis, zone, h_bottom);
  CHECK((r.position->top.offset - e0).norm() < agreement);
  CHECK((r.position->bottom.offset - e1).norm() < agreement);
  CHECK(r.position->value == Approx(2 * std::max(e0.norm(), e1.norm())).margin(agreement));
  CHECK(r.tilt.angle_rad == Approx(std::atan(2e-4)).margin(1e-10));
  // A nominal direction given into the material is the same axis.
  plan.nominal_direction = -nominal;
  const BoreResult reversed = evaluate_bore(plan, points);
  CHECK(reversed.position->value == Approx(r.position->value).margin(1e-12));
  CHECK(reversed.zone.basis.col(2).dot(nominal) == Approx(1.0));
}

TEST_CASE("size verdict per Rule #1 names the failed limit", "[bore_evaluation]") {
  LobedBore b = tilted_bore();
  b.plan.position = tolerance(0.05);
  // Mating envelope 12.006 below a lower limit of 12.008.
  b.plan.size = SizeLimits{12.008, 12.030};
  BoreResult r = evaluate_bore(b.plan, b.points);
  REQUIRE(verdict_of(r, "size/").has_value());
  CHECK(*verdict_of(r, "size/") == Verdict::does_not_conform);
  CHECK_THAT(size_reason_of(r), Contains("actual mating envelope 12.0060") && Contains("lower limit 12.0080"));
  CHECK(*verdict_of(r, "size/lower") == Verdict::does_not_conform);
  CHECK(*verdict_of(r, "size/upper") == Verdict::conforms);
  // Two-point size 12.010 above an upper limit of 12.009 (the mating envelope is fine).
  b.plan.size = SizeLimits{12.000, 12.009};
  r = evaluate_bore(b.plan, b.points);
  CHECK(*verdict_of(r, "size/") == Verdict::does_not_conform);
  CHECK_THAT(size_reason_of(r), Contains("largest two-point size 12.0100") && Contains("upper limit 12.0090"));
  CHECK(size_reason_of(r).find("mating") == std::string::npos);
  CHECK(*verdict_of(r, "size/lower") == Verdict::conforms);
  CHECK(*verdict_of(r, "size/upper") == Verdict::does_not_conform);
  // No limits: no verdict.
  b.plan.size.reset();
  r = evaluate_bore(b.plan, b.points);
  CHECK_FALSE(verdict_of(r, "size/").has_value());
  CHECK_FALSE(verdict_of(r, "size/lower").has_value());
}

TEST_CASE("LMC: bonus from the minimum material envelope, boundary around the bore", "[bore_evaluation]") {
  LobedBore b = tilted_bore();
  b.plan.position = tolerance(0.040, MaterialCondition::lmc);
  const BoreResult r = evaluate_bore(b.plan, b.points);
  const TrueAxis zone = true_axis(b.plan.basic_location, Eigen::Vector3d::UnitZ());
  REQUIRE(r.position.has_value());
  // LMC 12.018 - minimum material envelope 12.014.
  CHECK(r.position->bonus == Approx(12.018 - 2 * (b.radius + b.eps)).margin(agreement));
  REQUIRE(r.virtual_condition.has_value());
  CHECK(r.virtual_condition->boundary == Approx(12.018 + 0.040).margin(1e-15));
  CHECK(r.virtual_condition->condition == MaterialCondition::lmc);
  // The smallest cylinder on the true-position axis containing every point.
  CHECK(r.virtual_condition->clearance == Approx(2 * radial_extremes(b.points, zone).second).margin(1e-12));
  CHECK(*verdict_of(r, "virtual-condition") == Verdict::conforms);
}

TEST_CASE("perpendicularity at MMC alone: its boundary is free in location", "[bore_evaluation]") {
  // The bore's axis wanders w = 62 sin(3e-4) = 0.0186 across the probed depth. A cylinder
  // perpendicular to A inside it has, in the sections at both ends, its axis at least w/2 from
  // one section's centre, and in that section the lobed profile r + eps cos(3 theta) (sampled
  // every 15 degrees) lies within r + eps - (w/2) cos(7.5 deg) of it on the near side: its
  // diameter is at most 2 (r + eps) - w cos(7.5 deg). Placed mid-wander it clears every point
  // by r - eps - w/2: its diameter is at least 2 (r - eps) - w. (Geometry of the construction.)
  const double wander = 62.0 * std::sin(3e-4);
  for (double t : {0.002, 0.030}) {
    LobedBore b = tilted_bore();
    b.plan.position = tolerance(0.1);
    b.plan.perpendicularity = tolerance(t, MaterialCondition::mmc);
    b.plan.perpendicularity->datums = {{'A', MaterialBoundary::rmb}};
    const BoreResult r = evaluate_bore(b.plan, b.points);
    REQUIRE(r.perpendicularity.has_value());
    CHECK(r.perpendicularity->bonus == Approx(2 * (b.radius - b.eps) - 12.000).margin(agreement));
    REQUIRE(r.virtual_condition.has_value());
    CHECK_FALSE(r.virtual_condition->on_true_position);
    CHECK(r.virtual_condition->boundary == Approx(12.000 - t).margin(1e-15));
    CHECK(r.virtual_condition->clearance == Approx(r.size.related_mating_envelope).margin(1e-15));
    // Margin 1e-5: second-order terms (w^2 / 4r ~ 1.4e-5 is kept explicitly) and the 3e-4
    // tilt of the section planes against A.
    CHECK(r.size.related_mating_envelope <= 2 * (b.radius + b.eps) - wander * std::cos(7.5 * deg) +
                                                wander * wander / (4 * (b.radius - b.eps)) + 1e-5);
    CHECK(r.size.related_mating_envelope >= 2 * (b.radius - b.eps) - wander - 1e-5);
    // 11.998 is above the upper bound 11.9956; 11.970 below the lower bound 11.9874.
    CHECK(*verdict_of(r, "virtual-condition") == (t < 0.01 ? Verdict::does_not_conform : Verdict::conforms));
  }
}

TEST_CASE("moving the frame: re-evaluation equals evaluating the moved points", "[bore_evaluation]") {
  // Independent path: transform the points into the moved frame and evaluate again.
  LobedBore b = tilted_bore();
  b.plan.depth_top = 0.0;
  b.plan.depth_bottom = -64.0;
  b.plan.position = tolerance(0.025, MaterialCondition::mmc);
  const BoreResult r = evaluate_bore(b.plan, b.points);
  FrameMotion motion;
  motion.shift = {0.004, -0.003};
  motion.rotation_rad = 2e-4;
  const Eigen::Matrix3d rt =
      Eigen::AngleAxisd(motion.rotation_rad, Eigen::Vector3d::UnitZ()).toRotationMatrix().transpose();
  const Eigen::Matrix3Xd moved =
      rt * (b.points.colwise() - Eigen::Vector3d(motion.shift.x(), motion.shift.y(), 0.0));
  const BoreResult again = evaluate_bore(b.plan, moved);
  const PositionResult p = position_after_frame_motion(r, b.plan, motion);
  CHECK(p.value == Approx(again.position->value).margin(agreement));
  CHECK((p.top.offset - again.position->top.offset).norm() < agreement);
  CHECK((p.bottom.offset - again.position->bottom.offset).norm() < agreement);
  CHECK(p.bonus == r.position->bonus);
  // The identity motion changes nothing.
  const PositionResult same = position_after_frame_motion(r, b.plan, FrameMotion{});
  CHECK(same.value == Approx(r.position->value).margin(1e-15));
  // Shifting the frame onto the axis' mouth removes the offset there.
  FrameMotion onto;
  onto.shift = r.position->top.offset;
  CHECK(position_after_frame_motion(r, b.plan, onto).top.offset.norm() < 1e-12);
}

TEST_CASE("moved_to_frame equals evaluating the points in the other frame", "[bore_evaluation]") {
  // The sensitivity study's shortcut (fits are invariant under rigid motions) against the
  // direct path: move the points and evaluate again. A re-associated datum A differs by
  // micro-radians and micrometres.
  const Eigen::Matrix3d rotation =
      (Eigen::AngleAxisd(2e-5, Eigen::Vector3d::UnitX()) * Eigen::AngleAxisd(-1e-5, Eigen::Vector3d::UnitY()) *
       Eigen::AngleAxisd(3e-5, Eigen::Vector3d::UnitZ()))
          .toRotationMatrix();
  const Eigen::Vector3d translation(0.001, -0.002, 0.003);
  for (BoreAxisMethod method : {BoreAxisMethod::mating_envelope, BoreAxisMethod::median_line}) {
    LobedBore b = tilted_bore();
    b.plan.axis = method;
    b.plan.depth_top = 0.0;
    b.plan.depth_bottom = -64.0;
    b.plan.position = tolerance(0.025, MaterialCondition::mmc);
    b.plan.perpendicularity = tolerance(0.015);
    const BoreResult r = evaluate_bore(b.plan, b.points);
    const BoreResult moved = moved_to_frame(r, b.plan, rotation, translation);
    const Eigen::Matrix3Xd points = (rotation * b.points).colwise() + translation;
    const BoreResult direct = evaluate_bore(b.plan, points);
    CHECK(moved.position->value == Approx(direct.position->value).margin(1e-11));
    CHECK((moved.position->bottom.offset - direct.position->bottom.offset).norm() < 1e-11);
    CHECK(moved.perpendicularity->value == Approx(direct.perpendicularity->value).margin(1e-11));
    CHECK(moved.tilt.angle_rad == Approx(direct.tilt.angle_rad).margin(1e-12));
    CHECK(moved.position->bonus == Approx(direct.position->bonus).margin(1e-12));
    // The probed extent is estimated from the axis: within the radius times the change of tilt.
    CHECK(moved.probed_top == Approx(direct.probed_top).margin(6.1 * 3e-5));
    // The motion really changed the figures.
    CHECK(std::abs(moved.position->value - r.position->value) > 1e-4);
  }
}

TEST_CASE("degenerate bores: FitError naming the bore", "[bore_evaluation]") {
  PlanBore plan;
  plan.id = "P9";
  plan.position = tolerance(0.02);
  Eigen::Matrix3Xd few(3, 4);
  few << 1, 0, -1, 0, 0, 1, 0, -1, -1, -2, -3, -4;
  CHECK_THROWS_WITH(evaluate_bore(plan, few), Contains("bore P9: "));
  // All points in one cross-section.
  Eigen::Matrix3Xd ring(3, 24);
  for (int i = 0; i < 24; ++i) ring.col(i) << 5 * std::cos(i * pi / 12), 5 * std::sin(i * pi / 12), -3.0;
  CHECK_THROWS_AS(evaluate_bore(plan, ring), FitError);
  CHECK_THROWS_WITH(evaluate_bore(plan, ring), Contains("bore P9: "));
  // A nominal direction parallel to A.
  LobedBore b = tilted_bore();
  b.plan.nominal_direction = Eigen::Vector3d::UnitX();
  CHECK_THROWS_WITH(evaluate_bore(b.plan, b.points), Contains("bore P1") && Contains("parallel to datum plane A"));
  // A median line over a depth range with no section in it.
  b = tilted_bore();
  b.plan.axis = BoreAxisMethod::median_line;
  b.plan.position = tolerance(0.05);
  b.plan.depth_top = -20.0;
  b.plan.depth_bottom = -21.0;
  CHECK_THROWS_WITH(evaluate_bore(b.plan, b.points), Contains("bore P1") && Contains("no section"));
  // Non-finite coordinates.
  b = tilted_bore();
  b.points(1, 7) = std::numeric_limits<double>::quiet_NaN();
  CHECK_THROWS_WITH(evaluate_bore(b.plan, b.points), Contains("bore P1") && Contains("non-finite"));
}

TEST_CASE("verdict names", "[bore_evaluation]") {
  CHECK(verdict_name(Verdict::conforms) == "conforms");
  CHECK(verdict_name(Verdict::does_not_conform) == "does not conform");
}

TEST_CASE("two-point sizes of a densely probed bore are the exhaustive pairing's",
          "[bore][size][scan]") {
  // Reference: the definition applied by exhaustive search (O(n^2) per section, independent of
  // the library's sorted sweep): in each section every point is paired with the point whose
  // direction about the section's least-squares centre is nearest the opposite of its own,
  // accepted within half the mean angular spacing; each pair once; its size the distance of
  // the two points projected on the section plane. 12 levels of 1,500 points at random angles
  // (no two alike), 2 um of radial noise, a tilted axis: the sweep's wrap past 2 pi and its
  // rejections are exercised at every level.
  std::mt19937_64 rng(5151);
  std::uniform_real_distribution<double> angle(0.0, 2 * pi), noise(-0.002, 0.002);
  Axis axis;
  axis.point = Eigen::Vector3d(31.0, -7.0, 0.0);
  axis.direction = Eigen::Vector3d(3e-4, 2e-4, 1.0).normalized();
  const Eigen::Vector3d u = axis.direction.cross(Eigen::Vector3d::UnitX()).normalized();
  const Eigen::Vector3d v = axis.direction.cross(u);
  const int levels = 12, per_level = 1500;
  Eigen::Matrix3Xd points(3, levels * per_level);
  for (int l = 0; l < levels; ++l)
    for (int k = 0; k < per_level; ++k) {
      const double a = angle(rng), r = 5.0 + noise(rng);
      points.col(l * per_level + k) = axis.point + (-1.0 - 3.0 * l) * axis.direction +
                                      r * (std::cos(a) * u + std::sin(a) * v);
    }
  PlanBore plan;
  plan.id = "D1";
  plan.basic_location = {31.0, -7.0};
  plan.size = SizeLimits{9.99, 10.01};
  const BoreResult r = evaluate_bore(plan, points, BoreEvaluationOptions{});
  REQUIRE(r.sections.size() == static_cast<std::size_t>(levels));

  // Exhaustive pairing, level by level (a level's points are its section's: the section whose
  // centre is nearest the level's place on the generating axis).
  const Eigen::Vector3d w = r.least_squares.axis.direction;
  const Eigen::Vector3d p = (w.cross(Eigen::Vector3d::UnitY())).normalized(), q = w.cross(p);
  double lo = std::numeric_limits<double>::infinity(), hi = 0.0;
  std::size_t count = 0;
  for (int l = 0; l < levels; ++l) {
    const Eigen::Vector3d on_axis = axis.point + (-1.0 - 3.0 * l) * axis.direction;
    Eigen::Vector3d centre = r.sections.front().circle.centre;
    for (const SectionCircle& s : r.sections)
      if ((s.circle.centre - on_axis).norm() < (centre - on_axis).norm()) centre = s.circle.centre;
    REQUIRE((centre - on_axis).norm() < 0.01);
    std::vector<Eigen::Vector2d> uv;
    std::vector<double> at;
    for (int k = 0; k < per_level; ++k) {
      const Eigen::Vector3d d = points.col(l * per_level + k) - centre;
      uv.emplace_back(d.dot(p), d.dot(q));
      at.push_back(std::atan2(uv.back().y(), uv.back().x()));
    }
    const double acceptance = 0.5 * (2.0 * pi / per_level) * (1.0 + 1e-9);
    std::vector<int> partner(per_level, -1);
    for (int i = 0; i < per_level; ++i) {
      int best = -1;
      double best_gap = std::numeric_limits<double>::infinity();
      for (int j = 0; j < per_level; ++j) {
        double gap = std::abs(std::remainder(at[j] - at[i] - pi, 2.0 * pi));
        if (gap < best_gap) {
          best_gap = gap;
          best = j;
        }
      }
      if (best != i && best_gap <= acceptance) partner[i] = best;
    }
    for (int i = 0; i < per_level; ++i) {
      const int j = partner[i];
      if (j < 0 || (j < i && partner[j] == i)) continue;
      const double size = (uv[i] - uv[j]).norm();
      lo = std::min(lo, size);
      hi = std::max(hi, size);
      ++count;
    }
  }
  CHECK(count > static_cast<std::size_t>(levels * per_level / 4));  // the reference pairs many
  CHECK(r.size.two_point_count == count);
  CHECK(r.size.two_point_min == Approx(lo).margin(1e-12));
  CHECK(r.size.two_point_max == Approx(hi).margin(1e-12));
}

TEST_CASE("evaluate_bore takes the preparation's least-squares cylinder only when it is the "
          "refit's, and then reports the refit's figures bit for bit",
          "[bore_evaluation][prepare]") {
  // Reference: the same evaluation with the preparation's cylinder removed, which fits it again
  // (the computation the passed-on fit replaces): every fit, figure and decided value agrees
  // bit for bit. A cylinder of other options is not taken: a marked one shows which is used.
  const LobedBore b = toleranced_bore();
  const BoreEvaluationOptions options;
  PointCloud cloud;
  cloud.points = b.points;
  const PreparedFeature prepared =
      prepare_feature(FeatureKind::bore, cloud, bore_prepare_options(b.plan, options));
  REQUIRE(prepared.least_squares);
  PreparedFeature refitted = prepared;
  refitted.least_squares.reset();
  const BoreResult passed = evaluate_bore(BoreInput{b.plan, prepared}, options);
  const BoreResult refit = evaluate_bore(BoreInput{b.plan, refitted}, options);
  CHECK(passed.least_squares.axis.point == refit.least_squares.axis.point);
  CHECK(passed.least_squares.axis.direction == refit.least_squares.axis.direction);
  CHECK(passed.least_squares.radius == refit.least_squares.radius);
  CHECK(passed.least_squares.residuals.values == refit.least_squares.residuals.values);
  CHECK(passed.least_squares.summary.message == refit.least_squares.summary.message);
  CHECK(passed.mating_envelope.axis.point == refit.mating_envelope.axis.point);
  CHECK(passed.axis.point == refit.axis.point);
  CHECK(passed.axis.direction == refit.axis.direction);
  CHECK(passed.size.least_squares == refit.size.least_squares);
  CHECK(passed.warnings == refit.warnings);
  const std::vector<Characteristic> p = bore_characteristics(passed);
  const std::vector<Characteristic> r = bore_characteristics(refit);
  REQUIRE(p.size() == r.size());
  for (std::size_t k = 0; k < p.size(); ++k) {
    INFO(p[k].id);
    CHECK(p[k].id == r[k].id);
    CHECK(p[k].value == r[k].value);
    CHECK(p[k].verdict == r[k].verdict);
  }

  // A marked cylinder: taken with the evaluation's own options, refitted with others.
  PreparedFeature marked = prepared;
  marked.least_squares->fit.radius += 1.0;
  CHECK(evaluate_bore(BoreInput{b.plan, marked}, options).least_squares.radius ==
        refit.least_squares.radius + 1.0);
  marked.least_squares->options.axis_hint = Eigen::Vector3d::UnitX();
  CHECK(evaluate_bore(BoreInput{b.plan, marked}, options).least_squares.radius ==
        refit.least_squares.radius);
  marked.least_squares->options = bore_prepare_options(b.plan, options).fit;
  marked.least_squares->options.step_tolerance *= 2.0;
  CHECK(evaluate_bore(BoreInput{b.plan, marked}, options).least_squares.radius ==
        refit.least_squares.radius);
}
