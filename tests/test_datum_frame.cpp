// Datum reference frame (cylzone/datum/datum_frame.hpp): the frame built from A, B and C.
//
// References outside the code under test:
//  * constructed parts with known answers: points on exact planes and cylinders in part
//    coordinates, moved by a known rigid motion; the frame must be the inverse motion. Datum
//    features carry form chosen so that the associated feature is known exactly: a face whose
//    lower regions lie inside the hull of its high points (the tangent plane is the high face)
//    and three-lobed bores (Forbes & Minh, Int. J. Metrol. Qual. Eng. 3(3), 2012: the lobed set's
//    maximum inscribed radius is r - eps, minimum circumscribed r + eps, axis unchanged).
#include <Eigen/Geometry>
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <cstdint>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "cylzone/datum/datum_frame.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/datum/tangent_plane.hpp"
#include "case_file.hpp"
#include "datum_inputs.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

constexpr double pi = 3.14159265358979323846;


// ---------------------------------------------------------------- constructed parts

struct Motion {
  Eigen::Matrix3d rotation;
  Eigen::Vector3d translation;
  Eigen::Matrix3Xd apply(const Eigen::Matrix3Xd& p) const {
    return (rotation * p).colwise() + translation;
  }
  Eigen::Vector3d direction(const Eigen::Vector3d& d) const { return rotation * d; }
};

Motion generic_motion() {
  Motion m;
  m.rotation = (Eigen::AngleAxisd(0.43, Eigen::Vector3d::UnitX()) *
                Eigen::AngleAxisd(-0.31, Eigen::Vector3d::UnitY()) *
                Eigen::AngleAxisd(1.17, Eigen::Vector3d::UnitZ()))
                   .toRotationMatrix();
  m.translation = Eigen::Vector3d(412.5, -187.25, 233.125);
  return m;
}

// Face A in part coordinates: 130 points exactly on z = 0 over a 120 x 90 grid and 60 points
// in shallow dents (0.001 to 0.02 deep) inside that grid. The material is below (z < 0). Any
// plane on the material side lies on or above z = 0 at the grid, hence at every dent (a convex
// combination of grid points), so z = 0 makes every term of the sum of squares least: it is the
// tangent least-squares plane, and (no tilt narrows the zone) the outer minimum-zone plane.
Eigen::Matrix3Xd face_a_points() {
  std::mt19937_64 rng(21);
  std::uniform_real_distribution<double> x(-55.0, 55.0), y(-40.0, 40.0), depth(0.001, 0.02);
  Eigen::Matrix3Xd p(3, 190);
  int k = 0;
  for (int i = 0; i < 13; ++i)
    for (int j = 0; j < 10; ++j) p.col(k++) << -60.0 + 10.0 * i, -45.0 + 10.0 * j, 0.0;
  while (k < 190) p.col(k++) << x(rng), y(rng), -depth(rng);
  return p;
}

// A bore or pin along z at (cx, cy), three-lobed with amplitude eps, 6 levels x 36 points.
Eigen::Matrix3Xd lobed_feature(double cx, double cy, double radius, double z0, double z1,
                               double eps, double phase_deg = 0.0) {
  return testing::make_lobed_cylinder(Axis{Eigen::Vector3d(cx, cy, 0.0), Eigen::Vector3d::UnitZ()},
                                      radius, z0, z1, 6, 36, eps, phase_deg)
      .points;
}

// Face C at y = -45 (outward normal -y), perpendicular to A: points exactly on it over
// x in [-50, 50], z in [-20, -2], and dents up to 0.01 deep inside that range. By the argument
// of face A in the plane of A, the tangent plane perpendicular to A is y = -45.
Eigen::Matrix3Xd face_c_points() {
  std::mt19937_64 rng(22);
  std::uniform_real_distribution<double> x(-48.0, 48.0), z(-19.0, -3.0), depth(0.001, 0.01);
  Eigen::Matrix3Xd p(3, 80);
  int k = 0;
  for (int i = 0; i < 11; ++i)
    for (int j = 0; j < 4; ++j) p.col(k++) << -50.0 + 10.0 * i, -45.0, -2.0 - 6.0 * j;
  while (k < 80) p.col(k++) << x(rng), -45.0 + depth(rng), z(rng);
  return p;
}

PointCloud cloud(const Eigen::Matrix3Xd& points, const std::string& source) {
  PointCloud c;
  c.points = points;
  c.source = source;
  return c;
}

PlanDatum plane_datum(char label) {
  PlanDatum d;
  d.label = label;
  d.kind = FeatureKind::plane;
  return d;
}

PlanDatum size_datum(char label, FeatureKind kind) {
  PlanDatum d;
  d.label = label;
  d.kind = kind;
  return d;
}

// Datums A (a plane), B (a bore) and C (a bore at basic location (55, 25)).
std::vector<PlanDatum> a_b_c_bores() {
  PlanDatum c = size_datum('C', FeatureKind::bore);
  c.basic_location = Eigen::Vector2d(55.0, 25.0);
  return {plane_datum('A'), size_datum('B', FeatureKind::bore), c};
}

// The frame must be the inverse of the motion that placed the part: rows of the rotation are
// the part's axes in measurement coordinates, the origin is the part's origin.
void check_frame_is_inverse(const DatumFrame& frame, const Motion& motion, double tolerance) {
  CHECK((frame.rotation - motion.rotation.transpose()).cwiseAbs().maxCoeff() <= tolerance);
  CHECK((frame.origin - motion.translation).norm() <= tolerance);
}

}  // namespace

// ================================================================ datum reference frame

TEST_CASE("frame from A, B bore and C bore is the inverse of the part's placement",
          "[datum][frame]") {
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = a_b_c_bores();
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv"),
      cloud(motion.apply(lobed_feature(55.0, 25.0, 4.0, -25.0, -3.0, 0.002, 10.0)), "C.csv")};
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());

  for (const PlaneAssociation method :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax}) {
    DatumFrameOptions options;
    options.a_association = method;
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material, options);
    INFO(std::string(association_name(method)));
    check_frame_is_inverse(r.frame, motion, 1e-9);
    CHECK(r.rotation_fixed);
    CHECK(r.translation_fixed);
    CHECK(r.a.association == method);
    // The zone of face A is z = 0 down to its deepest dent (no tilt narrows it).
    CHECK(r.a.flatness == Approx(-face_a_points().row(2).minCoeff()).epsilon(1e-9));
    REQUIRE(r.b);
    REQUIRE(r.c_feature);
    CHECK(!r.c_plane);
    // Lobed sets: maximum inscribed radius r - eps (Forbes & Minh 2012).
    CHECK(r.b->mating_size == Approx(2.0 * (10.0 - 0.004)).epsilon(1e-12));
    CHECK(r.c_feature->mating_size == Approx(2.0 * (4.0 - 0.002)).epsilon(1e-12));
    CHECK((r.b->axis_on_a - motion.translation).norm() <= 1e-9);
    CHECK((r.frame.point_to_frame(r.c_feature->axis_on_a) - Eigen::Vector3d(55.0, 25.0, 0.0))
              .norm() <= 1e-9);
    CHECK(r.b->boundary == MaterialBoundary::rmb);
    CHECK(r.b->shift_allowance == 0.0);  // no size given: no MMB to shift against
  }
}

TEST_CASE("C bore clocks by direction only: a C off its basic distance keeps the angle",
          "[datum][frame]") {
  // C's axis at (70, 0) with basic location (35, 0): the same direction, twice the distance.
  // Common practice for a tertiary feature of size at RMB: rotation only.
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                   size_datum('C', FeatureKind::bore)};
  datums[2].basic_location = Eigen::Vector2d(35.0, 0.0);
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv"),
      cloud(motion.apply(lobed_feature(70.0, 0.0, 4.0, -25.0, -3.0, 0.002)), "C.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  check_frame_is_inverse(r.frame, motion, 1e-9);
  CHECK(std::any_of(r.notes.begin(), r.notes.end(),
                    [](const std::string& n) { return n.find("clocks the frame only") != std::string::npos; }));
}

TEST_CASE("frame from A, B bore and C plane", "[datum][frame]") {
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                   plane_datum('C')};
  datums[2].outward_normal = Eigen::Vector2d(0.0, -1.0);
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv"),
      cloud(motion.apply(face_c_points()), "C.csv")};
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());

  SECTION("material side of C from B's axis") {
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    REQUIRE(r.c_plane);
    CHECK(!r.c_feature);
    CHECK((r.c_plane->plane.normal - motion.direction(-Eigen::Vector3d::UnitY())).norm() <= 1e-9);
    CHECK(r.c_plane->plane.residuals.values.maxCoeff() == 0.0);
    CHECK(r.frame.point_to_frame(r.c_plane->plane.point).y() == Approx(-45.0).epsilon(1e-12));
  }
  SECTION("material side of C given") {
    datums[2].material_side = motion.direction(Eigen::Vector3d(0.2, 1.0, 0.3));
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
  }
  SECTION("another basic direction turns the frame") {
    // Outward normal declared as +x in the frame: the frame turns by -90 degrees about z
    // relative to the part's own axes, so the part's -y axis becomes the frame's +x axis.
    datums[2].outward_normal = Eigen::Vector2d(1.0, 0.0);
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material);
    const Eigen::Vector3d frame_x = r.frame.rotation.row(0).transpose();
    CHECK((frame_x - motion.direction(-Eigen::Vector3d::UnitY())).norm() <= 1e-9);
    CHECK((r.frame.rotation.row(2).transpose() - motion.direction(Eigen::Vector3d::UnitZ())).norm() <= 1e-9);
  }
}

TEST_CASE("frame with a pin as datum B", "[datum][frame]") {
  // A boss of radius 8 standing on face A (outside the material, z > 0), lobed: its minimum
  // circumscribed radius is r + eps (Forbes & Minh 2012).
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::pin),
                                   size_datum('C', FeatureKind::bore)};
  datums[1].size = SizeLimits{15.990, 16.010};
  datums[1].boundary = MaterialBoundary::mmb;  // as validate_plan settles it for B(M)
  datums[2].basic_location = Eigen::Vector2d(-30.0, 30.0);
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 8.0, 3.0, 25.0, 0.003)), "B.csv"),
      cloud(motion.apply(lobed_feature(-30.0, 30.0, 3.0, -20.0, -2.0, 0.001)), "C.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  check_frame_is_inverse(r.frame, motion, 1e-9);
  REQUIRE(r.b);
  CHECK(r.b->kind == FeatureKind::pin);
  CHECK(r.b->mating_size == Approx(16.006).epsilon(1e-12));
  // MMB defaults to the MMC size (pin: upper limit); shift = (MMB - mating) / 2 for a pin
  // (datum feature shift, ASME Y14.5-2018; common practice).
  REQUIRE(r.b->mmb_size);
  CHECK(*r.b->mmb_size == 16.010);
  CHECK(r.b->shift_allowance == Approx(0.002).epsilon(1e-9));
}

TEST_CASE("datum B size: MMB, shift allowance and a violated boundary", "[datum][frame]") {
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore)};
  datums[1].boundary = MaterialBoundary::mmb;  // as validate_plan settles it for B(M)
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv")};
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  // Mating size 19.992 (lobed: 2 (10 - 0.004)).
  SECTION("MMB from the MMC size") {
    datums[1].size = SizeLimits{19.980, 20.021};
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), side);
    CHECK(*r.b->mmb_size == 19.980);
    CHECK(r.b->shift_allowance == Approx(0.006).epsilon(1e-9));
    CHECK(r.b->size->upper == 20.021);
  }
  SECTION("MMB given") {
    datums[1].size = SizeLimits{19.980, 20.021};
    datums[1].mmb_size = 19.985;
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), side);
    CHECK(*r.b->mmb_size == 19.985);
    CHECK(r.b->shift_allowance == Approx(0.0035).epsilon(1e-9));
  }
  SECTION("a bore smaller than its MMB has no shift and a note") {
    datums[1].size = SizeLimits{19.995, 20.021};
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), side);
    CHECK(r.b->shift_allowance == 0.0);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("violates its MMB") != std::string::npos;
    }));
  }
}

TEST_CASE("frame without C: x is the measurement x axis projected onto A", "[datum][frame]") {
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore)};
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  const Eigen::Vector3d z = motion.direction(Eigen::Vector3d::UnitZ());
  const Eigen::Vector3d x = (Eigen::Vector3d::UnitX() - z.x() * z).normalized();
  CHECK((r.frame.rotation.row(2).transpose() - z).norm() <= 1e-9);
  CHECK((r.frame.rotation.row(0).transpose() - x).norm() <= 1e-9);
  CHECK((r.frame.rotation.row(1).transpose() - z.cross(x)).norm() <= 1e-9);
  CHECK((r.frame.origin - motion.translation).norm() <= 1e-9);
  CHECK(!r.rotation_fixed);
  CHECK(r.translation_fixed);

  SECTION("measurement y is used when A's normal is nearly measurement x") {
    Motion side_on;
    side_on.rotation = Eigen::AngleAxisd(pi / 2, Eigen::Vector3d::UnitY()).toRotationMatrix();
    side_on.translation = Eigen::Vector3d(10.0, 20.0, 30.0);
    const std::vector<PointCloud> turned = {
        cloud(side_on.apply(face_a_points()), "A.csv"),
        cloud(side_on.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv")};
    const DatumFrameResult s =
        establish_datum_frame(test::paired(datums, turned), side_on.direction(-Eigen::Vector3d::UnitZ()));
    CHECK((s.frame.rotation.row(2).transpose() - Eigen::Vector3d::UnitX()).norm() <= 1e-9);
    CHECK((s.frame.rotation.row(0).transpose() - Eigen::Vector3d::UnitY()).norm() <= 1e-9);
  }
}

TEST_CASE("frame without B: origin is the measurement origin projected onto A",
          "[datum][frame]") {
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = {plane_datum('A')};
  const std::vector<PointCloud> clouds = {cloud(motion.apply(face_a_points()), "A.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  const Eigen::Vector3d z = motion.direction(Eigen::Vector3d::UnitZ());
  CHECK((r.frame.origin - motion.translation.dot(z) * z).norm() <= 1e-9);
  CHECK(std::abs(r.frame.point_to_frame(motion.translation).z()) <= 1e-9);
  CHECK(!r.translation_fixed);
  CHECK(!r.rotation_fixed);
  CHECK(!r.b);
}

TEST_CASE("free freedoms anchored on the part: the frame is the inverse of its placement",
          "[datum][frame]") {
  // Anchors at their basic locations in part coordinates (at some depth below A): a frame in
  // which each anchor's projection onto A has its basic coordinates is the part's own frame,
  // whatever the placement (ASME Y14.5-2018 section 4: the part's requirements do not depend
  // on how it is held; common practice).
  const Motion motion = generic_motion();
  const auto anchor = [&](const char* name, double x, double y, double depth) {
    return FrameAnchor{name, motion.apply(Eigen::Vector3d(x, y, depth)), Eigen::Vector2d(x, y)};
  };
  DatumFrameOptions options;
  options.anchors = {anchor("bore Q0", 0.0, 0.0, -9.0), anchor("bore Q1", 30.0, -25.0, -20.0),
                     anchor("bore Q2", -40.0, 15.0, -7.0)};
  SECTION("with B: the first anchor away from B's axis clocks x") {
    const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore)};
    const std::vector<PointCloud> clouds = {
        cloud(motion.apply(face_a_points()), "A.csv"),
        cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv")};
    const DatumFrameResult r = establish_datum_frame(
        test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()), options);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    CHECK(!r.rotation_fixed);
    CHECK(r.notes.back().find("bore Q1") != std::string::npos);
  }
  SECTION("without B: two anchors with distinct basic locations place the origin too") {
    const std::vector<PlanDatum> datums = {plane_datum('A')};
    const std::vector<PointCloud> clouds = {cloud(motion.apply(face_a_points()), "A.csv")};
    const DatumFrameResult r = establish_datum_frame(
        test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()), options);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    CHECK(!r.translation_fixed);
    CHECK(r.notes.back().find("bore Q0") != std::string::npos);
    for (const std::string& note : r.notes) CHECK(note.find("measurement origin") == std::string::npos);
  }
  SECTION("one anchor without B cannot place the frame: the measurement axes, as the note says") {
    options.anchors.resize(1);
    const std::vector<PlanDatum> datums = {plane_datum('A')};
    const std::vector<PointCloud> clouds = {cloud(motion.apply(face_a_points()), "A.csv")};
    const DatumFrameResult r = establish_datum_frame(
        test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()), options);
    const Eigen::Vector3d z = motion.direction(Eigen::Vector3d::UnitZ());
    CHECK((r.frame.origin - motion.translation.dot(z) * z).norm() <= 1e-9);
    CHECK(r.notes.back().find("measurement x") != std::string::npos);
  }
}

TEST_CASE("datum A by every association", "[datum][frame]") {
  const Motion motion = generic_motion();
  const Eigen::Matrix3Xd a = motion.apply(face_a_points());
  const std::vector<PlanDatum> datums = {plane_datum('A')};
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PlaneFit ls = fit_plane_least_squares(a);
  const PlaneFit zone = fit_plane_minimum_zone(a);
  for (const PlaneAssociation method :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax,
        PlaneAssociation::least_squares, PlaneAssociation::minimum_zone}) {
    DatumFrameOptions options;
    options.a_association = method;
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, {cloud(a, "A.csv")}), side, options);
    INFO(std::string(association_name(method)));
    CHECK(r.a.plane.normal.dot(side) < 0.0);
    CHECK(r.a.flatness == Approx(zone.residuals.form).epsilon(1e-12));
    const PlaneFit& same = method == PlaneAssociation::least_squares ? ls : zone;
    if (method == PlaneAssociation::least_squares || method == PlaneAssociation::minimum_zone) {
      CHECK(std::abs(std::abs(r.a.plane.normal.dot(same.normal)) - 1.0) <= 1e-15);
      CHECK(std::abs((r.a.plane.point - same.point).dot(same.normal)) <= 1e-12);
    } else {
      CHECK((r.a.plane.normal - motion.direction(Eigen::Vector3d::UnitZ())).norm() <= 1e-9);
    }
  }
}

TEST_CASE("material side of A inferred from the bores", "[datum][frame]") {
  const Motion motion = generic_motion();
  const Eigen::Matrix3Xd a = motion.apply(face_a_points());
  const PlaneFit ls = fit_plane_least_squares(a);
  const Eigen::Matrix3Xd b = motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004));
  const Eigen::Matrix3Xd c = motion.apply(lobed_feature(55.0, 25.0, 4.0, -25.0, -3.0, 0.002));
  const Eigen::Vector3d side = infer_material_side(ls, {&b, &c});
  // The least-squares normal of A, turned towards the bores.
  CHECK(std::abs(std::abs(side.dot(ls.normal)) - 1.0) <= 1e-15);
  CHECK(side.dot(motion.direction(-Eigen::Vector3d::UnitZ())) > 0.999);

  // A bore with points on both sides of A, evenly: no side can be told.
  const Eigen::Matrix3Xd straddle = motion.apply(lobed_feature(20.0, 0.0, 5.0, -20.0, 20.0, 0.0));
  CHECK_THROWS_WITH(infer_material_side(ls, {&straddle}), Contains("cannot infer the material side"));
  // Points only at the mouth (within A's form) cannot tell either.
  const Eigen::Matrix3Xd mouth = motion.apply(lobed_feature(20.0, 0.0, 5.0, -0.001, -0.001, 0.0));
  CHECK_THROWS_WITH(infer_material_side(ls, {&mouth}), Contains("no bore point lies off A"));
  // The frame records that the side was inferred (the plan gave none).
  const DatumFrameResult r = establish_datum_frame(test::paired({plane_datum('A')}, {cloud(a, "A.csv")}), side);
  CHECK(r.a.material_side_inferred);
}

TEST_CASE("degenerate datum features give a FitError naming the datum", "[datum][frame][errors]") {
  const Motion motion = generic_motion();
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");

  SECTION("B parallel to A") {
    // A bore along the part's x axis, 15 below A.
    const Eigen::Matrix3Xd lying = testing::make_cylinder_reference(
        Axis{Eigen::Vector3d(0.0, 0.0, -15.0), Eigen::Vector3d::UnitX()}, 5.0, -20.0, 20.0, 8,
        24, 360.0, 0.0, 41).points;
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore)},
                              {a, cloud(motion.apply(lying), "B.csv")}), side),
        Contains("datum B: axis parallel to A"));
  }
  SECTION("C coincident with B") {
    PlanDatum c = size_datum('C', FeatureKind::bore);
    c.basic_location = Eigen::Vector2d(40.0, 0.0);
    const PointCloud concentric =
        cloud(motion.apply(lobed_feature(0.0, 0.0, 4.0, -30.0, -5.0, 0.001)), "C.csv");
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                              {a, b, concentric}), side),
        Contains("datum C: its axis coincides with the axis of datum B"));
  }
  SECTION("too few points on A") {
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A')},
                                            {cloud(a.points.leftCols(2), "A.csv")}), side),
                      Contains("datum A: "));
  }
  SECTION("too few points on B") {
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore)},
                              {a, cloud(b.points.leftCols(2), "B.csv")}), side),
        Contains("datum B: "));
  }
  SECTION("C plane parallel to A") {
    PlanDatum c = plane_datum('C');
    c.outward_normal = Eigen::Vector2d(1.0, 0.0);
    const Eigen::Matrix3Xd floor = testing::make_plane_reference(
        Eigen::Vector3d(0.0, 0.0, -50.0), Eigen::Vector3d::UnitZ(), 60.0, 60.0, 50, 0.0, 42).points;
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                              {a, b, cloud(motion.apply(floor), "C.csv")}), side),
        Contains("datum C: plane parallel to A"));
  }
  SECTION("C plane through B's axis without a material side") {
    PlanDatum c = plane_datum('C');
    c.outward_normal = Eigen::Vector2d(1.0, 0.0);
    const Eigen::Matrix3Xd through = testing::make_plane_reference(
        Eigen::Vector3d(0.0, 0.0, -20.0), Eigen::Vector3d::UnitX(), 30.0, 30.0, 50, 0.0, 43).points;
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                              {a, b, cloud(motion.apply(through), "C.csv")}), side),
        Contains("datum C: the axis of datum B lies in plane C"));
  }
  SECTION("a plane as datum B") {
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), plane_datum('B')}, {a, a}), side),
                      Contains("datum B: a secondary datum plane is not supported"));
  }
  SECTION("material side of A in its plane") {
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A')}, {a}),
                                            motion.direction(Eigen::Vector3d::UnitX())),
                      Contains("datum A: the material side direction lies almost in the plane"));
  }
}

// ================================================================ datum C as a slot or tab

namespace {

// A width feature of size in part coordinates: two faces |v| = half (v across the centre
// plane) for u in [35, 55] along the direction at `angle` (radians) from the part's x axis,
// offset by `offset` across it, over z in [z0, z1]. Each face has 15 points exactly on it and
// 10 points receding into the material by 0.001 to 0.01 (away from the gap for a slot, into
// the tab for a tab). At the related mating width every exact point is a contact, so with
// offset 0 the centre plane is the direction `angle` and the width 2 half: any rotation of the
// simulator's planes about the origin would cut the exact points at one end of a face.
Eigen::Matrix3Xd width_feature(bool slot, double angle, double offset, double half, double z0,
                               double z1) {
  std::mt19937_64 rng(slot ? 23 : 24);
  std::uniform_real_distribution<double> u(36.0, 54.0), z(std::min(z0, z1) + 0.5,
                                                          std::max(z0, z1) - 0.5),
      depth(0.001, 0.01);
  const Eigen::Vector3d along(std::cos(angle), std::sin(angle), 0.0);
  const Eigen::Vector3d across(-std::sin(angle), std::cos(angle), 0.0);
  Eigen::Matrix3Xd p(3, 50);
  int k = 0;
  for (const double side : {1.0, -1.0}) {
    for (int i = 0; i < 5; ++i)
      for (int j = 0; j < 3; ++j)
        p.col(k++) = (35.0 + 5.0 * i) * along + (offset + side * half) * across +
                     (z0 + 0.5 * (z1 - z0) * j) * Eigen::Vector3d::UnitZ();
    for (int i = 0; i < 10; ++i) {
      const double recede = slot ? depth(rng) : -depth(rng);
      p.col(k++) = u(rng) * along + (offset + side * (half + recede)) * across +
                   z(rng) * Eigen::Vector3d::UnitZ();
    }
  }
  return p;
}

PlanDatum width_datum(FeatureKind kind, double angle) {
  PlanDatum c = size_datum('C', kind);
  c.basic_location = 45.0 * Eigen::Vector2d(std::cos(angle), std::sin(angle));
  return c;
}

}  // namespace

TEST_CASE("frame from A, B bore and C slot or tab is the inverse of the part's placement",
          "[datum][frame][slot]") {
  // Constructed parts (see width_feature): the simulator of a tertiary width feature at RMB,
  // two parallel planes perpendicular to A about a centre plane through B's axis, expanding
  // (slot) or contracting (tab) to the feature (ASME Y14.5-2018 datum feature simulators;
  // from memory for the clause) settles on the exact faces.
  const Motion motion = generic_motion();
  const double angle = 0.5;  // the centre plane's direction in the part, about 28.6 degrees
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");

  SECTION("slot cut into the material") {
    const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                           width_datum(FeatureKind::slot, angle)};
    const DatumFrameResult r = establish_datum_frame(test::paired(
        datums, {a, b, cloud(motion.apply(width_feature(true, angle, 0.0, 3.0, -2.0, -12.0)), "C.csv")}),
        into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    REQUIRE(r.c_width);
    CHECK_FALSE(r.c_feature);
    CHECK_FALSE(r.c_plane);
    CHECK(r.rotation_fixed);
    CHECK(r.c_width->kind == FeatureKind::slot);
    CHECK(r.c_width->mating_width == Approx(6.0).epsilon(1e-12));
    CHECK((r.c_width->centre_direction -
           motion.direction(Eigen::Vector3d(std::cos(angle), std::sin(angle), 0.0)))
              .norm() <= 1e-9);
    // The centre plane's normal is A's normal x the centre direction.
    CHECK((r.c_width->centre_plane_normal -
           motion.direction(Eigen::Vector3d(-std::sin(angle), std::cos(angle), 0.0)))
              .norm() <= 1e-9);
    CHECK(r.c_width->positive_face.cols() == 25);
    CHECK(r.c_width->negative_face.cols() == 25);
    // The centre on A lies on the centre line, at the centroid's distance along it (45 for
    // the exact points; the receding ones are spread over [36, 54]).
    const Eigen::Vector3d centre = r.frame.point_to_frame(r.c_width->centre_on_a);
    CHECK(std::abs(centre.z()) <= 1e-9);
    CHECK(std::abs(-std::sin(angle) * centre.x() + std::cos(angle) * centre.y()) <= 1e-9);
    CHECK(centre.norm() > 36.0);
    CHECK(centre.norm() < 54.0);
    CHECK_FALSE(r.c_width->mmb_size);
    CHECK(r.c_width->shift_allowance == 0.0);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("datum C (slot): its simulator") != std::string::npos;
    }));
  }
  SECTION("tab standing out of face A") {
    const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                           width_datum(FeatureKind::tab, angle)};
    const DatumFrameResult r = establish_datum_frame(test::paired(
        datums, {a, b, cloud(motion.apply(width_feature(false, angle, 0.0, 2.5, 2.0, 10.0)), "C.csv")}),
        into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    REQUIRE(r.c_width);
    CHECK(r.c_width->kind == FeatureKind::tab);
    CHECK(r.c_width->mating_width == Approx(5.0).epsilon(1e-12));
  }
  SECTION("a slot whose centre plane misses B's axis") {
    // Faces at v = e +- h for u in [t1, t2], all points exact (the receding ones are dropped).
    // The slot's objective min(h + e) cos d - t2 sin d, (h - e) cos d + t1 sin d (d > 0 for
    // e > 0) is largest where the two are equal: tan d = 2 e / (t1 + t2), with half-width
    // (h - e) cos d + t1 sin d (derived here, on the problem statement of
    // detail/clocking_width.hpp).
    const double e = 0.02, h = 3.0, t1 = 35.0, t2 = 55.0;
    Eigen::Matrix3Xd exact(3, 30);
    const Eigen::Matrix3Xd all = width_feature(true, angle, e, h, -2.0, -12.0);
    exact << all.middleCols(0, 15), all.middleCols(25, 15);
    const double d = std::atan(2.0 * e / (t1 + t2));
    const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                           width_datum(FeatureKind::slot, angle)};
    const DatumFrameResult r =
        establish_datum_frame(test::paired(datums, {a, b, cloud(motion.apply(exact), "C.csv")}), into_material);
    REQUIRE(r.c_width);
    CHECK(r.c_width->mating_width ==
          Approx(2.0 * ((h - e) * std::cos(d) + t1 * std::sin(d))).epsilon(1e-12));
    CHECK((r.c_width->centre_direction -
           motion.direction(Eigen::Vector3d(std::cos(angle + d), std::sin(angle + d), 0.0)))
              .norm() <= 1e-9);
    // The frame is clocked so the centre plane runs along C's basic direction.
    const Eigen::Vector3d in_frame = r.frame.rotation * r.c_width->centre_direction;
    CHECK((in_frame - Eigen::Vector3d(std::cos(angle), std::sin(angle), 0.0)).norm() <= 1e-12);
    // The origin is still B's axis on A.
    CHECK((r.frame.origin - motion.translation).norm() <= 1e-9);
  }
}

TEST_CASE("C slot or tab: MMB, shift allowance and a violated boundary", "[datum][frame][slot]") {
  // A slot is internal like a bore (MMC its lower limit, shift (mating - MMB) / 2), a tab
  // external like a pin (MMC its upper limit, shift (MMB - mating) / 2) (ASME Y14.5-2018 datum
  // feature shift; common practice).
  const Motion motion = generic_motion();
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");
  const PointCloud slot = cloud(motion.apply(width_feature(true, 0.0, 0.0, 3.0, -2.0, -12.0)), "C.csv");
  const PointCloud tab = cloud(motion.apply(width_feature(false, 0.0, 0.0, 3.0, 2.0, 10.0)), "C.csv");
  PlanDatum c = width_datum(FeatureKind::slot, 0.0);
  c.boundary = MaterialBoundary::mmb;  // as validate_plan settles it for C(M)
  SECTION("slot, MMB from the MMC width") {
    c.size = SizeLimits{5.990, 6.030};
    const DatumFrameResult r =
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, slot}), side);
    REQUIRE(r.c_width->mmb_size);
    CHECK(*r.c_width->mmb_size == 5.990);
    CHECK(r.c_width->shift_allowance == Approx(0.005).epsilon(1e-9));
  }
  SECTION("tab, MMB given") {
    c = width_datum(FeatureKind::tab, 0.0);
    c.boundary = MaterialBoundary::mmb;
    c.size = SizeLimits{5.970, 6.010};
    c.mmb_size = 6.016;
    const DatumFrameResult r =
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, tab}), side);
    CHECK(*r.c_width->mmb_size == 6.016);
    CHECK(r.c_width->shift_allowance == Approx(0.008).epsilon(1e-9));
  }
  SECTION("a slot narrower than its MMB has no allowance and a note") {
    c.size = SizeLimits{6.010, 6.040};
    const DatumFrameResult r =
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, slot}), side);
    CHECK(r.c_width->shift_allowance == 0.0);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("datum C: related mating width 6.0000 mm violates its MMB 6.0100 mm") !=
             std::string::npos;
    }));
  }
}

TEST_CASE("C slot or tab: leaning faces, wrong features and missing datums",
          "[datum][frame][slot][errors]") {
  const Motion motion = generic_motion();
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");
  const PlanDatum c = width_datum(FeatureKind::slot, 0.0);
  const Eigen::Matrix3Xd exact = width_feature(true, 0.0, 0.0, 3.0, -2.0, -12.0);

  SECTION("faces drafted by 2 degrees: a note, planes held perpendicular to A") {
    // Each face opens by 2 degrees toward the mouth (z = 0): v = +-(3 - z tan 2deg) for z < 0.
    Eigen::Matrix3Xd drafted = exact;
    const double t = std::tan(2.0 * pi / 180.0);
    for (Eigen::Index i = 0; i < drafted.cols(); ++i)
      drafted(1, i) += (drafted(1, i) > 0 ? 1.0 : -1.0) * (-drafted(2, i)) * t;
    const DatumFrameResult r = establish_datum_frame(test::paired(
        {plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, cloud(motion.apply(drafted), "C.csv")}),
        side);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("datum C: the face of the slot left of its centre line (seen from outside the material "
                    "looking from B toward C) is 2.0") != std::string::npos;
    }));
    CHECK(std::count_if(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("degrees out of perpendicular to A") != std::string::npos;
    }) == 2);
    check_frame_is_inverse(r.frame, motion, 1e-9);
  }
  SECTION("a face parallel to A") {
    // The negative face replaced by a floor patch at z = -12 beside the centre line.
    Eigen::Matrix3Xd floor = exact;
    for (Eigen::Index i = 25; i < 50; ++i) {
      const Eigen::Index k = i - 25;
      floor.col(i) << 36.0 + 4.0 * static_cast<double>(k % 5), -1.0 - 0.4 * static_cast<double>(k / 5), -12.0;
    }
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                                            {a, b, cloud(motion.apply(floor), "C.csv")}), side),
                      Contains("datum C: the face of the slot right of its centre line (seen from outside the material "
                               "looking from B toward C) is parallel to A"));
  }
  SECTION("all points on one face") {
    const Eigen::Matrix3Xd one = exact.leftCols(25);
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                                            {a, b, cloud(motion.apply(one), "C.csv")}), side),
                      Contains("datum C: its two faces are not told apart"));
  }
  SECTION("no basic location") {
    PlanDatum bare = c;
    bare.basic_location.reset();
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), bare},
                                            {a, b, cloud(motion.apply(exact), "C.csv")}), side),
                      Contains("datum C: its basic location (away from B's axis) is needed"));
  }
  SECTION("a slot as datum B") {
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::slot)},
                              {a, cloud(motion.apply(exact), "B.csv")}), side),
        Contains("datum B: a slot cannot be datum B"));
  }
}

// ================================================================ A's minimum zone, given

namespace {

// A dense generated face: 20,000 points over 120 x 90 with 2 um of uniform noise, placed by
// the generic motion (a scan's datum face, smaller).
Eigen::Matrix3Xd dense_face() {
  std::mt19937_64 rng(31);
  std::uniform_real_distribution<double> x(-60.0, 60.0), y(-45.0, 45.0), z(-0.002, 0.002);
  Eigen::Matrix3Xd p(3, 20000);
  for (Eigen::Index k = 0; k < p.cols(); ++k) p.col(k) << x(rng), y(rng), z(rng);
  return generic_motion().apply(p);
}

// A face whose minimum zone is not unique (constructed here, the 5-point case of
// test_chebyshev_optimum.cpp probed 600 times over: 3,000 points): A, B = (-+10, 0, 0),
// C = (0, 0, 1), D, E = (0, -+10, 0.5) about q = (40, 25, -12). Heights z - a x - b y span
// 1 + 10|a| for 10|b| <= 0.5, and the orthogonal width 1 / sqrt(1 + b^2) falls until D or E
// reaches the top at |b| = 0.05: two mirror-image optima b = +-0.05 of equal width, so the
// fit's ambiguity (how far its mid-plane can move among them) is about 1 mm at the corners.
Eigen::Matrix3Xd ambiguous_face() {
  Eigen::Matrix3Xd five(3, 5);
  five << -10.0, 10.0, 0.0, 0.0, 0.0,  //
      0.0, 0.0, 0.0, -10.0, 10.0,      //
      0.0, 0.0, 1.0, 0.5, 0.5;
  five.colwise() += Eigen::Vector3d(40.0, 25.0, -12.0);
  Eigen::Matrix3Xd p(3, 3000);
  for (Eigen::Index k = 0; k < p.cols(); ++k) p.col(k) = five.col(k % 5);
  return generic_motion().apply(p);
}

}  // namespace

// Two frames agree bit for bit in their placement and in datum A's associated plane (normal,
// point, residual values, form, rms, the fit's message and warnings).
void check_same_frame_and_a(const DatumFrameResult& got, const DatumFrameResult& want) {
  CHECK(got.frame.rotation == want.frame.rotation);
  CHECK(got.frame.origin == want.frame.origin);
  CHECK(got.a.plane.normal == want.a.plane.normal);
  CHECK(got.a.plane.point == want.a.plane.point);
  CHECK(got.a.plane.residuals.values == want.a.plane.residuals.values);
  CHECK(got.a.plane.residuals.form == want.a.plane.residuals.form);
  CHECK(got.a.plane.residuals.rms == want.a.plane.residuals.rms);
  CHECK(got.a.plane.summary.message == want.a.plane.summary.message);
  CHECK(got.a.plane.summary.warnings == want.a.plane.summary.warnings);
}

TEST_CASE("a frame given A's minimum-zone plane equals the frame that fits it, bit for bit",
          "[datum][frame][scan]") {
  // Reference: the same frame fitting A's minimum zone itself (the computation the given plane
  // replaces), for every association, on a dense face and on a face whose minimum zone is not
  // unique. The given plane is the nominal frame's (tangent least squares), as the association
  // study passes it on.
  const Motion motion = generic_motion();
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const std::vector<PlanDatum> datums = {plane_datum('A')};
  for (const bool ambiguous : {false, true}) {
    INFO((ambiguous ? "face with two mirror-image minimum zones" : "dense face"));
    const Eigen::Matrix3Xd a = ambiguous ? ambiguous_face() : dense_face();
    const PlaneFit zone = fit_plane_minimum_zone(a);
    // The ambiguous face is what it claims: the fit warns that its mid-plane is not unique.
    CHECK(zone.summary.warnings.empty() == !ambiguous);
    const PointCloud face = cloud(a, "A.csv");
    const DatumFrameResult nominal =
        establish_datum_frame(test::paired(datums, {face}), side, DatumFrameOptions{});
    REQUIRE(nominal.a.minimum_zone);
    // Held without its residual values (form and rms kept): they are A's residuals again.
    CHECK(nominal.a.minimum_zone->residuals.values.size() == 0);
    CHECK(nominal.a.minimum_zone->residuals.form == zone.residuals.form);
    CHECK(nominal.a.minimum_zone->normal == zone.normal);
    CHECK(nominal.a.flatness == zone.residuals.form);
    for (const PlaneAssociation method :
         {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax,
          PlaneAssociation::least_squares, PlaneAssociation::minimum_zone}) {
      INFO(std::string(association_name(method)));
      DatumFrameOptions fitted;
      fitted.a_association = method;
      DatumFrameOptions given = fitted;
      given.a_minimum_zone = nominal.a.minimum_zone;
      const DatumFrameResult f = establish_datum_frame(test::paired(datums, {face}), side, fitted);
      const DatumFrameResult g = establish_datum_frame(test::paired(datums, {face}), side, given);
      check_same_frame_and_a(g, f);
      CHECK(g.a.flatness == f.a.flatness);
      CHECK(g.notes == f.notes);
    }
  }
  // A plane of other points is refused.
  DatumFrameOptions wrong;
  wrong.a_minimum_zone = fit_plane_minimum_zone(dense_face().leftCols(500));
  CHECK_THROWS_AS(establish_datum_frame(test::paired(datums, {cloud(dense_face(), "A.csv")}),
                                        side, wrong),
                  std::invalid_argument);
}

// A dense face A with one point standing 0.5 mm proud of the 4 um band of the others (so
// that its stray-point screen has a note to place), a lobed bore B and a lobed bore C, moved by
// `motion`.
std::vector<PointCloud> proud_a_b_c(const Motion& motion) {
  Eigen::Matrix3Xd a = dense_face();
  a.conservativeResize(3, a.cols() + 1);
  a.col(a.cols() - 1) = motion.apply(Eigen::Vector3d(20.0, 10.0, 0.5));
  return {cloud(a, "A.csv"),
          cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv"),
          cloud(motion.apply(lobed_feature(55.0, 25.0, 4.0, -25.0, -3.0, 0.002, 10.0)), "C.csv")};
}

TEST_CASE("A's flatness fitted beside B and C: the serial order's bits and notes for any "
          "thread count",
          "[datum][frame][scan]") {
  // References: A's flatness is the minimum-zone fit of A's points alone (fit_plane_minimum_zone,
  // the computation the frame ran before B); the notes keep the datums' order (A's stray-point
  // note before B's and C's, as when each datum was associated and screened in turn); and the
  // frame, every datum and every note are the same bits for 1, 2 and 3 threads (the flatness
  // and B and C run side by side from 2 threads on). Face A carries one point standing 0.5 mm
  // proud of the 4 um band of the others, so that its screen has a note to place.
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = a_b_c_bores();
  const std::vector<PointCloud> clouds = proud_a_b_c(motion);
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());
  const PlaneFit zone = fit_plane_minimum_zone(clouds[0].points);

  const auto frame_on = [&](std::size_t threads) {
    DatumFrameOptions options;
    options.fit.threads = options.stray_points.threads = threads;
    return establish_datum_frame(test::paired(datums, clouds), into_material, options);
  };
  const DatumFrameResult one = frame_on(1);
  CHECK(one.a.flatness == zone.residuals.form);
  REQUIRE(one.a.minimum_zone);
  CHECK(one.a.minimum_zone->normal == zone.normal);
  CHECK(one.a.minimum_zone->point == zone.point);
  // A's note first, then C's (B's lobed bore has none to give).
  REQUIRE(one.notes.size() >= 2);
  CHECK_THAT(one.notes.front(), Contains("datum A:") && Contains("suspect"));
  CHECK_THAT(one.notes.back(), Contains("datum C (bore)"));
  for (const std::size_t threads : {2u, 3u}) {
    INFO("threads " << threads);
    const DatumFrameResult r = frame_on(threads);
    CHECK(r.frame.rotation == one.frame.rotation);
    CHECK(r.frame.origin == one.frame.origin);
    CHECK(r.a.plane.normal == one.a.plane.normal);
    CHECK(r.a.plane.point == one.a.plane.point);
    CHECK(r.a.flatness == one.a.flatness);
    REQUIRE(r.a.minimum_zone);
    CHECK(r.a.minimum_zone->normal == one.a.minimum_zone->normal);
    REQUIRE(r.a.stray_points.points.size() == one.a.stray_points.points.size());
    for (std::size_t k = 0; k < r.a.stray_points.points.size(); ++k) {
      CHECK(r.a.stray_points.points[k].index == one.a.stray_points.points[k].index);
      CHECK(r.a.stray_points.points[k].excess == one.a.stray_points.points[k].excess);
    }
    REQUIRE(r.b);
    CHECK(r.b->related_envelope.axis.point == one.b->related_envelope.axis.point);
    CHECK(r.b->related_envelope.radius == one.b->related_envelope.radius);
    CHECK(r.b->axis_on_a == one.b->axis_on_a);
    REQUIRE(r.c_feature);
    CHECK(r.c_feature->axis_on_a == one.c_feature->axis_on_a);
    CHECK(r.notes == one.notes);
  }
}

// proud_a_b_c's part under the generic motion, with its datums and A's material side.
struct ProudPart {
  Motion motion = generic_motion();
  std::vector<PlanDatum> datums = a_b_c_bores();
  std::vector<PointCloud> clouds = proud_a_b_c(motion);
  Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());
};

// Two stray-point screens of the same points agree bit for bit: the count screened, the robust
// scale and every flagged point's index, residual and excess.
void check_same_screen(const StrayPointReport& got, const StrayPointReport& want) {
  CHECK(got.screened == want.screened);
  CHECK(got.robust_scale == want.robust_scale);
  REQUIRE(got.points.size() == want.points.size());
  for (std::size_t k = 0; k < got.points.size(); ++k) {
    CHECK(got.points[k].index == want.points[k].index);
    CHECK(got.points[k].residual == want.points[k].residual);
    CHECK(got.points[k].excess == want.points[k].excess);
  }
}

TEST_CASE("A's screen left to screen_datum_a: the frame that screens A itself, bit for bit",
          "[datum][frame][scan]") {
  // Reference: the frame's own screen of A (the computation screen_datum_a takes off the frame,
  // for evaluate_part to run beside the bores): its report (every flagged point's index,
  // residual and excess, the robust scale, the count) and the notes in the same order (A's
  // first), for the screen on 1 and 2 threads. Face A carries one point 0.5 mm proud of the
  // 4 um band of the others, so that there is a note to place before C's.
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = a_b_c_bores();
  const std::vector<PointCloud> clouds = proud_a_b_c(motion);
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());
  DatumFrameOptions options;
  options.fit.threads = options.stray_points.threads = 2;
  const DatumFrameResult own = establish_datum_frame(test::paired(datums, clouds), into_material,
                                                     options);
  REQUIRE(!own.a.stray_points.points.empty());
  for (const std::size_t threads : {1u, 2u}) {
    INFO("the deferred screen on " << threads << " threads");
    DatumFrameOptions deferred = options;
    deferred.defer_a_screen = true;
    DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material,
                                               deferred);
    // Until screened: no record of A's screen, no note of it; the rest is already the frame's.
    CHECK(r.a.stray_points.screened == 0);
    CHECK(r.notes.size() + 1 == own.notes.size());
    CHECK(r.frame.rotation == own.frame.rotation);
    CHECK(r.frame.origin == own.frame.origin);
    deferred.fit.threads = deferred.stray_points.threads = threads;
    screen_datum_a(clouds[0], r, deferred);
    check_same_screen(r.a.stray_points, own.a.stray_points);
    CHECK(r.notes == own.notes);
    CHECK_THAT(r.notes.front(), Contains("datum A:") && Contains("suspect"));
  }
  // A's residual values released: the note's contacts cannot be found, so it is refused.
  DatumFrameOptions deferred = options;
  deferred.defer_a_screen = true;
  DatumFrameResult released =
      establish_datum_frame(test::paired(datums, clouds), into_material, deferred);
  released.a.plane.residuals.values = Eigen::VectorXd();
  CHECK_THROWS_AS(screen_datum_a(clouds[0], released, deferred), std::invalid_argument);
}

TEST_CASE("a frame given A's least-squares plane equals the frame that fits it, bit for bit",
          "[datum][frame][scan]") {
  // Reference: the same frame fitting A's least-squares plane itself (the computation the given
  // plane replaces: the tangent plane's start, the least-squares association, A's screen and
  // the start of A's minimum-zone plane, the flatness, each fitted it), with A's screen in the frame and deferred to screen_datum_a. Face A
  // carries one point 0.5 mm proud of the others, so that the screen flags it and places a note.
  const ProudPart part;
  const std::vector<PlanDatum>& datums = part.datums;
  const std::vector<PointCloud>& clouds = part.clouds;
  const Eigen::Vector3d& into_material = part.into_material;
  // With its residual values, and without them (evaluate_part's: the tangent plane's start
  // only; the least-squares association and the screen then fit their own).
  const auto least_squares = std::make_shared<const PlaneFit>(fit_plane_least_squares(clouds[0].points));
  auto released = std::make_shared<PlaneFit>(*least_squares);
  released->residuals.values = Eigen::VectorXd();
  for (const PlaneAssociation method :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::least_squares,
        PlaneAssociation::minimum_zone}) {
    for (const int variant : {0, 1, 2, 3}) {
      const bool defer = variant % 2 == 1;
      const bool values = variant < 2;
      INFO(std::string(association_name(method)) << (defer ? ", screen deferred" : "")
                                                 << (values ? "" : ", values released"));
      DatumFrameOptions fitted;
      fitted.a_association = method;
      fitted.defer_a_screen = defer;
      DatumFrameOptions given = fitted;
      given.a_least_squares = values ? least_squares : released;
      DatumFrameResult f = establish_datum_frame(test::paired(datums, clouds), into_material, fitted);
      DatumFrameResult g = establish_datum_frame(test::paired(datums, clouds), into_material, given);
      if (defer) {
        screen_datum_a(clouds[0], f, fitted);
        screen_datum_a(clouds[0], g, given);
      }
      check_same_frame_and_a(g, f);
      // A's flatness: its minimum-zone plane started from the given plane (with or without
      // its values) rather than from a least-squares fit of its own.
      CHECK(std::memcmp(&g.a.flatness, &f.a.flatness, sizeof(double)) == 0);
      CHECK(f.a.flatness > 0.0);
      REQUIRE(g.a.minimum_zone.has_value() == f.a.minimum_zone.has_value());
      if (f.a.minimum_zone) {
        CHECK(g.a.minimum_zone->normal == f.a.minimum_zone->normal);
        CHECK(g.a.minimum_zone->point == f.a.minimum_zone->point);
        CHECK(g.a.minimum_zone->residuals.form == f.a.minimum_zone->residuals.form);
      }
      REQUIRE(g.b);
      CHECK(g.b->axis_on_a == f.b->axis_on_a);
      REQUIRE(!f.a.stray_points.points.empty());
      check_same_screen(g.a.stray_points, f.a.stray_points);
      CHECK(g.notes == f.notes);
    }
  }
  // A plane of other points is refused.
  DatumFrameOptions wrong;
  wrong.a_least_squares =
      std::make_shared<const PlaneFit>(fit_plane_least_squares(clouds[0].points.leftCols(500)));
  CHECK_THROWS_AS(establish_datum_frame(test::paired(datums, clouds), into_material, wrong),
                  std::invalid_argument);
}
