// validate_plan on plans built in code, without TOML: the same rules refuse the same faults as
// when the plan is read (tests/test_plan.cpp), naming the key path (line 0: no file line), and
// the datum boundary is settled from the references. The rules' sources are named beside each
// check; "common practice" marks facts of the trade.

#include <catch2/catch.hpp>
#include <functional>
#include <limits>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/plan/validate_plan.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

PlanTolerance tolerance(double value, MaterialCondition condition,
                        std::vector<DatumReference> datums) {
  PlanTolerance t;
  t.tolerance = value;
  t.condition = condition;
  t.datums = std::move(datums);
  return t;
}

/// The plan of test_plan.cpp's base text, built in code (mm): A plane, B bore 19.990-20.011,
/// C bore at (90, 0); P1 at MMC to A|B(M)|C with perpendicularity; P2 with cylindricity.
PartPlan code_plan() {
  PartPlan plan;
  plan.file = "in-code";
  plan.name = "Test block";
  PlanDatum a;
  a.label = 'A';
  a.points = "a.csv";
  PlanDatum b;
  b.label = 'B';
  b.kind = FeatureKind::bore;
  b.points = "b.csv";
  b.size = SizeLimits{19.990, 20.011};
  PlanDatum c;
  c.label = 'C';
  c.kind = FeatureKind::bore;
  c.points = "c.csv";
  c.basic_location = Eigen::Vector2d(90.0, 0.0);
  c.size = SizeLimits{8.000, 8.015};
  plan.datums = {a, b, c};

  PlanBore p1;
  p1.id = "P1";
  p1.points = "p1.csv";
  p1.basic_location = {40.0, 25.0};
  p1.size = SizeLimits{12.000, 12.018};
  p1.position = tolerance(0.025, MaterialCondition::mmc,
                          {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::mmb},
                           {'C', MaterialBoundary::rmb}});
  p1.perpendicularity = tolerance(0.010, MaterialCondition::rfs, {{'A', MaterialBoundary::rmb}});
  PlanBore p2;
  p2.id = "P2";
  p2.points = "p2.csv";
  p2.basic_location = {-40.0, 25.0};
  p2.cylindricity = 0.008;
  plan.bores = {p1, p2};
  return plan;
}

/// Applies `fault` to the code plan and expects validate_plan to refuse it for `key` with a
/// problem containing `wording`.
void check_refused(const std::function<void(PartPlan&)>& fault, const std::string& key,
                   const std::string& wording) {
  PartPlan plan = code_plan();
  fault(plan);
  INFO("expected a refusal for key '" << key << "'");
  try {
    validate_plan(plan);
    FAIL("the plan was accepted");
  } catch (const InputError& e) {
    INFO("what(): " << e.what());
    CHECK(e.file() == "in-code");
    CHECK(e.line() == 0);
    CHECK(e.key() == key);
    CHECK_THAT(e.problem(), Contains(wording));
  }
}

}  // namespace

TEST_CASE("a plan built in code passes and gets its datum boundaries settled", "[plan][validate]") {
  PartPlan plan = code_plan();
  REQUIRE_NOTHROW(validate_plan(plan));
  // B is referenced at MMB by P1's position, C only at RMB (ASME Y14.5-2018 datum feature
  // modifiers; common practice: a datum feature referenced at MMB is simulated at its MMB).
  CHECK(plan.datums[0].boundary == MaterialBoundary::rmb);
  CHECK(plan.datums[1].boundary == MaterialBoundary::mmb);
  CHECK(plan.datums[2].boundary == MaterialBoundary::rmb);

  // MMB anywhere wins over LMB elsewhere (the shift at MMB must be known); LMB alone is LMB.
  plan.bores[0].position->datums[2].boundary = MaterialBoundary::lmb;
  PlanBore p3 = plan.bores[0];
  p3.id = "P3";
  p3.position->datums[2].boundary = MaterialBoundary::mmb;
  plan.bores.push_back(p3);
  plan.bores[0].position->datums[1].boundary = MaterialBoundary::lmb;
  plan.bores[2].position->datums[1].boundary = MaterialBoundary::lmb;
  validate_plan(plan);
  CHECK(plan.datums[1].boundary == MaterialBoundary::lmb);
  CHECK(plan.datums[2].boundary == MaterialBoundary::mmb);
  CHECK(referenced_boundary(plan, 'A') == MaterialBoundary::rmb);
  CHECK(referenced_boundary(plan, 'D') == MaterialBoundary::rmb);
}

TEST_CASE("a parsed plan is validated once more without change", "[plan][validate]") {
  PartPlan parsed = parse_plan(R"plan(format = "cylzone-plan-1"
name = "Block"
units = "inch"
[datum.A]
feature = "plane"
points = "a.csv"
[datum.B]
feature = "pin"
points = "b.csv"
size = { lower = 0.499, upper = 0.501 }
[[bore]]
id = "H1"
points = "h.csv"
basic = [1.5, 0.75]
position = { tolerance = 0.002, datums = "A|B(M)" }
)plan",
                               "p.toml", false);
  CHECK(parsed.datums[1].boundary == MaterialBoundary::mmb);
  const PartPlan copy = parsed;
  REQUIRE_NOTHROW(validate_plan(parsed));
  CHECK(parsed.datums[1].boundary == copy.datums[1].boundary);
}

TEST_CASE("validate_plan refuses the faults the reader refuses", "[plan][validate]") {
  // Datums: A a plane, B a bore or pin, C only with B (the frame A, B, C of ASME Y14.5-2018
  // and ISO 5459:2011 as cylzone builds it, docs/datum-frame.md).
  check_refused([](PartPlan& p) { p.datums[0].kind = FeatureKind::pin; }, "datum.A.feature",
                "datum A must be a plane: the frame is built on a primary datum plane (found \"pin\")");
  check_refused([](PartPlan& p) { p.datums[1].kind = FeatureKind::slot; }, "datum.B.feature",
                "datum B must be a bore or a pin");
  check_refused([](PartPlan& p) { p.datums.erase(p.datums.begin() + 1); }, "datum.C",
                "datum C needs datum B");
  check_refused([](PartPlan& p) { p.datums.erase(p.datums.begin()); }, "datum.A",
                "expected [datum.A]");
  check_refused([](PartPlan& p) { p.datums[2].basic_location = Eigen::Vector2d::Zero(); },
                "datum.C.basic", "must not be at datum B's axis");
  check_refused([](PartPlan& p) { p.datums[0].material_side = Eigen::Vector3d::Zero(); },
                "datum.A.material_side", "direction has zero length");
  check_refused([](PartPlan& p) { p.datums[0].material_side = Eigen::Vector3d(0, 0, -2); },
                "datum.A.material_side", "must be a unit vector");
  // Limits of size: positive, lower below upper (ASME Y14.5-2018 limits of size; common practice).
  check_refused([](PartPlan& p) { p.datums[1].size = SizeLimits{20.011, 19.990}; },
                "datum.B.size", "the lower limit 20.011 must be less than the upper limit 19.99");
  check_refused([](PartPlan& p) { p.bores[0].size = SizeLimits{-12.0, 12.018}; },
                "bore[P1].size.lower", "must be greater than zero (found -12)");
  // MMB of a bore: its MMC size or its virtual condition, never above MMC (common practice).
  check_refused([](PartPlan& p) { p.datums[1].mmb_size = 19.995; }, "datum.B.mmb",
                "must not exceed its MMC size (lower limit 19.99)");
  check_refused(
      [](PartPlan& p) {
        p.datums[1].size.reset();
        p.bores[0].position->datums[1].boundary = MaterialBoundary::rmb;
        p.datums[1].mmb_size = 19.98;
      },
      "datum.B.mmb", "mmb is given without size");
  // Datum references (feature control frame, ASME Y14.5-2018; ISO 5459:2011).
  check_refused([](PartPlan& p) { p.bores[0].position->datums[2].label = 'D'; },
                "bore[P1].position.datums", "datum D is not defined (defined: A, B, C)");
  check_refused([](PartPlan& p) { std::swap(p.bores[0].position->datums[0], p.bores[0].position->datums[1]); },
                "bore[P1].position.datums", "datum order must be A first, then B, then C");
  check_refused([](PartPlan& p) { p.bores[0].position->datums[2].label = 'B'; },
                "bore[P1].position.datums", "datum B is repeated in \"A|B(M)|B\"");
  check_refused([](PartPlan& p) { p.bores[0].position->datums[0].boundary = MaterialBoundary::mmb; },
                "bore[P1].position.datums",
                "datum A is a plane, not a feature of size: it takes no (M) modifier");
  check_refused([](PartPlan& p) { p.datums[1].size.reset(); }, "bore[P1].position.datums",
                "datum B is referenced at MMB but [datum.B] has no size");
  check_refused([](PartPlan& p) { p.bores[0].position->datums.clear(); },
                "bore[P1].position.datums", "expected the datum reference");
  check_refused([](PartPlan& p) { p.bores[0].perpendicularity->datums.push_back({'B', MaterialBoundary::rmb}); },
                "bore[P1].perpendicularity.datums",
                "perpendicularity is always to datum A: datums must be \"A\" (found \"A|B\")");
  // Tolerances: MMC needs the size (bonus, ASME Y14.5-2018; ISO 2692:2021); zero only at
  // MMC or LMC (zero tolerancing at MMC, ASME Y14.5-2018, from memory for the section).
  check_refused([](PartPlan& p) { p.bores[0].size.reset(); }, "bore[P1].position.modifier",
                "a tolerance at MMC needs the bore's limits of size");
  check_refused([](PartPlan& p) { p.bores[0].position->tolerance = -0.025; },
                "bore[P1].position.tolerance", "the tolerance must not be negative (found -0.025)");
  check_refused([](PartPlan& p) { p.bores[0].perpendicularity->tolerance = 0.0; },
                "bore[P1].perpendicularity.tolerance",
                "must be greater than zero (found 0); a zero tolerance is only meaningful at MMC");
  check_refused([](PartPlan& p) { p.bores[1].cylindricity = -0.008; }, "bore[P2].cylindricity",
                "the cylindricity tolerance must be greater than zero");
  // A projected zone extends a straight axis (ISO 1101:2017): not the derived median line.
  check_refused(
      [](PartPlan& p) {
        p.bores[0].axis = BoreAxisMethod::median_line;
        p.bores[0].position->projected_height = 12.5;
      },
      "bore[P1].position.projected", "a projected tolerance zone needs a straight axis");
  check_refused([](PartPlan& p) { p.bores[0].position->projected_height = 0.0; },
                "bore[P1].position.projected", "the projected height must be greater than zero");
  check_refused([](PartPlan& p) { p.bores[0].position->projected_from = 5.0; },
                "bore[P1].position.projected_from", "projected_from is given without projected");
  // Bores: ids, directions, depth ranges, a tolerance each.
  check_refused([](PartPlan& p) { p.bores[1].id = "P1"; }, "bore[2].id",
                "duplicate bore id \"P1\": already used by bore 1");
  check_refused([](PartPlan& p) { p.bores[1].id = " P2"; }, "bore[2].id",
                "leading or trailing spaces");
  check_refused([](PartPlan& p) { p.bores[1].nominal_direction = Eigen::Vector3d(1, 1, 0).normalized(); },
                "bore[P2].direction", "the direction lies in datum plane A");
  check_refused([](PartPlan& p) { p.bores[1].nominal_direction = -Eigen::Vector3d::UnitZ(); },
                "bore[P2].direction", "must point out of the material (z > 0)");
  check_refused([](PartPlan& p) { p.bores[0].nominal_direction = Eigen::Vector3d(0, 0.5, 0.866025403784).normalized(); },
                "bore[P1].perpendicularity",
                "perpendicularity needs a nominal direction perpendicular to A, but direction is inclined 30");
  check_refused(
      [](PartPlan& p) {
        p.bores[0].depth_top = -64.0;
        p.bores[0].depth_bottom = 0.0;
      },
      "bore[P1].depth", "top -64 must be greater than bottom 0");
  check_refused([](PartPlan& p) { p.bores[1].cylindricity.reset(); }, "bore[P2]",
                "the bore has no tolerance");
  check_refused([](PartPlan& p) { p.bores.clear(); }, "bore", "at least one toleranced bore");
  check_refused([](PartPlan& p) { p.name = " "; }, "name", "the part's name must not be empty");
  check_refused([](PartPlan& p) { p.probe.ball_centres = true; }, "probe.points",
                "points are ball centres but no tip diameter is given");
  check_refused(
      [](PartPlan& p) {
        p.probe.tip_diameter = 2.0;
        p.bores[0].probe.ball_centres = true;
        p.bores[0].probe.tip_diameter = -2.0;
      },
      "probe.tip_diameter", "the tip diameter of bore P1 must be greater than zero (found -2)");
}

TEST_CASE("validate_plan bounds lengths and tolerances", "[plan][validate]") {
  // Bounds of docs/plan.md: lengths within plan_length_limit (10 m), tolerances at most
  // plan_tolerance_limit (100 mm), finite everywhere.
  CHECK(plan_length_limit == 10000.0);
  CHECK(plan_tolerance_limit == 100.0);
  const double inf = std::numeric_limits<double>::infinity();
  check_refused([](PartPlan& p) { p.bores[0].depth_top = 1e308; }, "bore[P1].depth.top",
                "beyond the plan's bound of 10 m (10000 mm) in magnitude: found 1e+308 mm");
  check_refused([&](PartPlan& p) { p.bores[0].depth_bottom = -inf; }, "bore[P1].depth.bottom",
                "found -inf mm");
  check_refused([](PartPlan& p) { p.bores[0].basic_location.x() = 10000.5; }, "bore[P1].basic",
                "the true position (element 1) is beyond");
  check_refused([](PartPlan& p) { p.bores[0].size->upper = 2e4; }, "bore[P1].size.upper",
                "the upper limit of size is beyond");
  check_refused([](PartPlan& p) { p.bores[0].position->tolerance = 100.5; },
                "bore[P1].position.tolerance", "exceeds the plan's ceiling of 100 mm");
  check_refused([](PartPlan& p) { p.bores[1].cylindricity = 250.0; }, "bore[P2].cylindricity",
                "exceeds the plan's ceiling of 100 mm");
  check_refused([](PartPlan& p) { p.bores[1].section_gap = 0.0; }, "bore[P2].section_gap",
                "the section gap must be greater than zero");
  check_refused([](PartPlan& p) { p.section_gap = 2e4; }, "section_gap", "the section gap is beyond");
  check_refused([](PartPlan& p) { p.bores[0].nominal_direction = Eigen::Vector3d(0, 0, std::numeric_limits<double>::quiet_NaN()); },
                "bore[P1].direction", "the direction must be finite");
  check_refused(
      [](PartPlan& p) {
        p.bores[0].position->projected_height = 9000.0;
        p.bores[0].position->projected_from = 2000.0;
      },
      "bore[P1].position.projected_from", "the far end of the projected zone is beyond");
  // At the bounds themselves: accepted.
  PartPlan at_bounds = code_plan();
  at_bounds.bores[0].depth_bottom = -plan_length_limit;
  at_bounds.bores[0].position->tolerance = plan_tolerance_limit;
  at_bounds.bores[0].position->wide_zone_intended = true;  // 100 mm on a 12 mm bore
  CHECK_NOTHROW(validate_plan(at_bounds));
}

// ---- plausibility of tolerances and the part identity (docs/evaluation.md, "Plausibility
// checks"). A position or perpendicularity zone of a deep bore is microns on millimetres of
// diameter (ISO 286-1 grades and the tolerances drawn with them; common practice): one of the
// size's order is a value typed in the wrong unit, 20 for 0.020.

TEST_CASE("a zone wider than the bore is refused unless intended; above a tenth, a warning",
          "[plan][validate][plausibility]") {
  // P1: size 12.000-12.018. 20 (meant 0.020) is 167 % of the size: refused, naming the key.
  check_refused([](PartPlan& p) { p.bores[0].position->tolerance = 20.0; },
                "bore[P1].position.tolerance", "was 0.02 meant?");
  check_refused([](PartPlan& p) { p.bores[0].perpendicularity->tolerance = 12.5; },
                "bore[P1].perpendicularity.tolerance", "wider than the bore itself");

  // 1.5 on 12 is 12.5 %: accepted with one warning naming the key, the numbers and the share.
  PartPlan plan = code_plan();
  plan.bores[0].position->tolerance = 1.5;
  REQUIRE_NOTHROW(validate_plan(plan));
  REQUIRE(plan.warnings.size() == 1);
  CHECK_THAT(plan.warnings[0], Contains("bore[P1].position.tolerance"));
  CHECK_THAT(plan.warnings[0], Contains("1.5 mm is 12.5 % of the bore's size 12 mm, more than "
                                        "10 %"));
  CHECK(plan.warnings[0].find('\n') == std::string::npos);

  // Exactly a tenth is not above it; the demo's 0.025 on 12 is 0.2 %: no warning.
  plan.bores[0].position->tolerance = 1.2;
  validate_plan(plan);
  CHECK(plan.warnings.empty());

  // Acknowledged: neither the error nor the warning.
  plan.bores[0].position->tolerance = 20.0;
  plan.bores[0].position->wide_zone_intended = true;
  REQUIRE_NOTHROW(validate_plan(plan));
  CHECK(plan.warnings.empty());

  // Inch plan: the message quotes the plan's unit (0.8 in on a 0.5 in bore is 160 %).
  PartPlan inch = code_plan();
  inch.unit = LengthUnit::inch;
  inch.bores[0].size = SizeLimits{0.5 * 25.4, 0.5005 * 25.4};
  inch.bores[0].position->tolerance = 0.8 * 25.4;
  try {
    validate_plan(inch);
    FAIL("accepted");
  } catch (const InputError& e) {
    CHECK_THAT(e.problem(), Contains("0.8 inch"));
    CHECK_THAT(e.problem(), Contains("160 %"));
    CHECK_THAT(e.problem(), Contains("was 0.0008 meant?"));
  }
}

TEST_CASE("the plan's part identity is one printable line per field",
          "[plan][validate][identity]") {
  check_refused([](PartPlan& p) { p.part.serial = "S-1\x1b[31m"; }, "part.serial",
                "control characters");
  check_refused([](PartPlan& p) { p.part.id = std::string(201, 'x'); }, "part.id",
                "longer than 200 bytes");
  check_refused([](PartPlan& p) { p.part.notes = {{"operator", "A"}, {"operator", "B"}}; },
                "part.notes.operator", "given twice");
  check_refused([](PartPlan& p) { p.part.notes = {{"op erator", "A"}}; }, "part.notes",
                "letters, digits");
  check_refused([](PartPlan& p) { p.part.notes = {{"shift", "night\nday"}}; },
                "part.notes.shift", "one printable line");
  PartPlan plan = code_plan();
  plan.part.id = "HM-3207";
  plan.part.serial = "SN 0042";
  plan.part.notes = {{"operator", "J. Moreau"}, {"machine.cell", "C-2"}};
  CHECK_NOTHROW(validate_plan(plan));
}
