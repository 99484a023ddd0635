// The summary reader and the audit of another system's summary (audit/summary.hpp,
// audit/summary_audit.hpp).
//
// References outside the code under test:
//  * the single-plane position of a centre deviating by (dx, dy) from its true position is
//    2 sqrt(dx^2 + dy^2) (common practice; the cylindrical zone of ASME Y14.5-2018 section 7 /
//    ISO 1101:2017, from memory for the clauses), with the trade's check values 0.04 / 0.03 ->
//    0.100 and 0.05 / 0.05 -> 0.1414 (common practice);
//  * a printed number stands for any value within half a unit of its last decimal (rounding to
//    nearest, common practice);
//  * rings of points on a perfect cylinder, evenly spaced and centred on the axis, have that
//    axis as their least-squares cylinder axis (symmetry of the unique optimum), so every bore's
//    true offsets below are exact, and over a range the largest deviation of a straight axis is
//    at an end (the deviation is affine in height);
//  * a tilted bore with noise: the mouth and full-depth figures recomputed with scipy from the
//    same points (tests/reference/crosscheck_summary_audit.py, from the hidden case
//    "[audit-cases]").

#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <iomanip>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "case_file.hpp"
#include "cylzone/audit/summary.hpp"
#include "cylzone/audit/summary_audit.hpp"
#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/plan/plan.hpp"
#include "expect_input_error.hpp"
#include "ring_clouds.hpp"

using namespace cylzone;
using cylzone::testing::expect_input_error;
using cylzone::testing::rings;

namespace {

const std::vector<double> deep = {-2.0, -6.0, -10.0, -14.0, -18.0, -22.0, -26.0};

PlanBore bore(const std::string& id, double x, double y, double tolerance) {
  PlanBore b;
  b.id = id;
  b.basic_location = Eigen::Vector2d(x, y);
  b.depth_top = 0.0;
  b.depth_bottom = -28.0;
  b.size = SizeLimits{7.99, 8.03};
  b.axis = BoreAxisMethod::least_squares;
  PlanTolerance position;
  position.tolerance = tolerance;
  position.datums = {{'A', MaterialBoundary::rmb, false},
                     {'B', MaterialBoundary::rmb, false},
                     {'C', MaterialBoundary::rmb, false}};
  b.position = position;
  PlanTolerance perpendicularity;
  perpendicularity.tolerance = 0.2;
  perpendicularity.datums = {DatumReference{'A', MaterialBoundary::rmb}};
  b.perpendicularity = perpendicularity;
  return b;
}

/// The true offsets (dx, dy) at z = 0 of the three bores below, and T1's tilt in x per unit z.
const Eigen::Vector2d t1_mouth(0.010, 0.0), t2_offset(0.04, 0.03), t3_offset(0.0, 0.0);
constexpr double t1_slope = 0.002;

struct Part {
  PartPlan plan;
  PartInputs inputs;
};

/// Datums A (z = 0), B (bore at the origin), C (bore at (60, 0)): the frame is the measurement
/// frame. T1 at (30, 20) drilled on a 2 mrad tilt, on position at its mouth; T2 at (-30, 25)
/// straight, off by (0.04, 0.03) (zone 0.2); T3 at (10, -40) straight, on position.
Part part(double t1_noise = 0.0) {
  Part p;
  p.plan.file = "in-memory plan";
  cylzone::testing::AbcDatums datums = cylzone::testing::abc_datums(deep);
  p.plan.datums = std::move(datums.plans);
  p.inputs.datums = std::move(datums.clouds);
  p.plan.bores = {bore("T1", 30.0, 20.0, 0.05), bore("T2", -30.0, 25.0, 0.2),
                  bore("T3", 10.0, -40.0, 0.05)};
  p.inputs.bores = {
      rings(30.0 + t1_mouth.x(), 20.0 + t1_mouth.y(), t1_slope, 4.008, deep, 24, t1_noise, 7),
      rings(-30.0 + t2_offset.x(), 25.0 + t2_offset.y(), 0.0, 4.006, deep),
      rings(10.0, -40.0, 0.0, 4.007, deep)};
  return p;
}

PartEvaluation evaluated(const Part& p) {
  EvaluationOptions options;
  options.profile.ambiguity = false;
  options.threads = 1;
  return evaluate_part(p.plan, p.inputs, options);
}

SummaryTable summary(const std::string& text, const PlanAudit& mapping = {}) {
  SummaryReadOptions options;
  options.mapping = mapping;
  return parse_summary(text, "summary.csv", options);
}

std::string fixed(double v, int decimals = 4) {
  std::ostringstream out;
  out << std::fixed << std::setprecision(decimals) << v;
  return out.str();
}

// The audit a bore refers into must outlive the reference: no temporaries.
const BoreAudit& audit_of(AuditResult&&, const std::string&) = delete;
const BoreAudit& audit_of(const AuditResult& r, const std::string& id) {
  for (const BoreAudit& b : r.bores)
    if (b.id == id) return b;
  FAIL("no audit of bore " << id);
  throw;
}

}  // namespace

TEST_CASE("single-plane position and the trade's check values", "[audit]") {
  // Common practice: 2 sqrt(0.04^2 + 0.03^2) = 0.100; 2 sqrt(0.05^2 + 0.05^2) = 0.1414.
  CHECK(single_plane_position(0.04, 0.03) == Approx(0.100).margin(1e-15));
  CHECK(fixed(single_plane_position(0.05, 0.05)) == "0.1414");
  CHECK(single_plane_position(-0.04, 0.03) == Approx(0.100).margin(1e-15));
}

TEST_CASE("the rounding of a printed number is half a unit of its last decimal", "[audit]") {
  CHECK(half_unit_of_last_decimal("0.0072") == Approx(0.00005).epsilon(1e-12));
  CHECK(half_unit_of_last_decimal("-0.04") == Approx(0.005).epsilon(1e-12));
  CHECK(half_unit_of_last_decimal("12") == Approx(0.5).epsilon(1e-12));
  CHECK(half_unit_of_last_decimal("1.5e-3") == Approx(0.00005).epsilon(1e-12));
  CHECK(half_unit_of_last_decimal("abc") == 0.0);
  // 0.04 / 0.03 printed to 3 decimals, position 0.100: allowance 0.0005 + 2 |(0.0005, 0.0005)|.
  CHECK(consistency_allowance(0.0005, 0.0005, 0.0005) ==
        Approx(0.0005 + 2.0 * std::sqrt(2.0) * 0.0005).epsilon(1e-12));
}

TEST_CASE("a summary's own arithmetic: consistent and internally inconsistent", "[audit]") {
  const Part p = part();
  const PartEvaluation e = evaluated(p);
  SECTION("0.040 / 0.030 -> 0.100 and 0.05 / 0.05 -> 0.141 are consistent") {
    // T2 is truly off by (0.04, 0.03) at every height: the summary is right in every figure.
    const AuditResult r = audit_summary(
        p.plan, e, summary("id,z,dx,dy,position,verdict\nT2,0,0.040,0.030,0.100,pass\n"));
    const BoreAudit& t2 = audit_of(r, "T2");
    CHECK(t2.internally_consistent);
    CHECK(t2.recomputed_position == Approx(0.100).margin(1e-12));
    CHECK(t2.finding == SummaryFinding::consistent);
    CHECK_FALSE(t2.overturned);
    // The second check value through the reader: 0.05 / 0.05 printed with 3 decimals as 0.141.
    const SummaryTable s = summary("id,dx,dy,position\nT2,0.050,0.050,0.141\n");
    const AuditResult r2 = audit_summary(p.plan, e, s);
    CHECK(audit_of(r2, "T2").internally_consistent);
  }
  SECTION("a position that is not 2 sqrt(dx^2 + dy^2) of its own deviations") {
    const AuditResult r = audit_summary(
        p.plan, e, summary("id,z,dx,dy,position,verdict\nT2,0,0.040,0.030,0.090,pass\n"));
    const BoreAudit& t2 = audit_of(r, "T2");
    CHECK_FALSE(t2.internally_consistent);
    CHECK(t2.finding == SummaryFinding::internally_inconsistent);
    CHECK(t2.overturned);
    CHECK(r.any_overturned());
    // 0.05 / 0.05 with 0.150: beyond the 0.0019 its 3-decimal rounding allows.
    const AuditResult r2 =
        audit_summary(p.plan, e, summary("id,dx,dy,position\nT2,0.050,0.050,0.150\n"));
    CHECK_FALSE(audit_of(r2, "T2").internally_consistent);
  }
}

TEST_CASE("a tilted bore: its mouth summary passes, the full depth does not", "[audit]") {
  const Part p = part();
  const PartEvaluation e = evaluated(p);
  // The summary as a single-plane evaluation at the mouth writes it, from the true offsets.
  const double mouth = single_plane_position(t1_mouth.x(), t1_mouth.y());
  const std::string text = "id,z,dx,dy,position,verdict\nT1,0.0000," + fixed(t1_mouth.x()) + "," +
                           fixed(t1_mouth.y()) + "," + fixed(mouth) + ",pass\n";
  const AuditResult r = audit_summary(p.plan, e, summary(text));
  const BoreAudit& t1 = audit_of(r, "T1");
  REQUIRE(t1.centres.size() == 1);
  CHECK(t1.centres[0].cylzone[0].label == PlaneLabel::stated);
  CHECK(t1.centres[0].discrepancy < 1e-6);
  // Closed form: the axis at z = -28 is off by 0.010 - 28 x 0.002 = -0.046 in x.
  CHECK(t1.position == Approx(2.0 * std::fabs(t1_mouth.x() - 28.0 * t1_slope)).margin(1e-7));
  CHECK(t1.allowed == Approx(0.05).margin(1e-12));
  CHECK(t1.position_verdict == Verdict::does_not_conform);
  CHECK(t1.finding == SummaryFinding::blind_to_tilt);
  CHECK(t1.overturned);
  CHECK_THAT(t1.reason, Catch::Matchers::Contains("full depth"));
  CHECK(r.unmatched_bores == std::vector<std::string>{"T2", "T3"});
}

TEST_CASE("without a stated plane: mouth, probed centroid and mid-depth, each labelled",
          "[audit]") {
  const Part p = part();
  const PartEvaluation e = evaluated(p);
  // The true offset at mid-depth (z = -14) of T1.
  const double dx = t1_mouth.x() - 14.0 * t1_slope;
  const AuditResult r =
      audit_summary(p.plan, e, summary("id,dx,dy\nT1," + fixed(dx) + ",0.0000\n"));
  const BoreAudit& t1 = audit_of(r, "T1");
  REQUIRE(t1.centres[0].cylzone.size() == 3);
  CHECK(t1.centres[0].cylzone[0].label == PlaneLabel::mouth);
  CHECK(t1.centres[0].cylzone[0].height == 0.0);
  CHECK(t1.centres[0].cylzone[1].label == PlaneLabel::centroid);
  CHECK(t1.centres[0].cylzone[1].height == Approx(-14.0).margin(1e-9));  // the rings' centroid
  CHECK(t1.centres[0].cylzone[2].label == PlaneLabel::mid_depth);
  CHECK(t1.centres[0].cylzone[2].height == Approx(-14.0).margin(1e-12));
  // The closest plane is compared: mid-depth or the centroid (both at -14), not the mouth.
  CHECK(t1.centres[0].compared != 0);
  CHECK(t1.centres[0].discrepancy < 1e-6);
  CHECK(t1.verdict_implied);  // no verdict printed: its 2D position 0.036 against 0.05
  CHECK(t1.finding == SummaryFinding::blind_to_tilt);
}

TEST_CASE("two depths: the line through them over the full depth", "[audit]") {
  const Part p = part();
  const PartEvaluation e = evaluated(p);
  const double bottom = t1_mouth.x() - 20.0 * t1_slope;
  SECTION("two rows") {
    const std::string text = "id,z,dx,dy,verdict\nT1,0.0,0.0100,0.0000,pass\nT1,-20.0," +
                             fixed(bottom) + ",0.0000,pass\n";
    const AuditResult r = audit_summary(p.plan, e, summary(text));
    const BoreAudit& t1 = audit_of(r, "T1");
    REQUIRE(t1.centres.size() == 2);
    REQUIRE(t1.two_depth_position);
    // The line through the two centres reaches -0.046 at z = -28 (closed form).
    CHECK(*t1.two_depth_position == Approx(0.092).margin(2e-4));
    CHECK(t1.finding == SummaryFinding::blind_to_tilt);
  }
  SECTION("one row with a second column set") {
    const std::string text =
        "id,z,dx,dy,z2,dx2,dy2\nT1,0.0,0.0100,0.0000,-20.0," + fixed(bottom) + ",0.0000\n";
    const AuditResult r = audit_summary(p.plan, e, summary(text));
    const BoreAudit& t1 = audit_of(r, "T1");
    REQUIRE(t1.two_depth_position);
    CHECK(*t1.two_depth_position == Approx(0.092).margin(2e-4));
  }
  SECTION("the same plane twice is refused") {
    expect_input_error(
        [&] {
          audit_summary(p.plan, e,
                        summary("id,z,dx,dy\nT1,0.0,0.0100,0.0000\nT1,0.0,0.0100,0.0000\n"));
        },
        "summary.csv", 3, "given twice at z = 0.0000");
  }
}

TEST_CASE("same-plane differences and their likeliest cause", "[audit]") {
  const Part p = part();
  const PartEvaluation e = evaluated(p);
  const std::vector<std::pair<std::string, Eigen::Vector2d>> truth = {
      {"T1", t1_mouth}, {"T2", t2_offset}, {"T3", t3_offset}};
  const std::vector<Eigen::Vector2d> location = {{30.0, 20.0}, {-30.0, 25.0}, {10.0, -40.0}};
  const auto text = [&](auto change) {
    std::string s = "id,z,dx,dy\n";
    for (std::size_t i = 0; i < truth.size(); ++i) {
      const Eigen::Vector2d d = truth[i].second + change(location[i]);
      s += truth[i].first + ",0," + fixed(d.x(), 5) + "," + fixed(d.y(), 5) + "\n";
    }
    return s;
  };
  SECTION("every bore off by one vector: a shift of the origin") {
    const AuditResult r = audit_summary(
        p.plan, e,
        summary(text([](const Eigen::Vector2d&) { return Eigen::Vector2d(0.008, -0.006); })));
    for (const BoreAudit& b : r.bores) CHECK(b.finding == SummaryFinding::disagrees_at_same_plane);
    CHECK(r.explanation == FrameExplanation::origin_shift);
    CHECK(r.shift.x() == Approx(0.008).margin(2e-5));
    CHECK(r.shift.y() == Approx(-0.006).margin(2e-5));
  }
  SECTION("offsets growing with the distance from B at right angles: a rotation about A") {
    const double theta = 3e-4;  // rad
    const AuditResult r =
        audit_summary(p.plan, e, summary(text([&](const Eigen::Vector2d& q) -> Eigen::Vector2d {
                        return Eigen::Vector2d(-q.y(), q.x()) * theta;
                      })));
    CHECK(r.explanation == FrameExplanation::rotation_about_a);
    CHECK(r.rotation_rad == Approx(theta).margin(2e-6));
  }
  SECTION("one bore alone off: a different association or fit") {
    const AuditResult r = audit_summary(p.plan, e, summary(text([](const Eigen::Vector2d& q) {
                                          return q.x() > 25.0 ? Eigen::Vector2d(0.02, 0.0)
                                                              : Eigen::Vector2d(0.0, 0.0);
                                        })));
    CHECK(audit_of(r, "T1").finding == SummaryFinding::disagrees_at_same_plane);
    CHECK(audit_of(r, "T3").finding != SummaryFinding::disagrees_at_same_plane);
    CHECK(r.explanation == FrameExplanation::association_or_fit);
  }
  SECTION("within the tolerance: no disagreement") {
    AuditOptions options;
    options.same_plane_tolerance = 0.05;
    const AuditResult r = audit_summary(
        p.plan, e,
        summary(text([](const Eigen::Vector2d&) { return Eigen::Vector2d(0.008, -0.006); })),
        options);
    CHECK(r.explanation == FrameExplanation::none);
  }
}

TEST_CASE("the audit does not depend on how the part sat on the machine", "[audit]") {
  // A datum reference frame makes a part's figures independent of its placement (ASME
  // Y14.5-2018 section 4, ISO 5459:2011; from memory for the clauses): every figure of the
  // audit must be the same after a rigid motion of all the points.
  const Part p = part(0.0005);
  Part moved = p;
  const Eigen::Matrix3d R =
      (Eigen::AngleAxisd(0.7, Eigen::Vector3d(0.3, -0.5, 0.8).normalized())).toRotationMatrix();
  const Eigen::Vector3d t(412.8, -267.1, 1180.5);
  for (auto* clouds : {&moved.inputs.datums, &moved.inputs.bores})
    for (PointCloud& c : *clouds) c.points = (R * c.points).colwise() + t;
  moved.plan.datums[0].material_side = R * *p.plan.datums[0].material_side;
  const AuditResult a = audit_summary(p.plan, evaluated(p),
                                      summary("id,dx,dy,position,verdict\n"
                                              "T1,0.0100,0.0000,0.0200,pass\n"
                                              "T2,0.0410,0.0290,0.1000,pass\n"));
  const AuditResult b = audit_summary(moved.plan, evaluated(moved),
                                      summary("id,dx,dy,position,verdict\n"
                                              "T1,0.0100,0.0000,0.0200,pass\n"
                                              "T2,0.0410,0.0290,0.1000,pass\n"));
  REQUIRE(a.bores.size() == b.bores.size());
  for (std::size_t i = 0; i < a.bores.size(); ++i) {
    const BoreAudit &x = a.bores[i], &y = b.bores[i];
    INFO("bore " << x.id);
    CHECK(x.finding == y.finding);
    CHECK(x.position == Approx(y.position).margin(1e-9));
    CHECK(x.perpendicularity.value() == Approx(y.perpendicularity.value()).margin(1e-9));
    REQUIRE(x.centres[0].cylzone.size() == y.centres[0].cylzone.size());
    CHECK(x.centres[0].compared == y.centres[0].compared);
    CHECK(x.centres[0].discrepancy == Approx(y.centres[0].discrepancy).margin(1e-9));
    for (std::size_t k = 0; k < x.centres[0].cylzone.size(); ++k) {
      CHECK(x.centres[0].cylzone[k].height == Approx(y.centres[0].cylzone[k].height).margin(1e-9));
      CHECK((x.centres[0].cylzone[k].offset - y.centres[0].cylzone[k].offset).norm() < 1e-9);
    }
  }
  CHECK(a.explanation == b.explanation);
}

TEST_CASE("coordinates instead of deviations", "[audit]") {
  const Part p = part();
  const PartEvaluation e = evaluated(p);
  // T2's axis at (-30 + 0.04, 25 + 0.03) in the datum frame: deviations (0.04, 0.03).
  const AuditResult r =
      audit_summary(p.plan, e, summary("id,z,x,y,position\nT2,-5.0,-29.960,25.030,0.100\n"));
  const BoreAudit& t2 = audit_of(r, "T2");
  CHECK((t2.centres[0].offset - t2_offset).norm() < 1e-12);
  CHECK(t2.internally_consistent);
  CHECK(t2.centres[0].discrepancy < 1e-6);
  CHECK(t2.finding == SummaryFinding::consistent);
}

TEST_CASE("a bore cylzone cannot evaluate is not decided", "[audit]") {
  // What is not measured is neither proven to conform nor proven not to (ISO 14253-1:2017
  // section 5, from memory for the clause): T3 probed at one level only.
  Part p = part();
  p.inputs.bores[2] = rings(10.0, -40.0, 0.0, 4.007, {-14.0});
  const PartEvaluation e = evaluated(p);
  REQUIRE_FALSE(e.bores[2].evaluated());
  const AuditResult r = audit_summary(
      p.plan, e, summary("id,dx,dy,verdict\nT3,0.001,0.000,pass\nT2,0.040,0.030,pass\n"));
  const BoreAudit& t3 = audit_of(r, "T3");
  CHECK(t3.finding == SummaryFinding::not_decided);
  CHECK_FALSE(t3.overturned);
  CHECK(t3.centres.empty());
  CHECK_FALSE(t3.not_evaluated.empty());
  CHECK(audit_of(r, "T2").finding == SummaryFinding::consistent);
  CHECK(r.any_not_decided());
  CHECK_FALSE(r.any_overturned());
}

TEST_CASE("unmatched rows and bores are listed, not errors", "[audit]") {
  const Part p = part();
  const PartEvaluation e = evaluated(p);
  const AuditResult r =
      audit_summary(p.plan, e, summary("id,dx,dy\nT2,0.04,0.03\nX9,0.0,0.0\nt1,0.0,0.0\n"));
  REQUIRE(r.unmatched_rows.size() == 2);
  CHECK(r.unmatched_rows[0].id == "X9");
  CHECK(r.unmatched_rows[0].line == 3);
  CHECK(r.unmatched_rows[1].id == "t1");  // ids match exactly
  CHECK(r.unmatched_bores == std::vector<std::string>{"T1", "T3"});
  REQUIRE(r.bores.size() == 1);
}

TEST_CASE("the reader: mapping, units and rounding", "[audit]") {
  PlanAudit mapping;
  mapping.columns[static_cast<std::size_t>(SummaryField::id)] = "Feature";
  mapping.columns[static_cast<std::size_t>(SummaryField::x)] = "X act";
  mapping.columns[static_cast<std::size_t>(SummaryField::y)] = "Y act";
  mapping.units = LengthUnit::inch;
  const SummaryTable s =
      summary("# exported\nFEATURE;x ACT;Y act;Result\nH1;1.2500;-0.500;OK\n", mapping);
  CHECK_FALSE(s.deviations);
  REQUIRE(s.rows.size() == 1);
  CHECK(s.rows[0].line == 3);
  CHECK(s.rows[0].id == "H1");
  CHECK(s.rows[0].centres[0].u.value == Approx(1.25 * 25.4).epsilon(1e-15));
  CHECK(s.rows[0].centres[0].u.rounding == Approx(0.00005 * 25.4).epsilon(1e-12));
  CHECK(s.rows[0].centres[0].v.rounding == Approx(0.0005 * 25.4).epsilon(1e-12));
  CHECK_FALSE(s.rows[0].conforms);  // no verdict column mapped ("Result" is not "verdict")
}

TEST_CASE("malformed summaries: one InputError naming the file, line and column", "[audit]") {
  expect_input_error([] { summary(""); }, "summary.csv", 0, "the summary is empty");
  expect_input_error([] { summary("# only a comment\n\n"); }, "summary.csv", 0, "empty");
  expect_input_error([] { summary("id,dx,dy\n"); }, "summary.csv", 1, "no rows");
  PlanAudit mapping;
  mapping.columns[static_cast<std::size_t>(SummaryField::id)] = "Feature";
  expect_input_error([&] { summary("id,dx,dy\nP1,0,0\n", mapping); }, "summary.csv", 1,
                     "key 'columns.id': the header has no column 'Feature'");
  expect_input_error([] { summary("id,position\nP1,0.1\n"); }, "summary.csv", 1,
                     "neither deviation columns");
  expect_input_error([] { summary("id,dx,dy\nP1,0.01,abc\n"); }, "summary.csv", 2,
                     "field 3 ('dy') is not a number: 'abc'");
  expect_input_error([] { summary("id,dx,dy\nP1,0.01\n"); }, "summary.csv", 2,
                     "found 2 fields, expected 3");
  expect_input_error([] { summary("id,dx,dy,verdict\nP1,0,0,maybe\n"); }, "summary.csv", 2,
                     "holds the verdict 'maybe', not understood");
  expect_input_error([] { summary("id,dx,dy\n,0,0\n"); }, "summary.csv", 2, "is empty");
  expect_input_error([] { summary("id,dx,dy,z2\nP1,0,0,1\n"); }, "summary.csv", 1,
                     "a second depth needs");
  expect_input_error([] { summary(std::string("id,dx\0,dy\n", 11)); }, "summary.csv", 0,
                     "binary data");
  // Ids go into every report and JSON: UTF-8 text only (RFC 3629).
  CHECK(summary("id,dx,dy\n\xc3\x98" "10,0,0\n").rows[0].id == "\xc3\x98" "10");
  expect_input_error([] { summary("id,dx,dy\n\xff\xfeQ,0,0\n"); }, "summary.csv", 2,
                     "field 1 ('id') is not UTF-8 text");
  expect_input_error([] { summary("id,dx,dy\n\xed\xa0\x80,0,0\n"); }, "summary.csv", 2,
                     "is not UTF-8 text");  // a surrogate
  // A fuzzing find: "0.e300010080" is zero printed with no resolution at all.
  expect_input_error([] { summary("id,dx,dy\nP5,0.e300010080,0.0025\n"); }, "summary.csv", 2,
                     "field 2 ('dx') is printed too coarsely to be audited");
  expect_input_error([] { summary("id,dx,dy\nP5,2e7,0.0025\n"); }, "summary.csv", 2,
                     "is beyond 1e6 mm");
}

TEST_CASE("write the tilted-bore audit for the numpy cross-check", "[.][audit-cases]") {
  const Part p = part(0.0005);
  const PartEvaluation e = evaluated(p);
  const std::string text = "id,z,dx,dy,position,verdict\nT1,0.0000,0.0100,0.0000,0.0200,pass\n";
  const AuditResult r = audit_summary(p.plan, e, summary(text));
  const BoreAudit& t1 = audit_of(r, "T1");
  std::ostringstream out;
  out << std::setprecision(17) << "{\"tolerance\": 0.05, \"top\": 0.0, \"bottom\": -28.0,\n"
      << " \"summary\": {\"dx\": 0.01, \"dy\": 0.0, \"position\": 0.02, \"verdict\": \"pass\"},\n"
      << " \"cylzone\": {\"mouth_dx\": " << t1.centres[0].cylzone[0].offset.x()
      << ", \"mouth_dy\": " << t1.centres[0].cylzone[0].offset.y()
      << ", \"position\": " << t1.position << ", \"allowed\": " << t1.allowed << ", \"finding\": \""
      << summary_finding_name(t1.finding) << "\"},\n \"points\": [";
  const Eigen::Matrix3Xd& pts = p.inputs.bores[0].points;
  for (Eigen::Index i = 0; i < pts.cols(); ++i)
    out << (i ? ",\n  " : "\n  ") << "[" << pts(0, i) << ", " << pts(1, i) << ", " << pts(2, i)
        << "]";
  out << "],\n \"basic\": [30.0, 20.0]}\n";
  cylzone::testing::write_case_file("CYLZONE_AUDIT_CASES", out.str());
}

TEST_CASE("the plan's [audit] table", "[audit]") {
  const std::string head =
      "format = \"cylzone-plan-1\"\nname = \"audit plan\"\nunits = \"inch\"\n"
      "[datum.A]\nfeature = \"plane\"\npoints = \"a.csv\"\n"
      "[[bore]]\nid = \"H1\"\npoints = \"h1.csv\"\nbasic = [1.0, 1.0]\n"
      "position = { tolerance = 0.001, datums = \"A\" }\n";
  SECTION("every key") {
    const PartPlan plan =
        parse_plan(head +
                       "[audit]\nsummary = \"out/summary.csv\"\nunits = \"mm\"\n"
                       "same_plane_tolerance = 0.0002\n"
                       "columns = { id = \"Feature\", dx = \"Dev X\", z2 = \"Z low\" }\n",
                   "dir/plan.toml", false);
    REQUIRE(plan.audit);
    CHECK(plan.audit->summary == std::filesystem::path("dir/out/summary.csv"));
    CHECK(plan.audit->units == LengthUnit::millimetre);
    // A length in the plan's unit (inch, exactly 25.4 mm).
    CHECK(*plan.audit->same_plane_tolerance == Approx(0.0002 * 25.4).epsilon(1e-15));
    CHECK(plan.audit->column(SummaryField::id) == "Feature");
    CHECK(plan.audit->column(SummaryField::dx) == "Dev X");
    CHECK(plan.audit->column(SummaryField::z2) == "Z low");
    CHECK(plan.audit->column(SummaryField::dy).empty());
  }
  SECTION("errors name the key and its line") {
    expect_input_error(
        [&] { parse_plan(head + "[audit]\ncolumns = { idd = \"F\" }\n", "plan.toml", false); },
        "plan.toml", 13, "key 'audit.columns.idd': unknown summary field");
    expect_input_error(
        [&] { parse_plan(head + "[audit]\nsame_plane_tolerance = 0\n", "plan.toml", false); },
        "plan.toml", 13, "key 'audit.same_plane_tolerance': expected a length above 0");
    expect_input_error(
        [&] { parse_plan(head + "[audit]\nunits = \"furlong\"\n", "plan.toml", false); },
        "plan.toml", 13, "key 'audit.units': unknown unit");
    expect_input_error(
        [&] { parse_plan(head + "[audit]\nsumary = \"s.csv\"\n", "plan.toml", false); },
        "plan.toml", 13, "key 'audit.sumary': unknown key in [audit]");
  }
}
