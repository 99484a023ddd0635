// evaluate_part and check_part's decision when a bore's geometry cannot be evaluated
// (evaluate_part.hpp, part_check.hpp, decide/bore_characteristics.hpp), and the plan key
// `axis_direction = "nominal"` that holds a bore's axis at its nominal direction.
//
// References outside the code under test:
//  * a bore's figures depend on its own points, the datum frame and its plan only (the
//    definition of a position zone relative to a datum reference frame, ASME Y14.5-2018
//    section 7 / ISO 1101:2017, from memory for the clauses): adding a bore that cannot be
//    evaluated must leave every other bore's figures bit for bit as a run without it;
//  * a simultaneous requirement (ASME Y14.5-2018 4.19, from memory for the clause) moves the
//    frame once for every feature of the pattern: without one member the shared motion is
//    undetermined, so its mobility-based position cannot be decided;
//  * the three-outcome decision (ISO 14253-1:2017 section 5, from memory): what is not
//    measured is neither proven to conform nor proven not to;
//  * for the axis held at the nominal direction w: the centre of a circle whose plane is
//    perpendicular to w, in closed form (a ring of points perpendicular to w centred at c gives
//    a position of 2 |c - true position| measured perpendicular to w); and a scipy
//    least-squares circle fit of noisy, partial, tilted one-level probing projected along w
//    (tests/reference/crosscheck_held_direction.py, from the hidden case "[held-cases]").

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <cstring>
#include <iomanip>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "case_file.hpp"
#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/plan/validate_plan.hpp"
#include "expect_input_error.hpp"
#include "ring_clouds.hpp"
#include "same_results.hpp"
#include "check/detail/frame_points.hpp"
#include "cylzone/datum/datum_frame.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;
using cylzone::testing::same_characteristics;
using cylzone::testing::same_position;
using cylzone::testing::plane_a;
using cylzone::testing::rings;

namespace {

constexpr double pi = 3.14159265358979323846;

const std::vector<double> deep = {-2.0, -6.0, -10.0, -14.0, -18.0, -22.0, -26.0};

PlanDatum datum(char label, FeatureKind kind) {
  PlanDatum d;
  d.label = label;
  d.kind = kind;
  return d;
}

PlanBore bore(const std::string& id, double x, double y, const std::vector<DatumReference>& refs,
              MaterialCondition condition = MaterialCondition::rfs) {
  PlanBore b;
  b.id = id;
  b.basic_location = Eigen::Vector2d(x, y);
  b.depth_top = 0.0;
  b.depth_bottom = -28.0;
  b.size = SizeLimits{7.99, 8.03};
  b.axis = BoreAxisMethod::least_squares;
  PlanTolerance position;
  position.tolerance = 0.05;
  position.condition = condition;
  position.datums = refs;
  b.position = position;
  PlanTolerance perpendicularity;
  perpendicularity.tolerance = 0.02;
  perpendicularity.datums = {DatumReference{'A', MaterialBoundary::rmb}};
  b.perpendicularity = perpendicularity;
  b.cylindricity = 0.01;
  return b;
}

/// A part with datums A (plane z = 0), B (a bore of diameter 20 at the origin) and C (a bore of
/// diameter 8 at (60, 0)), so the frame is the measurement frame; B at `b_boundary`.
struct Part {
  PartPlan plan;
  PartInputs inputs;
};

Part part_abc(MaterialBoundary b_boundary) {
  Part p;
  p.plan.file = "in-memory plan";
  PlanDatum a = datum('A', FeatureKind::plane);
  a.material_side = Eigen::Vector3d(0.0, 0.0, -1.0);
  PlanDatum b = datum('B', FeatureKind::bore);
  b.size = SizeLimits{19.99, 20.04};
  b.boundary = b_boundary;
  PlanDatum c = datum('C', FeatureKind::bore);
  c.basic_location = Eigen::Vector2d(60.0, 0.0);
  c.size = SizeLimits{7.99, 8.03};
  p.plan.datums = {a, b, c};
  p.inputs.datums = {plane_a(), rings(0.0, 0.0, 0.0, 10.01, deep, 36),
                     rings(60.0, 0.0, 0.0, 4.005, deep)};
  return p;
}

const std::vector<DatumReference> abc = {{'A', MaterialBoundary::rmb, false},
                                         {'B', MaterialBoundary::rmb, false},
                                         {'C', MaterialBoundary::rmb, false}};
const std::vector<DatumReference> ab_mmb_c = {{'A', MaterialBoundary::rmb, false},
                                              {'B', MaterialBoundary::mmb, false},
                                              {'C', MaterialBoundary::rmb, false}};

/// Three bores: Q1 and Q3 probed over their depth, Q2 (between them in plan order) at `q2`.
void add_bores(Part& p, const std::vector<DatumReference>& refs, const PointCloud& q2) {
  p.plan.bores = {bore("Q1", 30.0, 20.0, refs), bore("Q2", -30.0, 25.0, refs),
                  bore("Q3", 10.0, -40.0, refs)};
  p.inputs.bores = {rings(30.004, 20.0, 0.0004, 4.008, deep), q2,
                    rings(10.0, -40.006, -0.0003, 4.006, deep)};
}

EvaluationOptions quick() {
  EvaluationOptions options;
  options.profile.ambiguity = false;
  return options;
}

std::vector<Characteristic> decided(const PartPlan& plan, const PartEvaluation& e) {
  std::vector<Characteristic> out;
  for (std::size_t i = 0; i < e.bores.size(); ++i)
    for (Characteristic& c : bore_characteristics(e.bores[i], plan.bores[i])) out.push_back(c);
  return out;
}

/// Every figure of an evaluated bore, compared exactly.
void same_bore(const BoreResult& x, const BoreResult& y) {
  INFO("bore " << x.id);
  REQUIRE(x.evaluated());
  REQUIRE(y.evaluated());
  CHECK(x.axis.point == y.axis.point);
  CHECK(x.axis.direction == y.axis.direction);
  CHECK(x.least_squares.radius == y.least_squares.radius);
  CHECK(x.mating_envelope.radius == y.mating_envelope.radius);
  CHECK(x.minimum_material.radius == y.minimum_material.radius);
  CHECK(x.form.cylindricity == y.form.cylindricity);
  CHECK(x.size.two_point_min == y.size.two_point_min);
  CHECK(x.size.two_point_max == y.size.two_point_max);
  same_position(x.position, y.position);
  REQUIRE(x.perpendicularity.has_value() == y.perpendicularity.has_value());
  if (x.perpendicularity) CHECK(x.perpendicularity->value == y.perpendicularity->value);
  CHECK(x.warnings == y.warnings);
  same_characteristics(x, y);
}

}  // namespace

TEST_CASE("a bore probed at one level is not evaluated and the others are evaluated as without it",
          "[check][partial]") {
  Part with = part_abc(MaterialBoundary::rmb);
  add_bores(with, abc, rings(-30.0, 25.0, 0.0, 4.01, {-12.0}));  // Q2: one level
  const PartEvaluation e = evaluate_part(with.plan, with.inputs, quick());
  REQUIRE(e.bores.size() == 3);
  const BoreResult& q2 = e.bores[1];
  CHECK_FALSE(q2.evaluated());
  CHECK(q2.id == "Q2");
  // One printable line naming the bore, the cause and the plan key that fixes it.
  CHECK_THAT(q2.not_evaluated, Contains("bore Q2:") && Contains("one cross-section") &&
                                   Contains("axis_direction = \"nominal\""));
  CHECK(q2.not_evaluated.find('\n') == std::string::npos);
  CHECK(q2.not_evaluated.size() < 1000);

  // With a derived median line the advice names the axis methods the key works with.
  Part median = with;
  median.plan.bores[1].axis = BoreAxisMethod::median_line;
  const PartEvaluation m = evaluate_part(median.plan, median.inputs, quick());
  CHECK_THAT(m.bores[1].not_evaluated,
             Contains("axis = \"least-squares\"") && Contains("axis_direction = \"nominal\""));

  // The same part without Q2: Q1 and Q3 bit for bit the same.
  Part without = with;
  without.plan.bores.erase(without.plan.bores.begin() + 1);
  without.inputs.bores.erase(without.inputs.bores.begin() + 1);
  const PartEvaluation reference = evaluate_part(without.plan, without.inputs, quick());
  same_bore(e.bores[0], reference.bores[0]);
  same_bore(e.bores[2], reference.bores[1]);

  // Decide: one row per characteristic the plan asks for, ids as an evaluated bore has them,
  // each not proven with the reason; the part is not proven (exit 3), since nothing else fails.
  const std::vector<Characteristic> all = decided(with.plan, e);
  for (const char* kind :
       {"position", "perpendicularity", "size/lower", "size/upper", "cylindricity"}) {
    INFO(kind);
    const Characteristic* c = find_characteristic(all, std::string("Q2/") + kind);
    REQUIRE(c != nullptr);
    CHECK(c->verdict == Verdict::not_proven);
    CHECK(c->not_evaluated == q2.not_evaluated);
    CHECK(c->decisive);
  }
  CHECK(find_characteristic(all, "Q2/position")->tolerance == 0.05);
  CHECK(find_characteristic(all, "Q2/size/upper")->tolerance == 8.03);
  CHECK(feature_verdict(all, "Q1") == Verdict::conforms);
  CHECK(feature_verdict(all, "Q3") == Verdict::conforms);
  CHECK(combine(all) == Verdict::not_proven);
  // bore_characteristics without the plan refuses a bore it cannot list.
  CHECK_THROWS_AS(bore_characteristics(q2), std::invalid_argument);

  // Any proven non-conformance still decides the part (exit 1): Q1's position zone tightened
  // below its measured value.
  Part failing = with;
  failing.plan.bores[0].position->tolerance = 0.001;
  const PartEvaluation f = evaluate_part(failing.plan, failing.inputs, quick());
  const std::vector<Characteristic> failing_all = decided(failing.plan, f);
  CHECK(find_characteristic(failing_all, "Q1/position")->verdict == Verdict::does_not_conform);
  CHECK(combine(failing_all) == Verdict::does_not_conform);

  // The sensitivity study skips Q2 with a note and still studies the others.
  const std::vector<BoreSensitivity> s =
      association_sensitivity(with.plan, with.inputs, e, quick());
  REQUIRE(s.size() == 3);
  CHECK(s[1].rows.empty());
  CHECK_THAT(s[1].skipped, Contains("not evaluated"));
  CHECK(s[0].rows.size() == 4);
  CHECK(s[0].skipped.empty());
}

TEST_CASE("other geometry that cannot be evaluated: too few points, no point within the depth",
          "[check][partial]") {
  Part p = part_abc(MaterialBoundary::rmb);
  PointCloud few;
  few.points = rings(-30.0, 25.0, 0.0, 4.0, {-5.0, -15.0}).points.leftCols(4);
  add_bores(p, abc, few);
  const PartEvaluation e = evaluate_part(p.plan, p.inputs, quick());
  CHECK_THAT(e.bores[1].not_evaluated, Contains("bore Q2:"));
  // Not the one-level advice: four points are too few for any direction.
  CHECK(e.bores[1].not_evaluated.find("axis_direction") == std::string::npos);
  CHECK(e.bores[0].evaluated());
  CHECK(e.bores[2].evaluated());

  // The plan's depth range lies below every probed point of Q1 and the virtual condition needs
  // points within it (position at MMC).
  Part shallow = part_abc(MaterialBoundary::rmb);
  add_bores(shallow, abc, rings(-30.0, 25.0, 0.0, 4.01, deep));
  shallow.plan.bores[0].depth_top = -40.0;
  shallow.plan.bores[0].depth_bottom = -50.0;
  shallow.plan.bores[0].position->condition = MaterialCondition::mmc;
  const PartEvaluation s = evaluate_part(shallow.plan, shallow.inputs, quick());
  CHECK_THAT(s.bores[0].not_evaluated, Contains("bore Q1:") && Contains("depth range"));
  CHECK(s.bores[1].evaluated());
  const std::vector<Characteristic> all = decided(shallow.plan, s);
  REQUIRE(find_characteristic(all, "Q1/virtual-condition") != nullptr);
  CHECK(find_characteristic(all, "Q1/virtual-condition")->verdict == Verdict::not_proven);
}

TEST_CASE("a pattern with one bore not evaluated: mobility rows not proven, fixed frame shown",
          "[check][partial][mobility]") {
  // Datum B at MMB: the pattern Q1, Q2, Q3 (A|B(M)|C) shares one shift of the frame.
  Part good = part_abc(MaterialBoundary::mmb);
  add_bores(good, ab_mmb_c, rings(-30.0, 25.005, 0.0002, 4.01, deep));
  const PartEvaluation reference = evaluate_part(good.plan, good.inputs, quick());
  REQUIRE(reference.bores[0].position_with_mobility.has_value());

  Part partial = part_abc(MaterialBoundary::mmb);
  add_bores(partial, ab_mmb_c, rings(-30.0, 25.005, 0.0, 4.01, {-12.0}));
  const PartEvaluation e = evaluate_part(partial.plan, partial.inputs, quick());
  CHECK_FALSE(e.bores[1].evaluated());
  for (std::size_t i : {std::size_t{0}, std::size_t{2}}) {
    const BoreResult& b = e.bores[i];
    INFO("bore " << b.id);
    CHECK_FALSE(b.position_with_mobility.has_value());
    CHECK_THAT(b.mobility_not_evaluated, Contains("Q2") && Contains("simultaneous requirement"));
    // Its own figures in the unmoved frame, as in the run where every bore is evaluated.
    same_position(b.position, reference.bores[i].position);
  }
  const std::vector<Characteristic> all = decided(partial.plan, e);
  const Characteristic* fixed = find_characteristic(all, "Q1/position");
  const Characteristic* moved = find_characteristic(all, "Q1/position/mobility");
  REQUIRE(fixed != nullptr);
  REQUIRE(moved != nullptr);
  CHECK_FALSE(fixed->decisive);
  CHECK(fixed->value == reference.bores[0].position->value);
  CHECK(moved->decisive);
  CHECK(moved->verdict == Verdict::not_proven);
  CHECK(moved->not_evaluated == e.bores[0].mobility_not_evaluated);
  // Q2's own rows keep the ids a full run gives it.
  REQUIRE(find_characteristic(all, "Q2/position/mobility") != nullptr);
  CHECK(find_characteristic(all, "Q2/position/mobility")->verdict == Verdict::not_proven);
  CHECK(combine(all) == Verdict::not_proven);

  // Q1 at MMC: its boundary on the true position needs the pattern's shared motion too, so the
  // virtual-condition row is not proven for the same reason (not decided in the fixed frame).
  partial.plan.bores[0].position->condition = MaterialCondition::mmc;
  const PartEvaluation mmc = evaluate_part(partial.plan, partial.inputs, quick());
  REQUIRE(mmc.bores[0].virtual_condition.has_value());
  CHECK_FALSE(mmc.bores[0].virtual_condition_with_mobility.has_value());
  const std::vector<Characteristic> mmc_all = decided(partial.plan, mmc);
  const Characteristic* boundary = find_characteristic(mmc_all, "Q1/virtual-condition");
  REQUIRE(boundary != nullptr);
  CHECK(boundary->verdict == Verdict::not_proven);
  CHECK(boundary->not_evaluated == mmc.bores[0].mobility_not_evaluated);
}

TEST_CASE("a bore's boundary points are kept only where a moved frame measures them again",
          "[check][memory]") {
  // Q1..Q3 at MMC. With B at MMB the frame may shift and the boundary search measures every
  // bore's points again: they are kept. With B at RMB the frame is fixed: they are released
  // once the bore is evaluated, and the virtual condition is the one evaluate_bore finds on
  // all the points (the frame here is the measurement frame; reference: the bore alone).
  for (const MaterialBoundary boundary : {MaterialBoundary::mmb, MaterialBoundary::rmb}) {
    const bool mobile = boundary == MaterialBoundary::mmb;
    Part p = part_abc(boundary);
    add_bores(p, mobile ? ab_mmb_c : abc, rings(-30.0, 25.005, 0.0002, 4.01, deep));
    for (PlanBore& b : p.plan.bores) b.position->condition = MaterialCondition::mmc;
    const PartEvaluation e = evaluate_part(p.plan, p.inputs, quick());
    for (std::size_t i = 0; i < e.bores.size(); ++i) {
      const BoreResult& b = e.bores[i];
      INFO("bore " << b.id << (mobile ? ", B at MMB" : ", B at RMB"));
      REQUIRE(b.virtual_condition.has_value());
      CHECK((b.boundary_points.cols() > 0) == mobile);
      CHECK(b.virtual_condition_with_mobility.has_value() == mobile);
      BoreEvaluationOptions alone;
      alone.fit.assess_ambiguity = false;
      const BoreResult reference = evaluate_bore(p.plan.bores[i], p.inputs.bores[i].points, alone);
      REQUIRE(reference.boundary_points.cols() > 0);
      CHECK(b.virtual_condition->clearance ==
            Approx(reference.virtual_condition->clearance).margin(1e-12));
    }
  }
}

TEST_CASE("datum clouds: only those preparation changed are held again", "[check][memory]") {
  // A datum passed unchanged is read from the inputs (no second copy of a dense face); one
  // whose points preparation changes (here datum A's residual rejection after the fit, which
  // removes an injected spike) is held as prepared. The frame is built from exactly those
  // points: the same frame as the one built from the prepared cloud directly.
  Part p = part_abc(MaterialBoundary::rmb);
  add_bores(p, abc, rings(-30.0, 25.005, 0.0002, 4.01, deep));
  const PartEvaluation plain = evaluate_part(p.plan, p.inputs, quick());
  REQUIRE(plain.datum_clouds.size() == p.plan.datums.size());
  for (std::size_t k = 0; k < p.plan.datums.size(); ++k) {
    CHECK(plain.datum_clouds[k].points.cols() == 0);
    CHECK(&datum_cloud_used(plain, p.inputs, k) == &p.inputs.datums[k]);
  }

  // A spike 0.5 mm off datum A's face: removed by the residual stage (docs/methods.md).
  Part spiked = p;
  Eigen::Matrix3Xd& a = spiked.inputs.datums[0].points;
  const Eigen::Index n = a.cols();
  a.conservativeResize(3, n + 1);
  a.col(n) = a.col(0) + 0.5 * Eigen::Vector3d::UnitZ();
  spiked.plan.datums[0].probe.residual_rejection = true;
  const PartEvaluation e = evaluate_part(spiked.plan, spiked.inputs, quick());
  REQUIRE(e.datum_clouds[0].points.cols() == n);
  CHECK(&datum_cloud_used(e, spiked.inputs, 0) == &e.datum_clouds[0]);
  CHECK(&datum_cloud_used(e, spiked.inputs, 1) == &spiked.inputs.datums[1]);
  // Reference: the plain run on the clean points, where A's face is the same points.
  CHECK(e.datums.frame.origin.isApprox(plain.datums.frame.origin, 1e-12));
  CHECK((e.datums.frame.rotation - plain.datums.frame.rotation).norm() < 1e-12);
}

TEST_CASE("a datum feature that cannot be evaluated stops the evaluation, naming the datum",
          "[check][partial]") {
  // Every bore's zone is located in the frame all the datums build: nothing can be evaluated.
  Part p = part_abc(MaterialBoundary::rmb);
  add_bores(p, abc, rings(-30.0, 25.0, 0.0, 4.01, deep));
  p.inputs.datums[2].points = p.inputs.datums[2].points.leftCols(2).eval();
  try {
    evaluate_part(p.plan, p.inputs, quick());
    FAIL("a datum C of two points was accepted");
  } catch (const FitError& e) {
    CHECK_THAT(std::string(e.what()), Contains("datum C"));
  }
}

TEST_CASE("axis_direction = nominal: position on the held axis, perpendicularity not evaluated",
          "[check][partial][held]") {
  // Q2 probed at one level, 12 mm deep, on a ring perpendicular to z centred at
  // (-30 + 0.006, 25 - 0.008): with the direction held at z the axis is the vertical line
  // through that centre, so the position over any depth is 2 * 0.010 = 0.020 (closed form).
  Part p = part_abc(MaterialBoundary::rmb);
  add_bores(p, abc, rings(-30.0 + 0.006, 25.0 - 0.008, 0.0, 4.01, {-12.0}, 36));
  p.plan.bores[1].axis_direction = AxisDirection::nominal;
  for (BoreAxisMethod method : {BoreAxisMethod::least_squares, BoreAxisMethod::mating_envelope}) {
    p.plan.bores[1].axis = method;
    const PartEvaluation e = evaluate_part(p.plan, p.inputs, quick());
    const BoreResult& q2 = e.bores[1];
    INFO(axis_method_name(method));
    REQUIRE(q2.evaluated());
    CHECK(q2.direction_held);
    REQUIRE(q2.position);
    CHECK(q2.position->value == Approx(0.020).margin(1e-9));
    CHECK(q2.axis.direction.isApprox(Eigen::Vector3d::UnitZ(), 1e-15));
    CHECK(q2.size.least_squares == Approx(8.02).margin(1e-9));
    const std::vector<Characteristic> c = bore_characteristics(q2, p.plan.bores[1]);
    const Characteristic* perpendicularity = find_characteristic(c, "Q2/perpendicularity");
    REQUIRE(perpendicularity != nullptr);
    CHECK(perpendicularity->verdict == Verdict::not_proven);
    CHECK(perpendicularity->not_evaluated == direction_held_reason);
    CHECK(find_characteristic(c, "Q2/position")->verdict == Verdict::conforms);
    CHECK(find_characteristic(c, "Q2/position")->not_evaluated.empty());
    // The others are as they were, and the part is not proven: perpendicularity is unknown.
    CHECK(e.bores[0].evaluated());
    CHECK_FALSE(e.bores[0].direction_held);
    CHECK(combine(decided(p.plan, e)) == Verdict::not_proven);
  }

  // Results do not depend on how the part sat on the machine (common practice): the same part
  // turned and moved gives the same held position and the same decisions. The nominal
  // direction is held in the datum frame, which moves with the part.
  {
    p.plan.bores[1].axis = BoreAxisMethod::least_squares;
    const PartEvaluation before = evaluate_part(p.plan, p.inputs, quick());
    const Eigen::Matrix3d r =
        Eigen::AngleAxisd(0.7, Eigen::Vector3d(0.3, -0.5, 0.8).normalized()).toRotationMatrix();
    const Eigen::Vector3d t(412.5, -230.25, 97.0);
    Part moved = p;
    for (PointCloud* cloud : {&moved.inputs.datums[0], &moved.inputs.datums[1],
                              &moved.inputs.datums[2], &moved.inputs.bores[0],
                              &moved.inputs.bores[1], &moved.inputs.bores[2]})
      cloud->points = ((r * cloud->points).colwise() + t).eval();
    moved.plan.datums[0].material_side = r * *p.plan.datums[0].material_side;
    const PartEvaluation after = evaluate_part(moved.plan, moved.inputs, quick());
    REQUIRE(after.bores[1].position);
    CHECK(after.bores[1].position->value == Approx(before.bores[1].position->value).margin(1e-9));
    CHECK(after.bores[1].size.least_squares ==
          Approx(before.bores[1].size.least_squares).margin(1e-9));
    const std::vector<Characteristic> x = decided(p.plan, before), y = decided(moved.plan, after);
    REQUIRE(x.size() == y.size());
    for (std::size_t k = 0; k < x.size(); ++k) {
      CHECK(x[k].id == y[k].id);
      CHECK(x[k].verdict == y[k].verdict);
      CHECK(x[k].not_evaluated == y[k].not_evaluated);
    }
  }

  // On a bore probed over its depth the held axis stays parallel to z: no tilt is reported.
  Part tilted = part_abc(MaterialBoundary::rmb);
  add_bores(tilted, abc, rings(-30.0, 25.0, 0.0008, 4.01, deep));
  tilted.plan.bores[1].axis_direction = AxisDirection::nominal;
  const PartEvaluation t = evaluate_part(tilted.plan, tilted.inputs, quick());
  CHECK(t.bores[1].direction_held);
  CHECK(t.bores[1].tilt.angle_rad == Approx(0.0).margin(1e-15));
}

TEST_CASE("the plan key axis_direction: read, defaulted, validated", "[check][held][plan]") {
  const auto plan_with = [](const std::string& bore_keys) {
    return "format = \"cylzone-plan-1\"\nname = \"Block\"\nunits = \"mm\"\n"
           "[datum.A]\nfeature = \"plane\"\npoints = \"a.csv\"\n"
           "[[bore]]\nid = \"H1\"\npoints = \"h.csv\"\nbasic = [1.5, 0.75]\n"
           "position = { tolerance = 0.02, datums = \"A\" }\n" +
           bore_keys;
  };
  CHECK(parse_plan(plan_with(""), "p.toml", false).bores[0].axis_direction ==
        AxisDirection::fitted);
  CHECK(parse_plan(plan_with("axis_direction = \"fitted\"\n"), "p.toml", false)
            .bores[0]
            .axis_direction == AxisDirection::fitted);
  const PartPlan held = parse_plan(plan_with("axis_direction = \"nominal\"\n"), "p.toml", false);
  CHECK(held.bores[0].axis_direction == AxisDirection::nominal);
  CHECK(axis_direction_name(AxisDirection::nominal) == "nominal");
  CHECK(parse_axis_direction("fitted") == AxisDirection::fitted);
  CHECK_FALSE(parse_axis_direction("Nominal").has_value());

  // An unknown value names the key and its line (line 12: after the bore's header and keys).
  cylzone::testing::expect_input_error(
      [&] { parse_plan(plan_with("axis_direction = \"held\"\n"), "p.toml", false); }, "p.toml",
      12, "unknown axis direction \"held\": expected \"fitted\" or \"nominal\"");
  try {
    parse_plan(plan_with("axis_direction = \"held\"\n"), "p.toml", false);
  } catch (const InputError& e) {
    CHECK(e.key() == "bore[H1].axis_direction");
  }
  // With a derived median line there is no single direction to hold.
  cylzone::testing::expect_input_error(
      [&] {
        parse_plan(plan_with("axis = \"median-line\"\naxis_direction = \"nominal\"\n"), "p.toml",
                   false);
      },
      "p.toml", 13, "not available with axis = \"median-line\"");
  // A plan built in code is held to the same rules.
  PartPlan in_code = held;
  in_code.bores[0].axis_direction = static_cast<AxisDirection>(7);
  CHECK_THROWS_WITH(validate_plan(in_code), Contains("unknown axis direction"));
}

// Writes the cases of crosscheck_held_direction.py (a ctest fixture): one-level probing of a
// slightly tilted bore, on a partial or full arc, with noise, whose axis is held at a nominal
// direction perpendicular or inclined to A; cylzone's position and least-squares size.
TEST_CASE("write held-direction cases for the scipy cross-check", "[.][held-cases]") {
  std::mt19937 rng(20261202);
  std::normal_distribution<double> noise(0.0, 0.0015);
  std::uniform_real_distribution<double> uniform(-1.0, 1.0);
  std::ostringstream json;
  json << std::setprecision(17) << "{\"cases\": [\n";
  const std::vector<Eigen::Vector3d> nominals = {Eigen::Vector3d::UnitZ(),
                                                 Eigen::Vector3d(0.0, 0.5, 0.866).normalized(),
                                                 Eigen::Vector3d(0.3, -0.2, 1.0).normalized()};
  int written = 0;
  for (std::size_t n = 0; n < nominals.size(); ++n)
    for (double arc : {360.0, 270.0, 200.0}) {
      const Eigen::Vector3d w = nominals[n];
      const Eigen::Vector2d basic(-30.0 + 5.0 * n, 25.0 - 3.0 * n);
      // The actual axis: off its true position and tilted by about a milliradian.
      const Eigen::Vector3d tilt_axis = w.unitOrthogonal();
      const Eigen::Vector3d actual =
          Eigen::AngleAxisd(0.001 * (1.0 + uniform(rng)), tilt_axis) * w;
      const double depth = -8.0 - 4.0 * uniform(rng) - 4.0;  // z of the probed level's centre
      const Eigen::Vector3d on_axis = Eigen::Vector3d(basic.x(), basic.y(), 0.0) +
                                      (depth / w.z()) * w +
                                      0.01 * Eigen::Vector3d(uniform(rng), uniform(rng), 0.0);
      const Eigen::Vector3d u = actual.unitOrthogonal();
      const Eigen::Vector3d v = actual.cross(u);
      const double radius = 5.0 + 0.01 * uniform(rng);
      PointCloud cloud;
      cloud.points.resize(3, 40);
      for (int k = 0; k < 40; ++k) {
        const double angle = (arc / 40.0) * k * pi / 180.0 + 0.2;
        cloud.points.col(k) =
            on_axis + (radius + noise(rng)) * (std::cos(angle) * u + std::sin(angle) * v);
      }
      Part p = part_abc(MaterialBoundary::rmb);
      PlanBore held = bore("H", basic.x(), basic.y(), abc);
      held.nominal_direction = w;
      held.perpendicularity.reset();  // an inclined bore carries position only
      held.axis_direction = AxisDirection::nominal;
      held.depth_top.reset();
      held.depth_bottom.reset();
      p.plan.bores = {held};
      p.inputs.bores = {cloud};
      const PartEvaluation e = evaluate_part(p.plan, p.inputs, quick());
      INFO(e.bores[0].not_evaluated);
      REQUIRE(e.bores[0].evaluated());
      REQUIRE(e.bores[0].position);
      json << (written++ ? ",\n" : "") << "{\"name\": \"nominal " << n << ", arc " << arc
           << "\", \"basic\": [" << basic.x() << ", " << basic.y() << "], \"direction\": ["
           << w.x() << ", " << w.y() << ", " << w.z() << "],\n \"position\": "
           << e.bores[0].position->value << ", \"ls_diameter\": "
           << e.bores[0].size.least_squares << ",\n \"points\": [";
      for (Eigen::Index i = 0; i < cloud.points.cols(); ++i)
        json << (i ? ", " : "") << "[" << cloud.points(0, i) << ", " << cloud.points(1, i)
             << ", " << cloud.points(2, i) << "]";
      json << "]}";
    }
  json << "\n]}\n";
  cylzone::testing::write_case_file("CYLZONE_HELD_CASES", json.str());
  CHECK(written == 9);
}

// A bore's points in the datum frame, as evaluate_part writes them (check/detail/
// frame_points.hpp), against the computation it replaces, DatumFrame::points_to_frame (Eigen's
// product rotation (p - origin)): bit for bit (memcmp, signed zeros included), for frames
// turned about any axis and by the small tilts of a real set-up, clouds of 0 to 5,001 points,
// zero and -0.0 coordinates, points at the frame's origin, and the identity frame.
TEST_CASE("bore points into the datum frame are points_to_frame's to the bit", "[frame_points]") {
  std::mt19937_64 rng(88127);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::size_t compared = 0;
  for (int trial = 0; trial < 500; ++trial) {
    DatumFrame frame;
    if (trial % 25 != 0) {
      const Eigen::Vector3d axis =
          trial % 3 == 0 ? Eigen::Vector3d(unit(rng), unit(rng), unit(rng)).normalized()
                         : Eigen::Vector3d(1e-3 * unit(rng), 1e-3 * unit(rng), 1.0).normalized();
      const double angle = trial % 3 == 0 ? 3.0 * unit(rng) : 0.5 * unit(rng);
      frame.rotation = Eigen::AngleAxisd(angle, axis).toRotationMatrix();
      frame.origin = Eigen::Vector3d(500.0 * unit(rng), 500.0 * unit(rng), 100.0 * unit(rng));
      if (trial % 7 == 2) frame.origin.z() = -0.0;
    }
    const Eigen::Index n = trial == 1 ? 0 : trial % 50 == 0 ? 5001 : static_cast<Eigen::Index>(1 + 250 * (1.0 + unit(rng)));
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i) {
      points.col(i) = frame.origin + Eigen::Vector3d(300.0 * unit(rng), 300.0 * unit(rng), 80.0 * unit(rng));
      if (i % 29 == 3) points.col(i) = frame.origin;
      if (i % 31 == 4) points(2, i) = -0.0;
      if (i % 37 == 5) points(1, i) = 0.0;
    }
    const Eigen::Matrix3Xd expected = frame.points_to_frame(points);
    Eigen::Matrix3Xd got(3, 2);  // resized by the call
    detail::points_to_frame_into(points, frame.rotation, frame.origin, got);
    REQUIRE(got.cols() == n);
    // memcmp only on a non-empty range: an empty matrix's data() may be null (UBSan).
    REQUIRE((n == 0 || std::memcmp(got.data(), expected.data(),
                                   sizeof(double) * 3 * static_cast<std::size_t>(n)) == 0));
    ++compared;
  }
  CHECK(compared == 500);
}
