// The load stage (part_inputs.hpp), the evaluation core (evaluate_part.hpp) and check_part as
// their composition (part_check.hpp).
//
// References outside the code under test:
//  * FIPS 180-2, Appendix B.1: SHA-256("abc") =
//    ba7816bf 8f01cfea 414140de 5dae2223 b00361a3 96177a9c b410ff61 f20015ad;
//  * the digest of a whole file as an independent second read computes it (sha256sum
//    semantics: the bytes on disk);
//  * the definition of a cylindrical position zone over the full depth (ASME Y14.5-2018
//    section 7 / ISO 1101:2017, from memory for the clauses): for a straight axis the value is
//    twice the larger radial offset of its two ends from the true-position axis, computed here
//    in closed form for a perfect tilted cylinder;
//  * rigid-motion invariance of every figure (the datum reference frame's purpose, ASME
//    Y14.5-2018 section 4; common practice);
//  * determinism: the same inputs give the same bits for any thread count and any number of
//    concurrent callers (the library's contract in evaluate_part.hpp, checked figure by
//    figure).

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>
#include <thread>
#include <vector>

#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/check/part_check.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/io/load.hpp"
#include "cylzone/plan/plan.hpp"
#include "io/detail/file_digest.hpp"
#include "same_results.hpp"
#include "temporary_folder.hpp"

using namespace cylzone;
using cylzone::testing::same_characteristics;
using cylzone::testing::same_position;

namespace {

const std::filesystem::path demo_plan =
    std::filesystem::path(CYLZONE_SOURCE_DIR) / "point-clouds/valve-manifold/plan.toml";

void same_cylinder(const CylinderFit& a, const CylinderFit& b) {
  CHECK(a.axis.point == b.axis.point);
  CHECK(a.axis.direction == b.axis.direction);
  CHECK(a.radius == b.radius);
  CHECK(a.residuals.values == b.residuals.values);
  CHECK(a.ambiguity == b.ambiguity);
  CHECK(a.summary.message == b.summary.message);
  CHECK(a.summary.warnings == b.summary.warnings);
}

void same_report(const StrayPointReport& a, const StrayPointReport& b) {
  CHECK(a.robust_scale == b.robust_scale);
  CHECK(a.screened == b.screened);
  REQUIRE(a.points.size() == b.points.size());
  for (std::size_t i = 0; i < a.points.size(); ++i) {
    CHECK(a.points[i].index == b.points[i].index);
    CHECK(a.points[i].excess == b.points[i].excess);
  }
}

/// Every figure of two evaluations, compared exactly.
void same_evaluation(const PartEvaluation& a, const PartEvaluation& b) {
  CHECK(a.datums.frame.rotation == b.datums.frame.rotation);
  CHECK(a.datums.frame.origin == b.datums.frame.origin);
  CHECK(a.datums.a.plane.normal == b.datums.a.plane.normal);
  CHECK(a.datums.a.plane.point == b.datums.a.plane.point);
  CHECK(a.datums.a.flatness == b.datums.a.flatness);
  same_report(a.datums.a.stray_points, b.datums.a.stray_points);
  REQUIRE(a.datums.b.has_value() == b.datums.b.has_value());
  if (a.datums.b) {
    same_cylinder(a.datums.b->related_envelope, b.datums.b->related_envelope);
    CHECK(a.datums.b->shift_allowance == b.datums.b->shift_allowance);
    same_report(a.datums.b->stray_points, b.datums.b->stray_points);
  }
  CHECK(a.datums.notes == b.datums.notes);
  CHECK(a.warnings == b.warnings);
  REQUIRE(a.bores.size() == b.bores.size());
  for (std::size_t i = 0; i < a.bores.size(); ++i) {
    const BoreResult& x = a.bores[i];
    const BoreResult& y = b.bores[i];
    INFO("bore " << x.id);
    CHECK(x.id == y.id);
    same_cylinder(x.least_squares, y.least_squares);
    same_cylinder(x.mating_envelope, y.mating_envelope);
    same_cylinder(x.related_envelope, y.related_envelope);
    same_cylinder(x.minimum_material, y.minimum_material);
    same_cylinder(x.minimum_zone, y.minimum_zone);
    CHECK(x.axis.point == y.axis.point);
    CHECK(x.axis.direction == y.axis.direction);
    CHECK(x.tilt.angle_rad == y.tilt.angle_rad);
    CHECK(x.size.two_point_min == y.size.two_point_min);
    CHECK(x.size.two_point_max == y.size.two_point_max);
    CHECK(x.size.two_point_count == y.size.two_point_count);
    CHECK(x.size.mating_envelope == y.size.mating_envelope);
    CHECK(x.size.minimum_material_envelope == y.size.minimum_material_envelope);
    CHECK(x.form.cylindricity == y.form.cylindricity);
    same_position(x.position, y.position);
    same_position(x.position_with_mobility, y.position_with_mobility);
    REQUIRE(x.perpendicularity.has_value() == y.perpendicularity.has_value());
    if (x.perpendicularity) CHECK(x.perpendicularity->value == y.perpendicularity->value);
    REQUIRE(x.virtual_condition.has_value() == y.virtual_condition.has_value());
    if (x.virtual_condition) CHECK(x.virtual_condition->clearance == y.virtual_condition->clearance);
    same_report(x.stray_points, y.stray_points);
    CHECK(x.warnings == y.warnings);
    // The same decisions: every characteristic's value and verdict.
    same_characteristics(x, y);
  }
}

/// The inputs and plan moved by a rigid motion (the part placed elsewhere on the machine).
struct Moved {
  PartPlan plan;
  PartInputs inputs;
};

Moved rigidly_moved(const PartPlan& plan, const PartInputs& inputs) {
  const Eigen::Matrix3d r =
      (Eigen::AngleAxisd(0.7, Eigen::Vector3d(0.3, -0.5, 0.8).normalized())).toRotationMatrix();
  const Eigen::Vector3d t(250.0, -130.0, 410.0);
  Moved m{plan, inputs};
  const auto move = [&](PointCloud& c) {
    c.points = (r * c.points).colwise() + t;
    if (c.has_vectors()) c.vectors = r * c.vectors;
  };
  for (PointCloud& c : m.inputs.datums) move(c);
  for (PointCloud& c : m.inputs.bores) move(c);
  for (PlanDatum& d : m.plan.datums)
    if (d.material_side) d.material_side = r * *d.material_side;
  return m;
}

}  // namespace

TEST_CASE("load reads a file once and its digest is the FIPS 180-2 value", "[check][load]") {
  const testing::TemporaryFolder folder("load");
  const std::filesystem::path abc = folder.write("abc.txt", "abc");
  const LoadedFile loaded = load(abc);
  CHECK(loaded.bytes() == "abc");
  CHECK(detail::sha256_of_bytes(loaded.bytes()) ==
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  CHECK_THROWS_AS(load(folder.path() / "missing.csv"), InputError);
  CHECK_THROWS_AS(load(folder.path()), InputError);
}

TEST_CASE("load_part_inputs records the digest of each file's bytes and its points",
          "[check][load]") {
  const PartPlan plan = read_plan(demo_plan);
  const PartInputs inputs = load_part_inputs(plan);
  REQUIRE(inputs.datums.size() == plan.datums.size());
  REQUIRE(inputs.bores.size() == plan.bores.size());
  REQUIRE(inputs.records.size() == 1 + plan.datums.size() + plan.bores.size());
  CHECK(inputs.records.front().role == "plan");
  CHECK(inputs.records.front().sha256 == plan.sha256);
  for (std::size_t k = 0; k < plan.datums.size(); ++k) {
    const InputRecord& r = inputs.records[1 + k];
    CHECK(r.role == std::string("datum ") + plan.datums[k].label);
    // A second, independent read of the whole file (sha256sum semantics).
    CHECK(r.sha256 == detail::sha256_of_file(plan.datums[k].points));
    CHECK(r.points == inputs.datums[k].size());
  }
  for (std::size_t k = 0; k < plan.bores.size(); ++k) {
    const InputRecord& r = inputs.records[1 + plan.datums.size() + k];
    CHECK(r.role == "bore " + plan.bores[k].id);
    CHECK(r.sha256 == detail::sha256_of_file(plan.bores[k].points));
    CHECK(r.points == inputs.bores[k].size());
    CHECK(r.points > 0);
  }
}

TEST_CASE("load_part_inputs gives the same inputs and digests for 1 and 2 threads",
          "[check][load][threads]") {
  // With two threads a file's SHA-256 runs beside its parse and a scan's segmentation on
  // both: the points, vectors, file lines, records and the scan's record must be the same
  // bits as one thread's, and each digest a second, independent read of the whole file's
  // (sha256sum semantics). The per-feature demo plan and its whole-part scan plan.
  for (const char* name : {"plan.toml", "plan-scan.toml"}) {
    const PartPlan plan = read_plan(demo_plan.parent_path() / name);
    const PartInputs one = load_part_inputs(plan, LoadOptions{1});
    const PartInputs two = load_part_inputs(plan, LoadOptions{2});
    const auto same_clouds = [](const std::vector<PointCloud>& a,
                                const std::vector<PointCloud>& b) {
      REQUIRE(a.size() == b.size());
      for (std::size_t k = 0; k < a.size(); ++k) {
        CHECK(a[k].size() > 0);
        CHECK(a[k].points == b[k].points);
        CHECK(a[k].vectors == b[k].vectors);
        CHECK(a[k].lines == b[k].lines);
      }
    };
    same_clouds(one.datums, two.datums);
    same_clouds(one.bores, two.bores);
    REQUIRE(one.records.size() == two.records.size());
    for (std::size_t k = 0; k < one.records.size(); ++k) {
      CHECK(one.records[k].role == two.records[k].role);
      CHECK(one.records[k].sha256 == two.records[k].sha256);
      CHECK(one.records[k].points == two.records[k].points);
      CHECK(one.records[k].point_lines == two.records[k].point_lines);
      if (k > 0) CHECK(two.records[k].sha256 == detail::sha256_of_file(two.records[k].path));
    }
    REQUIRE(one.scan.has_value() == two.scan.has_value());
    if (one.scan) {
      CHECK(one.scan->unassigned == two.scan->unassigned);
      REQUIRE(one.scan->features.size() == two.scan->features.size());
      for (std::size_t k = 0; k < one.scan->features.size(); ++k) {
        CHECK(one.scan->features[k].points == two.scan->features[k].points);
        CHECK(one.scan->features[k].angular_coverage_deg ==
              two.scan->features[k].angular_coverage_deg);
        CHECK(one.scan->features[k].probed_span == two.scan->features[k].probed_span);
      }
    }
  }
  // A file the parse refuses: the same error on two threads as on one.
  const testing::TemporaryFolder folder("load-threads");
  std::ifstream in(demo_plan);
  std::stringstream text;
  text << in.rdbuf();
  std::string plan_text = text.str();
  const std::filesystem::path bad = folder.write("bad.csv", "x,y,z\n1,2,3\n4,five,6\n");
  const std::string datum_a = "\"points/datum-A.csv\"";
  const std::size_t at = plan_text.find(datum_a);
  REQUIRE(at != std::string::npos);
  plan_text.replace(at, datum_a.size(), "\"" + bad.generic_string() + "\"");
  for (std::size_t from = plan_text.find("\"points/"); from != std::string::npos;
       from = plan_text.find("\"points/", from + 1))
    plan_text.insert(from + 1, demo_plan.parent_path().generic_string() + "/");
  const std::filesystem::path plan_file = folder.write("plan.toml", plan_text);
  const PartPlan plan = read_plan(plan_file);
  std::string message_one, message_two;
  try {
    (void)load_part_inputs(plan, LoadOptions{1});
  } catch (const InputError& e) {
    message_one = e.what();
  }
  try {
    (void)load_part_inputs(plan, LoadOptions{2});
  } catch (const InputError& e) {
    message_two = e.what();
  }
  CHECK_THAT(message_one, Catch::Contains("bad.csv"));
  CHECK(message_two == message_one);
}

TEST_CASE("evaluate_part gives the same bits for 1 and 2 threads", "[check][threads]") {
  const PartPlan plan = read_plan(demo_plan);
  const PartInputs inputs = load_part_inputs(plan);
  EvaluationOptions one, two;
  one.threads = 1;
  two.threads = 2;
  same_evaluation(evaluate_part(plan, inputs, one), evaluate_part(plan, inputs, two));
}

TEST_CASE("the sensitivity study gives the same bits for 1 and 3 threads", "[check][threads]") {
  const PartPlan plan = read_plan(demo_plan);
  const PartInputs inputs = load_part_inputs(plan);
  EvaluationOptions one, three;
  one.threads = 1;
  three.threads = 3;
  const PartEvaluation nominal = evaluate_part(plan, inputs, one);
  const std::vector<BoreSensitivity> a = association_sensitivity(plan, inputs, nominal, one);
  const std::vector<BoreSensitivity> b = association_sensitivity(plan, inputs, nominal, three);
  REQUIRE(a.size() == b.size());
  for (std::size_t i = 0; i < a.size(); ++i) {
    REQUIRE(a[i].rows.size() == b[i].rows.size());
    for (std::size_t r = 0; r < a[i].rows.size(); ++r) {
      CHECK(a[i].rows[r].association == b[i].rows[r].association);
      CHECK(a[i].rows[r].position == b[i].rows[r].position);
      CHECK(a[i].rows[r].perpendicularity == b[i].rows[r].perpendicularity);
    }
  }
}

TEST_CASE("evaluate_part releases the datum features' and the bores' residual values above the "
          "cap and changes nothing else",
          "[check][memory]") {
  // Reference: the same evaluation with every value kept (the demo's features are far below
  // the default cap), its values then cleared by hand: every other field must be the same bits.
  const PartPlan plan = read_plan(demo_plan);
  const PartInputs inputs = load_part_inputs(plan);
  EvaluationOptions released_options;
  released_options.bore.residuals_kept_up_to = 10;
  PartEvaluation kept = evaluate_part(plan, inputs);
  const PartEvaluation released = evaluate_part(plan, inputs, released_options);
  REQUIRE(kept.datums.b.has_value());
  CHECK(kept.datums.a.plane.residuals.values.size() ==
        static_cast<Eigen::Index>(inputs.datums.front().size()));
  CHECK(kept.datums.b->related_envelope.residuals.values.size() > 10);
  CHECK(released.datums.a.plane.residuals.values.size() == 0);
  CHECK(released.datums.b->related_envelope.residuals.values.size() == 0);
  CHECK(released.datums.a.plane.residuals.rms == kept.datums.a.plane.residuals.rms);
  CHECK(released.datums.a.plane.residuals.form == kept.datums.a.plane.residuals.form);
  for (const BoreResult& bore : released.bores) {
    INFO("bore " << bore.id);
    CHECK(bore.least_squares.residuals.values.size() == 0);
    CHECK(bore.mating_envelope.residuals.values.size() == 0);
    CHECK(bore.minimum_zone.residuals.values.size() == 0);
  }
  const auto clear = [](CylinderFit& fit) { fit.residuals.values = Eigen::VectorXd(); };
  kept.datums.a.plane.residuals.values = Eigen::VectorXd();
  clear(kept.datums.b->related_envelope);
  if (kept.datums.c_feature) clear(kept.datums.c_feature->related_envelope);
  if (kept.datums.c_plane) kept.datums.c_plane->plane.residuals.values = Eigen::VectorXd();
  for (BoreResult& bore : kept.bores)
    for (CylinderFit* fit : {&bore.least_squares, &bore.mating_envelope, &bore.related_envelope,
                             &bore.minimum_material, &bore.minimum_zone})
      clear(*fit);
  same_evaluation(kept, released);
  for (std::size_t i = 0; i < kept.bores.size(); ++i) {
    CHECK(kept.bores[i].surface_map.mean == released.bores[i].surface_map.mean);
    CHECK(kept.bores[i].surface_map.count == released.bores[i].surface_map.count);
  }
}

TEST_CASE("evaluate_part is re-entrant: two concurrent calls equal their serial results",
          "[check][threads]") {
  const PartPlan plan = read_plan(demo_plan);
  const PartInputs inputs = load_part_inputs(plan);
  const Moved moved = rigidly_moved(plan, inputs);
  EvaluationOptions options;
  options.threads = 1;
  const PartEvaluation serial_a = evaluate_part(plan, inputs, options);
  const PartEvaluation serial_b = evaluate_part(moved.plan, moved.inputs, options);
  PartEvaluation concurrent_a, concurrent_b;
  std::thread first([&] { concurrent_a = evaluate_part(plan, inputs, options); });
  std::thread second([&] { concurrent_b = evaluate_part(moved.plan, moved.inputs, options); });
  first.join();
  second.join();
  same_evaluation(serial_a, concurrent_a);
  same_evaluation(serial_b, concurrent_b);

  // Rigid-motion invariance: the moved part's figures equal the original's to rounding.
  REQUIRE(serial_a.bores.size() == serial_b.bores.size());
  for (std::size_t i = 0; i < serial_a.bores.size(); ++i) {
    INFO("bore " << serial_a.bores[i].id);
    const BoreResult& x = serial_a.bores[i];
    const BoreResult& y = serial_b.bores[i];
    if (x.position) CHECK(std::abs(x.position->value - y.position->value) < 1e-7);
    if (x.perpendicularity)
      CHECK(std::abs(x.perpendicularity->value - y.perpendicularity->value) < 1e-7);
    CHECK(std::abs(x.size.mating_envelope - y.size.mating_envelope) < 1e-7);
    CHECK(x.stray_points.points.size() == y.stray_points.points.size());
  }
}

TEST_CASE("evaluate_part on clouds built in memory: position of a tilted bore in closed form",
          "[check][memory]") {
  // Datum A: the plane z = 0, material below (-z); no B, no C, so the frame is the
  // measurement frame. The bore: a perfect cylinder of radius 4 whose axis passes through
  // (x0, y0, 0) with slope a in x per unit of z, probed in 9 rings of 36 points perpendicular to
  // its axis from 2 mm to 30 mm deep. No file anywhere.
  const double x0 = 0.004, y0 = -0.003, a = 0.0005, radius = 4.0;
  PartPlan plan;
  plan.file = "in-memory plan";
  PlanDatum datum_a;
  datum_a.label = 'A';
  datum_a.kind = FeatureKind::plane;
  datum_a.material_side = Eigen::Vector3d(0.0, 0.0, -1.0);
  plan.datums.push_back(datum_a);
  PlanBore bore;
  bore.id = "M1";
  bore.axis = BoreAxisMethod::least_squares;
  PlanTolerance position;
  position.tolerance = 0.025;
  position.datums = {DatumReference{'A', MaterialBoundary::rmb}};
  bore.position = position;
  plan.bores.push_back(bore);

  PartInputs inputs;
  PointCloud plane;
  plane.points.resize(3, 121);
  for (int i = 0; i < 11; ++i)
    for (int j = 0; j < 11; ++j)
      plane.points.col(11 * i + j) = Eigen::Vector3d(-50.0 + 10.0 * i, -50.0 + 10.0 * j, 0.0);
  inputs.datums.push_back(plane);
  const Eigen::Vector3d w = Eigen::Vector3d(a, 0.0, 1.0).normalized();
  const Eigen::Vector3d u = Eigen::Vector3d::UnitY().cross(w).normalized();
  const Eigen::Vector3d v = w.cross(u);
  PointCloud cylinder;
  cylinder.points.resize(3, 9 * 36);
  for (int level = 0; level < 9; ++level)
    for (int k = 0; k < 36; ++k) {
      const double depth = -2.0 - 3.5 * level;  // z of the axis point of this ring
      const double angle = 2.0 * 3.14159265358979323846 * (k + 0.25 * level) / 36.0;
      const Eigen::Vector3d centre(x0 + a * depth, y0, depth);
      cylinder.points.col(36 * level + k) =
          centre + radius * (std::cos(angle) * u + std::sin(angle) * v);
    }
  inputs.bores.push_back(cylinder);

  EvaluationOptions options;
  options.profile.ambiguity = false;
  const PartEvaluation e = evaluate_part(plan, inputs, options);
  REQUIRE(e.bores.size() == 1);
  REQUIRE(e.bores[0].position);
  // The evaluated range is the probed extent in z; the axis' offset at height z is
  // (x0 + a z, y0): the value is twice the larger of the two ends' offsets.
  const double top = cylinder.points.row(2).maxCoeff();
  const double bottom = cylinder.points.row(2).minCoeff();
  const double expected = 2.0 * std::max(std::hypot(x0 + a * top, y0), std::hypot(x0 + a * bottom, y0));
  CHECK(e.bores[0].position->value == Approx(expected).margin(1e-9));
  CHECK(e.bores[0].tilt.angle_rad == Approx(std::atan(a)).margin(1e-12));
  CHECK(e.bores[0].size.least_squares == Approx(2.0 * radius).margin(1e-9));

  // Clouds that do not match the plan are refused.
  PartInputs short_inputs = inputs;
  short_inputs.bores.clear();
  CHECK_THROWS_AS(evaluate_part(plan, short_inputs, options), std::invalid_argument);
}

TEST_CASE("the evaluation profile skips two-point sizes and the screen, and nothing else",
          "[check][profile]") {
  const PartPlan plan = read_plan(demo_plan);
  const PartInputs inputs = load_part_inputs(plan);
  EvaluationOptions lean;
  lean.profile.two_point_sizes = false;
  lean.profile.stray_screen = false;
  lean.profile.ambiguity = false;
  const PartEvaluation full = evaluate_part(plan, inputs);
  const PartEvaluation quick = evaluate_part(plan, inputs, lean);
  REQUIRE(full.bores.size() == quick.bores.size());
  for (std::size_t i = 0; i < full.bores.size(); ++i) {
    INFO("bore " << full.bores[i].id);
    CHECK(quick.bores[i].size.two_point_count == 0);
    CHECK(quick.bores[i].stray_points.screened == 0);
    CHECK(full.bores[i].size.two_point_count > 0);
    CHECK(full.bores[i].stray_points.screened > 0);
    // Skipping the walks leaves each element as it is: the same figures.
    CHECK(quick.bores[i].mating_envelope.radius == full.bores[i].mating_envelope.radius);
    CHECK(quick.bores[i].minimum_zone.residuals.form == full.bores[i].minimum_zone.residuals.form);
    same_position(quick.bores[i].position, full.bores[i].position);
  }
  CHECK(quick.datums.frame.rotation == full.datums.frame.rotation);
  CHECK(quick.datums.frame.origin == full.datums.frame.origin);
  // The profile reaches the datum features' preparation too.
  CHECK(full.datums.a.stray_points.screened > 0);
  CHECK(quick.datums.a.stray_points.screened == 0);
  REQUIRE(full.datums.b);
  CHECK(full.datums.b->stray_points.screened > 0);
  CHECK(quick.datums.b->stray_points.screened == 0);
}

TEST_CASE("the stray-point options reach every datum feature and every bore", "[check][prepare]") {
  const PartPlan plan = read_plan(demo_plan);
  const PartInputs inputs = load_part_inputs(plan);
  // More neighbours than any feature has points: nothing can be screened (stray_points.hpp).
  EvaluationOptions wide;
  wide.bore.stray_points.neighbours = 1000000;
  const PartEvaluation e = evaluate_part(plan, inputs, wide);
  CHECK(e.datums.a.stray_points.screened == 0);
  REQUIRE(e.datums.b);
  CHECK(e.datums.b->stray_points.screened == 0);
  for (const BoreResult& b : e.bores) CHECK(b.stray_points.screened == 0);
  // An impossible threshold is refused, wherever it would be used first.
  EvaluationOptions bad;
  bad.bore.stray_points.threshold = -1.0;
  CHECK_THROWS_AS(evaluate_part(plan, inputs, bad), std::invalid_argument);
}

TEST_CASE("check_part is load_part_inputs, evaluate_part, the sensitivity study and decide",
          "[check]") {
  const PartPlan plan = read_plan(demo_plan);
  const PartCheckResult checked = check_part(plan);
  const PartInputs inputs = load_part_inputs(plan);
  const PartEvaluation evaluation = evaluate_part(plan, inputs);
  const std::vector<BoreSensitivity> sensitivity =
      association_sensitivity(plan, inputs, evaluation);

  REQUIRE(checked.inputs.size() == inputs.records.size());
  for (std::size_t k = 0; k < inputs.records.size(); ++k) {
    CHECK(checked.inputs[k].role == inputs.records[k].role);
    CHECK(checked.inputs[k].sha256 == inputs.records[k].sha256);
  }
  PartEvaluation from_check;
  from_check.datums = checked.datums;
  from_check.bores = checked.bores;
  from_check.warnings = checked.warnings;
  same_evaluation(from_check, evaluation);
  REQUIRE(checked.sensitivity.size() == sensitivity.size());
  for (std::size_t i = 0; i < sensitivity.size(); ++i) {
    CHECK(checked.sensitivity[i].position_spread == sensitivity[i].position_spread);
    REQUIRE(checked.sensitivity[i].rows.size() == sensitivity[i].rows.size());
    CHECK(sensitivity[i].rows.size() == 4);  // every association of A, the plan's first
    CHECK(sensitivity[i].rows.front().association == plan.datums.front().association);
    for (std::size_t r = 0; r < sensitivity[i].rows.size(); ++r)
      CHECK(checked.sensitivity[i].rows[r].position == sensitivity[i].rows[r].position);
  }
  // The decision: the part conforms exactly when every bore does.
  bool all = true;
  for (const BoreResult& b : checked.bores)
    all = all && feature_verdict(checked.characteristics, b.id) == Verdict::conforms;
  CHECK((checked.verdict == Verdict::conforms) == all);

  CheckOptions without;
  without.sensitivity = false;
  CHECK(check_part(plan, without).sensitivity.empty());

  // On an evaluation the caller made (and may hand to the uncertainty study as well): the same
  // result, characteristic by characteristic.
  const PartCheckResult given = check_part(plan, inputs, evaluation, CheckOptions{});
  REQUIRE(given.characteristics.size() == checked.characteristics.size());
  for (std::size_t i = 0; i < given.characteristics.size(); ++i) {
    INFO(checked.characteristics[i].id);
    CHECK(given.characteristics[i].id == checked.characteristics[i].id);
    CHECK(given.characteristics[i].value == checked.characteristics[i].value);
    CHECK(given.characteristics[i].verdict == checked.characteristics[i].verdict);
  }
  CHECK(given.verdict == checked.verdict);
  CHECK(given.sensitivity.size() == checked.sensitivity.size());
}
