// Probe-tip compensation (probe_compensation.hpp).
//
// References outside the code under test:
//  * exact geometry: points of a known cylinder or plane, their ball centres built here as
//    c + r n with n the known outward (free-space) normal (the ball-centre relation, common
//    practice). Compensation must give back the surface points, and the least-squares fits of
//    the compensated points the known element, to 1e-9 mm;
//  * reference sets with known least-squares solutions (null-space construction of ISO 10360-6
//    test sets, Forbes & Minh, Int. J. Metrol. Qual. Eng. 3(3), 2012): the cylinder Jacobian
//    does not depend on the radius, so the ball centres of such a set (offset along the known
//    normals) have the offset cylinder as their least-squares solution, and compensation along
//    the fitted normal must give back the set exactly.

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <stdexcept>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/prepare/prepare.hpp"
#include "cylzone/prepare/probe_compensation.hpp"
#include "expect_input_error.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using cylzone::testing::angle_between_lines;
using cylzone::testing::axis_distance_over_extent;
using cylzone::testing::expect_input_error;

namespace {

constexpr double pi = 3.14159265358979323846;

/// An ideal cylinder's surface points and their unit radial directions (away from the axis),
/// `levels` sections of `per_level` points between heights t0 and t1.
struct Sampled {
  Eigen::Matrix3Xd points;
  Eigen::Matrix3Xd radial;
};

Sampled sample_cylinder(const Axis& axis, double radius, double t0, double t1, int levels,
                        int per_level) {
  const Eigen::Vector3d w = axis.direction.normalized();
  const Eigen::Vector3d u = w.unitOrthogonal();
  const Eigen::Vector3d v = w.cross(u);
  Sampled s;
  s.points.resize(3, levels * per_level);
  s.radial.resize(3, levels * per_level);
  int k = 0;
  for (int l = 0; l < levels; ++l) {
    const double t = t0 + (t1 - t0) * l / (levels - 1);
    for (int j = 0; j < per_level; ++j, ++k) {
      const double theta = 0.37 * l + 2.0 * pi * j / per_level;  // levels start apart
      const Eigen::Vector3d e = std::cos(theta) * u + std::sin(theta) * v;
      s.points.col(k) = axis.point + t * w + radius * e;
      s.radial.col(k) = e;
    }
  }
  return s;
}

PointCloud cloud(const Eigen::Matrix3Xd& points, const Eigen::Matrix3Xd& vectors = {}) {
  PointCloud c;
  c.points = points;
  c.vectors = vectors;
  c.source = "centres.csv";
  for (Eigen::Index i = 0; i < points.cols(); ++i) c.lines.push_back(static_cast<std::size_t>(i) + 2);
  return c;
}

double largest_distance(const Eigen::Matrix3Xd& a, const Eigen::Matrix3Xd& b) {
  return (a - b).colwise().norm().maxCoeff();
}

// Off the origin and tilted, so frame and sign mistakes show.
const Axis kBoreAxis{Eigen::Vector3d(41.0, -17.5, 3.0),
                     Eigen::Vector3d(0.012, -0.007, 1.0).normalized()};

/// A 2 mm stylus ball on a bore along kBoreAxis.
ProbeTipOptions two_mm_tip() {
  ProbeTipOptions options;
  options.tip_diameter = 2.0;
  options.fit.axis_hint = kBoreAxis.direction;
  return options;
}

}  // namespace

TEST_CASE("a bore's ball centres compensate to its surface, with and without vectors",
          "[prepare][probe]") {
  const double R = 6.0, tip = 2.0, r = 1.0;
  const Sampled s = sample_cylinder(kBoreAxis, R, -2.0, -38.0, 6, 24);
  // The free space of a hole is toward its axis: the ball centre is c - r e (radius R - r).
  const Eigen::Matrix3Xd outward = -s.radial;
  const Eigen::Matrix3Xd centres = s.points + r * outward;
  ProbeTipOptions options;
  options.tip_diameter = tip;
  options.fit.axis_hint = kBoreAxis.direction;

  for (const bool with_vectors : {true, false}) {
    CAPTURE(with_vectors);
    const CompensatedPoints out = compensate_probe_tip(
        FeatureKind::bore, cloud(centres, with_vectors ? outward : Eigen::Matrix3Xd()), options);
    CHECK(out.record.mode == (with_vectors ? CompensationMode::along_vectors
                                           : CompensationMode::along_fitted_normal));
    CHECK(out.record.points == static_cast<std::size_t>(centres.cols()));
    CHECK_FALSE(out.record.vectors_reversed);
    CHECK(out.record.largest_vector_angle_deg < 1e-5);
    CHECK(largest_distance(out.cloud.points, s.points) < 1e-9);
    CHECK(out.cloud.lines == cloud(centres).lines);  // order and lines kept
    // The surface results of the same geometry: the least-squares cylinder (exact geometry).
    const CylinderFit fit = fit_cylinder_least_squares(out.cloud.points, options.fit);
    CHECK(std::abs(fit.radius - R) < 1e-9);
    CHECK(angle_between_lines(fit.axis.direction, kBoreAxis.direction) < 1e-10);
    CHECK(axis_distance_over_extent(fit.axis, kBoreAxis, fit.extent_min, fit.extent_max) < 1e-9);
  }
}

TEST_CASE("a tilted deep bore and a pin compensate exactly", "[prepare][probe]") {
  // A deep bore 5 degrees off the machine z axis, 3 mm radius, 90 mm deep, a 3 mm ball (ball
  // centres on a 1.5 mm radius): the tip is large relative to the bore, still exact on the ideal
  // element.
  const Axis tilted{Eigen::Vector3d(-120.0, 310.0, -45.0),
                    Eigen::Vector3d(std::sin(5.0 * pi / 180.0), 0.0, std::cos(5.0 * pi / 180.0))};
  const Sampled bore = sample_cylinder(tilted, 3.0, -1.0, -89.0, 10, 16);
  ProbeTipOptions options;
  options.tip_diameter = 3.0;
  options.fit.axis_hint = tilted.direction;
  for (const bool with_vectors : {true, false}) {
    CAPTURE(with_vectors);
    const Eigen::Matrix3Xd centres = bore.points - 1.5 * bore.radial;
    const CompensatedPoints out = compensate_probe_tip(
        FeatureKind::bore, cloud(centres, with_vectors ? Eigen::Matrix3Xd(-bore.radial) : Eigen::Matrix3Xd()),
        options);
    CHECK(largest_distance(out.cloud.points, bore.points) < 1e-9);
    const CylinderFit fit = fit_cylinder_least_squares(out.cloud.points, options.fit);
    CHECK(std::abs(fit.radius - 3.0) < 1e-9);
    CHECK(axis_distance_over_extent(fit.axis, tilted, fit.extent_min, fit.extent_max) < 1e-9);
  }
  // A pin: the free space is outside, the ball centres on radius R + r, compensated toward the axis.
  const Sampled pin = sample_cylinder(kBoreAxis, 4.0, 0.0, 20.0, 4, 18);
  options.fit.axis_hint = kBoreAxis.direction;
  options.tip_diameter = 2.0;
  for (const bool with_vectors : {true, false}) {
    CAPTURE(with_vectors);
    const CompensatedPoints out = compensate_probe_tip(
        FeatureKind::pin,
        cloud(pin.points + pin.radial, with_vectors ? pin.radial : Eigen::Matrix3Xd()), options);
    CHECK(largest_distance(out.cloud.points, pin.points) < 1e-9);
  }
}

TEST_CASE("a bore with form: compensation along the fitted normal returns the reference set",
          "[prepare][probe]") {
  // Null-space reference set (Forbes & Minh 2012): its least-squares cylinder is the reference
  // whatever the radius, so the ball centres (each offset by r along its known normal) fit the
  // offset cylinder and compensation along the fitted normal returns every point.
  const cylzone::testing::ReferenceSet set = cylzone::testing::make_cylinder_reference(
      kBoreAxis, 5.0, -3.0, -47.0, 8, 30, 360.0, 0.004, 17);
  // The reference normals point away from the axis; a hole's free space is toward it.
  const Eigen::Matrix3Xd centres = set.points - 1.25 * set.normals;
  ProbeTipOptions options;
  options.tip_diameter = 2.5;
  options.fit.axis_hint = kBoreAxis.direction;
  const CompensatedPoints out = compensate_probe_tip(FeatureKind::bore, cloud(centres), options);
  CHECK(largest_distance(out.cloud.points, set.points) < 1e-9);
  const CylinderFit fit = fit_cylinder_least_squares(out.cloud.points, options.fit);
  CHECK(std::abs(fit.radius - 5.0) < 1e-9);
  CHECK(axis_distance_over_extent(fit.axis, kBoreAxis, fit.extent_min, fit.extent_max) < 1e-9);
}

TEST_CASE("a plane probed from either side compensates to the same plane", "[prepare][probe]") {
  // A thin wall: its face (the same plane) probed from above (free space along +n) and, as
  // the far face of a plate, from below (free space along -n).
  const Eigen::Vector3d n = Eigen::Vector3d(0.03, -0.02, 1.0).normalized();
  const Eigen::Vector3d origin(250.0, -80.0, 12.5);
  const cylzone::testing::ReferenceSet face =
      cylzone::testing::make_plane_reference(origin, n, 60.0, 40.0, 80, 0.0, 5);
  ProbeTipOptions options;
  options.tip_diameter = 4.0;
  for (const double side : {1.0, -1.0}) {
    const Eigen::Vector3d out_of_material = side * n;
    Eigen::Matrix3Xd vectors(3, face.points.cols());
    vectors.colwise() = out_of_material;
    const Eigen::Matrix3Xd centres = face.points + 2.0 * vectors;
    for (const bool with_vectors : {true, false}) {
      CAPTURE(side, with_vectors);
      options.outward = out_of_material;
      const CompensatedPoints out = compensate_probe_tip(
          FeatureKind::plane, cloud(centres, with_vectors ? vectors : Eigen::Matrix3Xd()), options);
      CHECK(largest_distance(out.cloud.points, face.points) < 1e-9);
      const PlaneFit plane = fit_plane_least_squares(out.cloud.points);
      CHECK(std::abs(plane.normal.dot(origin - plane.point)) < 1e-9);
      CHECK(angle_between_lines(plane.normal, n) < 1e-12);
    }
    // With vectors and no known side, the vectors' own sense decides.
    options.outward.reset();
    const CompensatedPoints out =
        compensate_probe_tip(FeatureKind::plane, cloud(centres, vectors), options);
    CHECK(largest_distance(out.cloud.points, face.points) < 1e-9);
  }
}

TEST_CASE("vectors written in the approach sense are detected and used reversed",
          "[prepare][probe]") {
  const Sampled s = sample_cylinder(kBoreAxis, 6.0, -2.0, -30.0, 4, 20);
  const Eigen::Matrix3Xd centres = s.points - 1.0 * s.radial;  // a 2 mm ball in the hole
  ProbeTipOptions options = two_mm_tip();
  // Approach direction: into the material, i.e. away from a hole's axis.
  const CompensatedPoints out =
      compensate_probe_tip(FeatureKind::bore, cloud(centres, s.radial), options);
  CHECK(out.record.vectors_reversed);
  CHECK(largest_distance(out.cloud.points, s.points) < 1e-9);
  PrepareRecord record;
  record.probe_tip = out.record;
  REQUIRE(preparation_warnings(record).size() == 1);
  CHECK_THAT(preparation_warnings(record).front(), Catch::Contains("approach sense"));
}

TEST_CASE("vectors of both senses, far off the normal, or missing where needed are refused",
          "[prepare][probe][errors]") {
  const Sampled s = sample_cylinder(kBoreAxis, 6.0, -2.0, -30.0, 4, 20);
  const Eigen::Matrix3Xd centres = s.points - 1.0 * s.radial;  // a 2 mm ball in the hole
  ProbeTipOptions options = two_mm_tip();
  Eigen::Matrix3Xd vectors = -s.radial;
  vectors.col(7) = s.radial.col(7);  // one point with the other sense: file line 9
  expect_input_error([&] { compensate_probe_tip(FeatureKind::bore, cloud(centres, vectors), options); },
                     "centres.csv", 9, "the point vectors' sense is ambiguous: 79 out of the material and 1 into it");
  vectors = -s.radial;
  // One vector turned 60 degrees off the normal about the axis: line 13.
  vectors.col(11) = Eigen::AngleAxisd(60.0 * pi / 180.0, kBoreAxis.direction) *
                    Eigen::Vector3d(vectors.col(11));
  expect_input_error([&] { compensate_probe_tip(FeatureKind::bore, cloud(centres, vectors), options); },
                     "centres.csv", 13, "degrees from the fitted surface normal (limit 45");
  expect_input_error([&] { compensate_probe_tip(FeatureKind::slot, cloud(centres), options); },
                     "centres.csv", 0, "ball-centre points of a slot need per-point vectors");
  expect_input_error([&] { compensate_probe_tip(FeatureKind::plane, cloud(centres), options); },
                     "centres.csv", 0, "need per-point vectors or the plane's material side");
  options.tip_diameter = 0.0;
  CHECK_THROWS_AS(compensate_probe_tip(FeatureKind::bore, cloud(centres), options),
                  std::invalid_argument);
}

TEST_CASE("prepare_feature compensates ball centres before the screen and records it",
          "[prepare][probe]") {
  const Sampled s = sample_cylinder(kBoreAxis, 6.0, -2.0, -30.0, 5, 24);
  PrepareOptions options;
  options.fit.axis_hint = kBoreAxis.direction;
  ProbeSettings settings;
  settings.ball_centres = true;
  settings.tip_diameter = 2.0;
  apply_probe_settings(settings, options);
  const PreparedFeature prepared =
      prepare_feature(FeatureKind::bore, cloud(Eigen::Matrix3Xd(s.points - s.radial)), options);
  CHECK(prepared.record.probe_tip.mode == CompensationMode::along_fitted_normal);
  CHECK(prepared.record.probe_tip.tip_diameter == 2.0);
  CHECK(largest_distance(prepared.cloud.points, s.points) < 1e-9);
  CHECK(prepared.record.stray_points.screened == static_cast<std::size_t>(s.points.cols()));
  CHECK(prepared.record.stray_points.points.empty());
  // Surface points (the default) are passed unchanged, bit for bit.
  const PreparedFeature surface = prepare_feature(FeatureKind::bore, cloud(s.points), PrepareOptions{});
  CHECK(surface.record.probe_tip.mode == CompensationMode::none);
  CHECK((surface.cloud.points.array() == s.points.array()).all());
}

TEST_CASE("compensation does not depend on how the part sat on the machine", "[prepare][probe]") {
  // Any rigid motion of the ball centres (and their vectors) moves the compensated points by
  // the same motion (the ball-centre relation is rigid-invariant; common practice).
  const Sampled s = sample_cylinder(kBoreAxis, 6.0, -2.0, -30.0, 5, 24);
  const Eigen::Matrix3Xd centres = s.points - 1.0 * s.radial;
  const Eigen::Matrix3d turn =
      (Eigen::AngleAxisd(1.1, Eigen::Vector3d(0.3, -0.5, 0.8).normalized()) *
       Eigen::AngleAxisd(0.4, Eigen::Vector3d::UnitX()))
          .toRotationMatrix();
  const Eigen::Vector3d shift(-812.5, 433.25, 97.0);
  for (const bool with_vectors : {true, false}) {
    CAPTURE(with_vectors);
    ProbeTipOptions here = two_mm_tip();
    ProbeTipOptions there = two_mm_tip();
    there.fit.axis_hint = turn * kBoreAxis.direction;
    const Eigen::Matrix3Xd vectors = with_vectors ? Eigen::Matrix3Xd(-s.radial) : Eigen::Matrix3Xd();
    const Eigen::Matrix3Xd moved_vectors = with_vectors ? Eigen::Matrix3Xd(turn * vectors) : Eigen::Matrix3Xd();
    const CompensatedPoints a = compensate_probe_tip(FeatureKind::bore, cloud(centres, vectors), here);
    const CompensatedPoints b = compensate_probe_tip(
        FeatureKind::bore, cloud((turn * centres).colwise() + shift, moved_vectors), there);
    CHECK(largest_distance((turn * a.cloud.points).colwise() + shift, b.cloud.points) < 1e-9);
  }
}
