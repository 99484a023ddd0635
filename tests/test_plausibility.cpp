// Plausibility checks between the plan and the data (check/plausibility.hpp), on parts built in
// memory with closed-form geometry: the true element and the side of every surface vector are
// known by construction, so each finding (and each silence) is checked against that, not
// against cylzone's output. docs/evaluation.md, "Plausibility checks", gives the rules.

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <string>

#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/check/plausibility.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/plan/validate_plan.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

constexpr double pi = 3.14159265358979323846;

/// A cylinder of `radius` about the axis through (x, y) parallel to z, probed in 9 rings of 36
/// points from `top` down to `bottom`; vectors are the surface normal out of the material: toward
/// the axis for a bore (`internal`), away from it for a pin.
PointCloud cylinder(double x, double y, double radius, double top, double bottom, bool internal) {
  PointCloud c;
  c.points.resize(3, 9 * 36);
  c.vectors.resize(3, 9 * 36);
  for (int level = 0; level < 9; ++level)
    for (int k = 0; k < 36; ++k) {
      const double angle = 2.0 * pi * (k + 0.25 * level) / 36.0;
      const Eigen::Vector3d radial(std::cos(angle), std::sin(angle), 0.0);
      const double z = top + (bottom - top) * level / 8.0;
      c.points.col(36 * level + k) = Eigen::Vector3d(x, y, z) + radius * radial;
      c.vectors.col(36 * level + k) = internal ? -radial : radial;
    }
  return c;
}

/// Datum A: the plane z = 0, material below, vectors +z (out of the material); datum B: a
/// 20.000-20.021 bore on the z axis; bore P1: 8.000-8.015 at (30, 10), probed from -2 to -30,
/// depth 0 to -32, position 0.03 to A|B. Every figure plausible.
struct Part {
  PartPlan plan;
  PartInputs inputs;
};

Part good_part() {
  Part part;
  PartPlan& plan = part.plan;
  plan.file = "part.toml";
  plan.name = "in memory";
  PlanDatum a;
  a.label = 'A';
  a.kind = FeatureKind::plane;
  a.points = "a.csv";
  a.material_side = Eigen::Vector3d(0.0, 0.0, -1.0);
  PlanDatum b;
  b.label = 'B';
  b.kind = FeatureKind::bore;
  b.points = "b.csv";
  b.size = SizeLimits{20.000, 20.021};
  plan.datums = {a, b};
  PlanBore p1;
  p1.id = "P1";
  p1.points = "p1.csv";
  p1.basic_location = {30.0, 10.0};
  p1.depth_top = 0.0;
  p1.depth_bottom = -32.0;
  p1.size = SizeLimits{8.000, 8.015};
  PlanTolerance position;
  position.tolerance = 0.03;
  position.datums = {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::rmb}};
  p1.position = position;
  plan.bores = {p1};
  validate_plan(plan);

  PointCloud plane;
  plane.points.resize(3, 121);
  plane.vectors.resize(3, 121);
  for (int i = 0; i < 11; ++i)
    for (int j = 0; j < 11; ++j) {
      plane.points.col(11 * i + j) = Eigen::Vector3d(-50.0 + 10.0 * i, -50.0 + 10.0 * j, 0.0);
      plane.vectors.col(11 * i + j) = Eigen::Vector3d::UnitZ();
    }
  plane.source = "a.csv";
  part.inputs.datums = {plane, cylinder(0.0, 0.0, 10.005, -1.0, -15.0, true)};
  part.inputs.datums[1].source = "b.csv";
  part.inputs.bores = {cylinder(30.0, 10.0, 4.004, -2.0, -30.0, true)};
  part.inputs.bores[0].source = "p1.csv";
  return part;
}

EvaluationOptions fast() {
  EvaluationOptions options;
  options.profile.ambiguity = false;
  options.profile.stray_screen = false;
  options.threads = 1;
  return options;
}

PlausibilitySummary assess(const Part& part) {
  const PartEvaluation e = evaluate_part(part.plan, part.inputs, fast());
  return assess_plausibility(part.plan, part.inputs, e);
}

/// The one error of `s` (a copy), after checking there is exactly one.
PlausibilityFinding only_error(const PlausibilitySummary& s) {
  REQUIRE(s.has_error());
  std::size_t errors = 0;
  const PlausibilityFinding* found = nullptr;
  for (const PlausibilityFinding& f : s.findings)
    if (f.severity == FindingSeverity::error) ++errors, found = found ? found : &f;
  CHECK(errors == 1);
  return *found;
}

void one_line(const PlausibilitySummary& s) {
  for (const PlausibilityFinding& f : s.findings) {
    INFO(f.message);
    CHECK(f.message.find('\n') == std::string::npos);
    CHECK(f.message.size() < 1000);
  }
}

}  // namespace

TEST_CASE("a plausible part gives no finding", "[plausibility]") {
  const PlausibilitySummary s = assess(good_part());
  for (const PlausibilityFinding& f : s.findings) INFO(f.message);
  CHECK(s.findings.empty());
  CHECK_FALSE(s.has_error());
}

TEST_CASE("surface vectors that contradict the declared kind", "[plausibility][vectors]") {
  SECTION("datum B declared a pin, its points and vectors a hole: an error naming the key") {
    Part part = good_part();
    part.plan.datums[1].kind = FeatureKind::pin;
    part.plan.datums[1].where.key = "datum.B";
    part.plan.datums[1].where.lines = {{"feature", 12}};
    const PlausibilitySummary s = assess(part);
    one_line(s);
    const PlausibilityFinding f = only_error(s);
    CHECK(f.feature == "datum B");
    CHECK(f.where.key == "datum.B.feature");
    CHECK(f.where.line == 12);
    // All 324 ring vectors are radial, so all are counted and all point toward the axis.
    CHECK_THAT(f.message, Contains("324 of 324 surface vectors (i,j,k) in \"b.csv\" point toward "
                                   "the axis, as a bore's do"));
    CHECK_THAT(f.message, Contains("declared a pin"));
    try {
      require_plausible(part.plan, s);
      FAIL("accepted");
    } catch (const InputError& e) {
      CHECK(e.file() == "part.toml");
      CHECK(e.line() == 12);
      CHECK(e.key() == "datum.B.feature");
    }
  }
  SECTION("a bore whose vectors are all reversed: an error at its points") {
    Part part = good_part();
    part.inputs.bores[0].vectors *= -1.0;
    const PlausibilitySummary s = assess(part);
    const PlausibilityFinding f = only_error(s);
    CHECK(f.feature == "bore P1");
    CHECK(f.where.key == "bore[P1].points");
    CHECK_THAT(f.message, Contains("away from the axis, as a pin's do"));
    CHECK_THROWS_AS(require_plausible(part.plan, s), InputError);
  }
  SECTION("a minority reversed: a warning with the count") {
    Part part = good_part();
    for (int j = 0; j < 7; ++j) part.inputs.bores[0].vectors.col(40 * j) *= -1.0;
    const PlausibilitySummary s = assess(part);
    REQUIRE(s.findings.size() == 1);
    CHECK(s.findings[0].severity == FindingSeverity::warning);
    CHECK_THAT(s.findings[0].message, Contains("bore P1: 7 of 324 surface vectors"));
    CHECK_THAT(s.findings[0].message, Contains("(2.2 %)"));
    CHECK_THAT(s.findings[0].message, Contains("(plan key bore[P1].points)"));
    CHECK_NOTHROW(require_plausible(part.plan, s));
  }
  SECTION("vectors near the tangent plane tell no side and are not counted") {
    // Turned 70 degrees about the axial direction: the radial component is cos 70 = 0.34 <
    // cos 60, so the reversed vectors say nothing.
    Part part = good_part();
    Eigen::Matrix3Xd& v = part.inputs.bores[0].vectors;
    for (Eigen::Index j = 0; j < v.cols(); ++j) {
      const Eigen::Vector3d radial = -v.col(j);
      const Eigen::Vector3d tangent = Eigen::Vector3d::UnitZ().cross(radial);
      v.col(j) = std::cos(70.0 * pi / 180.0) * radial + std::sin(70.0 * pi / 180.0) * tangent;
    }
    CHECK(assess(part).findings.empty());
  }
  SECTION("datum A's vectors into the given material side: an error at material_side") {
    Part part = good_part();
    part.inputs.datums[0].vectors *= -1.0;
    const PlausibilityFinding f = only_error(assess(part));
    CHECK(f.feature == "datum A");
    CHECK(f.where.key == "datum.A.material_side");
    CHECK_THAT(f.message, Contains("121 of 121"));
  }
}

TEST_CASE("a fitted size far outside its limits", "[plausibility][size]") {
  SECTION("3 to 10 size tolerances outside: a warning") {
    // P1's LS diameter is 8.008 by construction; limits 8.090-8.105 leave it 0.082 below, 5.5
    // size tolerances of 0.015 (1 % of the size: a real, if gross, machining error).
    Part part = good_part();
    part.plan.bores[0].size = SizeLimits{8.090, 8.105};
    const PlausibilitySummary s = assess(part);
    REQUIRE(s.findings.size() == 1);
    CHECK(s.findings[0].severity == FindingSeverity::warning);
    CHECK_THAT(s.findings[0].message, Contains("least-squares diameter 8.0080 mm lies 0.0820 mm "
                                               "below the lower limit 8.0900 mm (5.5 size "
                                               "tolerances"));
  }
  SECTION("within 3 size tolerances: silent") {
    Part part = good_part();
    part.plan.bores[0].size = SizeLimits{8.040, 8.055};  // 0.032 below: 2.1 tolerances
    CHECK(assess(part).findings.empty());
  }
  SECTION("beyond 10 size tolerances and 5 % of the size: an error") {
    Part part = good_part();
    part.plan.bores[0].size = SizeLimits{10.000, 10.015};  // 1.992 below: 133 T, 20 %
    const PlausibilityFinding f = only_error(assess(part));
    CHECK(f.where.key == "bore[P1].size");
    CHECK_THAT(f.message, Contains("the wrong point file, limits or unit?"));
  }
  SECTION("datum B's related mating size is checked too") {
    Part part = good_part();
    part.plan.datums[1].size = SizeLimits{25.000, 25.021};
    const PlausibilityFinding f = only_error(assess(part));
    CHECK(f.feature == "datum B");
    CHECK(f.where.key == "datum.B.size");
    CHECK_THAT(f.message, Contains("related mating size 20.0100 mm"));
  }
  SECTION("millimetre data under units = inch: the 25.4 ratio is named") {
    // The plan's limits are right in inches (8 mm = 0.31496 in); the file's numbers are
    // millimetres read as inches, so every length is 25.4 times too large (1 in = 25.4 mm
    // exactly: International Yard and Pound Agreement, 1959; NIST SP 811, from memory).
    Part part = good_part();
    part.plan.unit = LengthUnit::inch;
    for (PointCloud& c : part.inputs.datums) c.points *= 25.4;
    for (PointCloud& c : part.inputs.bores) c.points *= 25.4;
    for (PlanBore& b : part.plan.bores) {
      b.basic_location *= 25.4;
      *b.depth_bottom *= 25.4;
    }
    const PlausibilitySummary s = assess(part);
    // Datum B is first: its mating size 20.01 x 25.4 mm against 20.000-20.021 mm.
    REQUIRE(s.has_error());
    const PlausibilityFinding f = s.findings.front();
    CHECK(f.severity == FindingSeverity::error);
    CHECK(f.where.key == "datum.B.size");
    CHECK_THAT(f.message, Contains("a unit mix-up? plan units are inch, the data look like mm"));
    CHECK_THAT(f.message, Contains("ratio 25.40 to the limits' mean"));
    // Lengths are quoted in the plan's unit: 20.01 x 25.4 mm = 20.01 in.
    CHECK_THAT(f.message, Contains("related mating size 20.01000 inch"));
  }
  SECTION("inch data under units = mm") {
    Part part = good_part();
    for (PointCloud& c : part.inputs.datums) c.points /= 25.4;
    for (PointCloud& c : part.inputs.bores) c.points /= 25.4;
    for (PlanBore& b : part.plan.bores) {
      b.basic_location /= 25.4;
      *b.depth_bottom /= 25.4;
    }
    const PlausibilitySummary s = assess(part);
    REQUIRE(s.has_error());
    CHECK_THAT(s.findings.front().message,
               Contains("a unit mix-up? plan units are mm, the data look like inch"));
  }
}

TEST_CASE("a zone against the fitted diameter when the plan has no limits of size",
          "[plausibility][tolerance]") {
  Part part = good_part();
  part.plan.bores[0].size.reset();
  part.plan.bores[0].position->tolerance = 2.0;  // 25 % of the fitted 8.008
  PlausibilitySummary s = assess(part);
  REQUIRE(s.findings.size() == 1);
  CHECK(s.findings[0].severity == FindingSeverity::warning);
  CHECK_THAT(s.findings[0].message, Contains("the position tolerance 2 mm is 25 % of the fitted diameter 8.008 mm"));
  part.plan.bores[0].position->tolerance = 20.0;  // 20 meant as 0.020
  s = assess(part);
  CHECK_THAT(only_error(s).message, Contains("was 0.02 meant?"));
  CHECK(only_error(s).where.key == "bore[P1].position.tolerance");
  part.plan.bores[0].position->wide_zone_intended = true;
  CHECK(assess(part).findings.empty());
}

TEST_CASE("depth ranges and projected zones beyond the probed band", "[plausibility][depth]") {
  // P1 is probed from -2 to -30: a band of 28.
  SECTION("beyond by less than 3 probed lengths: no finding of its own") {
    Part part = good_part();
    part.plan.bores[0].depth_bottom = -100.0;  // 2 + 70 = 72 < 84
    CHECK_FALSE(assess(part).has_error());
  }
  SECTION("beyond by more than 3 probed lengths: an error at depth") {
    Part part = good_part();
    part.plan.bores[0].depth_bottom = -120.0;  // 2 + 90 = 92 > 84
    const PlausibilityFinding f = only_error(assess(part));
    CHECK(f.where.key == "bore[P1].depth");
    CHECK_THAT(f.message, Contains("extends 92.0000 mm beyond the probed band -2.0000 mm to "
                                   "-30.0000 mm, more than 3 times its length 28.0000 mm"));
  }
  SECTION("a range that does not meet the probed band: an error") {
    Part part = good_part();
    part.plan.bores[0].depth_top = -40.0;
    part.plan.bores[0].depth_bottom = -50.0;
    CHECK_THAT(only_error(assess(part)).message, Contains("does not meet the probed band"));
  }
  SECTION("a projected zone beyond one probed length: a warning, never an error") {
    Part part = good_part();
    part.plan.bores[0].position->projected_height = 40.0;  // 0..40 above A: 42 beyond
    const PlausibilitySummary s = assess(part);
    CHECK_FALSE(s.has_error());
    REQUIRE(s.findings.size() == 1);
    CHECK_THAT(s.findings[0].message, Contains("the projected zone 40.0000 mm to 0.0000 mm lies "
                                               "up to 42.0000 mm beyond the probed band"));
    part.plan.bores[0].position->projected_height = 20.0;  // 22 < 28
    CHECK(assess(part).findings.empty());
  }
}

TEST_CASE("findings do not depend on how the part sat on the machine", "[plausibility][rigid]") {
  Part part = good_part();
  part.plan.datums[1].kind = FeatureKind::pin;  // an error
  for (int j = 0; j < 5; ++j) part.inputs.bores[0].vectors.col(50 * j) *= -1.0;  // a warning
  part.plan.bores[0].size = SizeLimits{8.090, 8.105};                          // a warning
  const PlausibilitySummary before = assess(part);
  const Eigen::Matrix3d r =
      Eigen::AngleAxisd(0.9, Eigen::Vector3d(0.2, -0.7, 0.4).normalized()).toRotationMatrix();
  const Eigen::Vector3d t(310.0, -45.0, 120.0);
  for (PointCloud* c : {&part.inputs.datums[0], &part.inputs.datums[1], &part.inputs.bores[0]}) {
    c->points = (r * c->points).colwise() + t;
    c->vectors = r * c->vectors;
  }
  part.plan.datums[0].material_side = r * *part.plan.datums[0].material_side;
  const PlausibilitySummary after = assess(part);
  REQUIRE(after.findings.size() == before.findings.size());
  REQUIRE(before.findings.size() == 3);
  for (std::size_t i = 0; i < before.findings.size(); ++i) {
    CHECK(after.findings[i].severity == before.findings[i].severity);
    CHECK(after.findings[i].message == before.findings[i].message);
  }
}

TEST_CASE("check_plausibility carries warnings to their bore and refuses errors",
          "[plausibility]") {
  Part part = good_part();
  part.plan.bores[0].size = SizeLimits{8.090, 8.105};
  part.plan.warnings = {"a plan warning"};
  PartEvaluation e = evaluate_part(part.plan, part.inputs, fast());
  const std::size_t bore_warnings = e.bores[0].warnings.size();
  check_plausibility(part.plan, part.inputs, e);
  REQUIRE(e.bores[0].warnings.size() == bore_warnings + 1);
  CHECK_THAT(e.bores[0].warnings.back(), Catch::Matchers::StartsWith("least-squares diameter"));
  REQUIRE_FALSE(e.warnings.empty());
  CHECK(e.warnings.front() == "a plan warning");

  part.plan.datums[1].kind = FeatureKind::pin;
  PartEvaluation pin = evaluate_part(part.plan, part.inputs, fast());
  CHECK_THROWS_AS(check_plausibility(part.plan, part.inputs, pin), InputError);
  PartInputs fewer = part.inputs;
  fewer.bores.clear();
  CHECK_THROWS_AS(assess_plausibility(part.plan, fewer, pin), std::invalid_argument);
}

TEST_CASE("a real pin and a real slot pass; a slot's reversed vectors say tab",
          "[plausibility][vectors]") {
  // Datum B a pin of 20.000-20.021 standing on A (z from 1 to 15), its vectors away from its
  // axis; datum C a slot 6.000-6.020 wide centred on (60, 0) along x, faces y = +-3.005 from z =
  // -2 to -10, vectors into the gap (toward the centre plane). Both as their kinds: silent.
  Part part = good_part();
  part.plan.datums[1].kind = FeatureKind::pin;
  part.inputs.datums[1] = cylinder(0.0, 0.0, 10.005, 15.0, 1.0, false);
  PlanDatum c;
  c.label = 'C';
  c.kind = FeatureKind::slot;
  c.points = "c.csv";
  c.basic_location = Eigen::Vector2d(60.0, 0.0);
  c.size = SizeLimits{6.000, 6.020};
  part.plan.datums.push_back(c);
  part.plan.bores[0].position->datums.push_back({'C', MaterialBoundary::rmb});
  validate_plan(part.plan);
  PointCloud slot;
  slot.points.resize(3, 2 * 5 * 11);
  slot.vectors.resize(3, 2 * 5 * 11);
  int n = 0;
  for (double side : {1.0, -1.0})
    for (int level = 0; level < 5; ++level)
      for (int k = 0; k < 11; ++k, ++n) {
        slot.points.col(n) = Eigen::Vector3d(55.0 + k, side * 3.005, -2.0 - 2.0 * level);
        slot.vectors.col(n) = Eigen::Vector3d(0.0, -side, 0.0);
      }
  slot.source = "c.csv";
  part.inputs.datums.push_back(slot);
  {
    const PlausibilitySummary s = assess(part);
    for (const PlausibilityFinding& f : s.findings) INFO(f.message);
    CHECK(s.findings.empty());
  }
  part.inputs.datums[2].vectors *= -1.0;
  const PlausibilityFinding f = only_error(assess(part));
  CHECK(f.feature == "datum C");
  CHECK(f.where.key == "datum.C.feature");
  CHECK_THAT(f.message, Contains("110 of 110 surface vectors (i,j,k) in \"c.csv\" point away "
                                 "from the centre plane, as a tab's do"));
}
