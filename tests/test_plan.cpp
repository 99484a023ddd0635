// Tests of the part plan reader (src/plan.cpp) and the tolerancing vocabulary
// (src/tolerance_types.cpp) against the plan format specified in docs/plan.md.
//
// Line numbers: each error test states the line of the offending key by searching the plan text
// for a marker string, independently of the TOML parser, and checks that the InputError reports
// that line, the plan file, the key path and the problem's wording.

#include <catch2/catch.hpp>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/plan/tolerance_types.hpp"
#include "cylzone/core/units.hpp"

namespace fs = std::filesystem;
using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

const fs::path kPlanFile = fs::path("parts") / "block.toml";

// A small valid plan; the error tests change one thing in it at a time.
const std::string kBase = R"(format = "cylzone-plan-1"
name = "Test block"
units = "mm"

[datum.A]
feature = "plane"
points = "a.csv"

[datum.B]
feature = "bore"
points = "b.csv"
size = { lower = 19.990, upper = 20.011 }

[datum.C]
feature = "bore"
points = "c.csv"
basic = [90.0, 0.0]
size = { lower = 8.000, upper = 8.015 }

[[bore]]
id = "P1"
points = "p1.csv"
basic = [40.0, 25.0]
size = { lower = 12.000, upper = 12.018 }
position = { tolerance = 0.025, modifier = "MMC", datums = "A|B(M)|C" }
perpendicularity = { tolerance = 0.010 }

[[bore]]
id = "P2"
points = "p2.csv"
basic = [-40.0, 25.0]
cylindricity = 0.008
)";

// The tables of datums B and C in kBase, for tests that remove or change them.
const std::string kDatumBTable =
    "[datum.B]\n"
    "feature = \"bore\"\n"
    "points = \"b.csv\"\n"
    "size = { lower = 19.990, upper = 20.011 }\n\n";
const std::string kDatumCBody =
    "feature = \"bore\"\n"
    "points = \"c.csv\"\n"
    "basic = [90.0, 0.0]\n"
    "size = { lower = 8.000, upper = 8.015 }";

/// 1-based line of the only occurrence of `marker` in `text`.
std::size_t line_of(const std::string& text, const std::string& marker) {
  INFO("marker: " << marker);
  const std::size_t at = text.find(marker);
  REQUIRE(at != std::string::npos);
  REQUIRE(text.find(marker, at + 1) == std::string::npos);
  std::size_t line = 1;
  for (std::size_t i = 0; i < at; ++i)
    if (text[i] == '\n') ++line;
  return line;
}

/// `text` with the only occurrence of `from` replaced by `to`.
std::string replaced(std::string text, const std::string& from, const std::string& to) {
  const std::size_t at = text.find(from);
  REQUIRE(at != std::string::npos);
  REQUIRE(text.find(from, at + 1) == std::string::npos);
  return text.replace(at, from.size(), to);
}

/// kBase with datum C a plane; `extra` is appended to C's table.
std::string with_plane_c(const std::string& extra) {
  return replaced(kBase, kDatumCBody, "feature = \"plane\"\npoints = \"c.csv\"" + extra);
}

/// Parses `text` expecting an InputError at the line of `marker`, for `key`, whose problem
/// contains `wording`.
void check_error(const std::string& text, const std::string& marker, const std::string& key,
                 const std::string& wording) {
  const std::size_t line = line_of(text, marker);
  INFO("expected an error at line " << line << " for key '" << key << "'");
  try {
    (void)parse_plan(text, kPlanFile, /*check_files=*/false);
    FAIL("the plan was accepted");
  } catch (const InputError& e) {
    INFO("what(): " << e.what());
    CHECK(e.file() == kPlanFile.string());
    CHECK(e.line() == line);
    CHECK(e.key() == key);
    CHECK_THAT(e.problem(), Contains(wording));
    const std::string prefix = kPlanFile.string() + ":" + std::to_string(line) + ": " +
                               (key.empty() ? std::string() : "key '" + key + "': ");
    CHECK_THAT(std::string(e.what()), Catch::Matchers::StartsWith(prefix));
  }
}

std::string read_text(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  REQUIRE(in);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

/// A fresh folder under the system's temporary directory, removed when the test ends.
struct TemporaryFolder {
  fs::path path;
  TemporaryFolder() {
    std::random_device device;
    path = fs::temp_directory_path() /
           ("cylzone-test-plan-" +
            std::to_string(std::uniform_int_distribution<std::uint64_t>()(device)));
    fs::create_directories(path);
  }
  ~TemporaryFolder() {
    std::error_code ec;
    fs::remove_all(path, ec);
  }
  void write(const fs::path& relative, const std::string& text) const {
    fs::create_directories((path / relative).parent_path());
    std::ofstream(path / relative, std::ios::binary) << text;
  }
};

}  // namespace

// ====================================================================== valid plans

TEST_CASE("a complete millimetre plan is read with every value", "[plan]") {
  const fs::path file = fs::path(CYLZONE_TEST_DATA_DIR) / "plan" / "complete-mm.toml";
  const PartPlan plan = parse_plan(read_text(file), file, /*check_files=*/false);
  const fs::path dir = file.parent_path();

  CHECK(plan.file == file);
  CHECK(plan.name == "Manifold block MB-7, op 40");
  CHECK(plan.unit == LengthUnit::millimetre);
  CHECK_FALSE(plan.probe.ball_centres);
  CHECK(plan.probe.tip_diameter == 2.0);

  REQUIRE(plan.datums.size() == 3);
  const PlanDatum& a = plan.datums[0];
  CHECK(a.label == 'A');
  CHECK(a.kind == FeatureKind::plane);
  CHECK(a.points == (dir / "points/datum-A.csv").lexically_normal());
  CHECK(a.association == PlaneAssociation::tangent_minimax);
  REQUIRE(a.material_side);
  CHECK(a.material_side->isApprox(Eigen::Vector3d(0, 0, -1), 1e-15));  // normalised from length 2
  CHECK_FALSE(a.size);
  CHECK(a.where.key == "datum.A");
  CHECK(a.where.line == 11);

  const PlanDatum& b = plan.datums[1];
  CHECK(b.label == 'B');
  CHECK(b.kind == FeatureKind::bore);
  REQUIRE(b.size);
  CHECK(b.size->lower == 19.990);
  CHECK(b.size->upper == 20.011);
  CHECK(b.size->mmc(b.kind) == 19.990);  // a bore is at MMC at its smallest (common practice)
  REQUIRE(b.mmb_size);
  CHECK(*b.mmb_size == 19.985);
  CHECK_FALSE(b.basic_location);

  const PlanDatum& c = plan.datums[2];
  CHECK(c.label == 'C');
  CHECK(c.kind == FeatureKind::bore);
  REQUIRE(c.basic_location);
  CHECK(*c.basic_location == Eigen::Vector2d(90.0, 0.0));
  CHECK_FALSE(c.mmb_size);  // the default (MMC size) is the frame builder's to apply
  CHECK_FALSE(c.outward_normal);
  CHECK(plan.datum('C') == &c);
  CHECK(plan.datum('D') == nullptr);

  REQUIRE(plan.bores.size() == 3);
  const PlanBore& p1 = plan.bores[0];
  CHECK(p1.id == "P1");
  CHECK(p1.points == (dir / "points" / "P1.csv"));
  CHECK(p1.basic_location == Eigen::Vector2d(40.0, 25.0));
  CHECK(p1.nominal_direction == Eigen::Vector3d::UnitZ());
  CHECK(p1.depth_top == -1.5);
  CHECK(p1.depth_bottom == -64.0);
  REQUIRE(p1.size);
  CHECK(p1.size->lower == 12.000);
  CHECK(p1.size->upper == 12.018);
  CHECK(p1.axis == BoreAxisMethod::mating_envelope);
  REQUIRE(p1.position);
  CHECK(p1.position->tolerance == 0.025);
  CHECK(p1.position->condition == MaterialCondition::mmc);
  REQUIRE(p1.position->projected_height);
  CHECK(*p1.position->projected_height == 15.0);
  // "A|B(M)|C": A at RMB (a plane), B at MMB, C at RMB.
  REQUIRE(p1.position->datums.size() == 3);
  CHECK(p1.position->datums[0].label == 'A');
  CHECK(p1.position->datums[0].boundary == MaterialBoundary::rmb);
  CHECK(p1.position->datums[1].label == 'B');
  CHECK(p1.position->datums[1].boundary == MaterialBoundary::mmb);
  CHECK(p1.position->datums[2].label == 'C');
  CHECK(p1.position->datums[2].boundary == MaterialBoundary::rmb);
  CHECK(datum_references_text(p1.position->datums) == "A|B(M)|C");
  CHECK(p1.position->where.key == "bore[P1].position");
  CHECK(p1.position->where.line == 36);
  REQUIRE(p1.perpendicularity);
  CHECK(p1.perpendicularity->tolerance == 0.010);
  CHECK(p1.perpendicularity->condition == MaterialCondition::rfs);
  REQUIRE(p1.perpendicularity->datums.size() == 1);
  CHECK(p1.perpendicularity->datums[0].label == 'A');
  CHECK_FALSE(p1.perpendicularity->projected_height);
  CHECK(p1.cylindricity == 0.008);
  CHECK(p1.where.key == "bore[P1]");
  CHECK(p1.where.line == 29);

  const PlanBore& p2 = plan.bores[1];
  CHECK(p2.basic_location == Eigen::Vector2d(-40.0, 25.0));  // TOML integers accepted
  // Given as (0, -0.6, -0.8): unit length already, stored with the sense out of the material.
  CHECK(p2.nominal_direction.isApprox(Eigen::Vector3d(0.0, 0.6, 0.8), 1e-15));
  CHECK_FALSE(p2.depth_top);
  CHECK_FALSE(p2.depth_bottom);
  CHECK_FALSE(p2.size);
  CHECK(p2.axis == BoreAxisMethod::median_line);
  REQUIRE(p2.position);
  CHECK(p2.position->condition == MaterialCondition::rfs);  // the default (Y14.5-2018 Rule #2)
  CHECK(datum_references_text(p2.position->datums) == "A|B");
  CHECK_FALSE(p2.perpendicularity);
  CHECK_FALSE(p2.cylindricity);

  const PlanBore& p3 = plan.bores[2];
  REQUIRE(p3.size);
  CHECK(p3.size->lower == 6.000);
  CHECK(p3.size->upper == 6.012);
  CHECK(p3.axis == BoreAxisMethod::least_squares);
  CHECK_FALSE(p3.position);
  REQUIRE(p3.perpendicularity);
  CHECK(p3.perpendicularity->tolerance == 0.012);
  CHECK(p3.perpendicularity->condition == MaterialCondition::lmc);
  CHECK(p3.perpendicularity->where.line == 58);
  CHECK(p3.cylindricity == 0.004);
}

TEST_CASE("an inch plan is converted to millimetres at 25.4 mm per inch", "[plan]") {
  // 1 inch = 25.4 mm exactly, by definition of the international inch (common practice).
  const double in = 25.4;
  const fs::path file = fs::path(CYLZONE_TEST_DATA_DIR) / "plan" / "complete-inch.toml";
  const PartPlan plan = parse_plan(read_text(file), file, /*check_files=*/false);

  CHECK(plan.unit == LengthUnit::inch);
  CHECK(plan.probe.tip_diameter == Approx(0.0625 * in).epsilon(1e-15));
  CHECK(plan.probe.tip_diameter == Approx(1.5875).epsilon(1e-15));  // 1/16 inch
  REQUIRE(plan.datums.size() == 3);

  const PlanDatum& a = plan.datums[0];
  CHECK(a.association == PlaneAssociation::tangent_least_squares);  // the default
  CHECK_FALSE(a.material_side);  // inferred later from the bores' points

  const PlanDatum& b = *plan.datum('B');
  CHECK(b.kind == FeatureKind::pin);
  REQUIRE(b.size);
  CHECK(b.size->lower == Approx(18.9992).epsilon(1e-14));  // 0.7480 in
  CHECK(b.size->upper == Approx(19.05).epsilon(1e-14));    // 0.7500 in
  CHECK(b.size->mmc(b.kind) == b.size->upper);             // a pin is at MMC at its largest

  const PlanDatum& c = *plan.datum('C');
  CHECK(c.kind == FeatureKind::plane);
  REQUIRE(c.outward_normal);
  CHECK(c.outward_normal->isApprox(Eigen::Vector2d(0.0, -1.0), 1e-15));  // directions carry no unit
  REQUIRE(c.material_side);
  CHECK(*c.material_side == Eigen::Vector3d(0.0, 1.0, 0.0));
  CHECK_FALSE(c.basic_location);

  REQUIRE(plan.bores.size() == 1);
  const PlanBore& h1 = plan.bores[0];
  CHECK(h1.basic_location.x() == Approx(31.75).epsilon(1e-15));
  CHECK(h1.basic_location.y() == Approx(50.8).epsilon(1e-15));
  CHECK_FALSE(h1.depth_top);
  REQUIRE(h1.depth_bottom);
  CHECK(*h1.depth_bottom == Approx(-63.5).epsilon(1e-15));
  REQUIRE(h1.size);
  CHECK(h1.size->lower == Approx(6.35).epsilon(1e-15));
  CHECK(h1.size->upper == Approx(6.3754).epsilon(1e-15));
  REQUIRE(h1.position);
  CHECK(h1.position->tolerance == Approx(0.0254).epsilon(1e-15));
  REQUIRE(h1.position->datums.size() == 3);
  CHECK(h1.position->datums[1].boundary == MaterialBoundary::lmb);
  CHECK(datum_references_text(h1.position->datums) == "A|B(L)|C");
}

TEST_CASE("the annotated example of docs/plan.md is a valid plan", "[plan][docs]") {
  const fs::path doc = fs::path(CYLZONE_SOURCE_DIR) / "docs" / "plan.md";
  const std::string text = read_text(doc);
  const std::string open = "```toml\n";
  const std::size_t begin = text.find(open);
  REQUIRE(begin != std::string::npos);
  const std::size_t end = text.find("```", begin + open.size());
  REQUIRE(end != std::string::npos);
  const PartPlan plan =
      parse_plan(text.substr(begin + open.size(), end - begin - open.size()), "plan.toml", false);
  REQUIRE(plan.bores.size() == 3);
  CHECK(datum_references_text(plan.bores[0].position->datums) == "A|B(M)|C");
  CHECK(plan.bores[1].position->projected_height == 15.0);
  CHECK(plan.bores[2].nominal_direction.z() > 0.8);
}

TEST_CASE("relative point paths are resolved against the plan's folder", "[plan]") {
  std::string text = replaced(kBase, "points = \"a.csv\"", "points = \"../shared/a.csv\"");
  text = replaced(text, "points = \"p1.csv\"", "points = \"points/./p1.csv\"");
  const fs::path absolute = fs::temp_directory_path() / "cylzone-elsewhere" / "b.csv";
  text = replaced(text, "points = \"b.csv\"", "points = '" + absolute.string() + "'");

  const PartPlan plan = parse_plan(text, kPlanFile, false);
  CHECK(plan.datums[0].points == fs::path("shared") / "a.csv");
  CHECK(plan.datums[1].points == absolute);  // an absolute path stays as given
  CHECK(plan.datums[2].points == fs::path("parts") / "c.csv");
  CHECK(plan.bores[0].points == fs::path("parts") / "points" / "p1.csv");

  // A plan given without a folder: paths stay relative to the working directory.
  const PartPlan here = parse_plan(kBase, "block.toml", false);
  CHECK(here.bores[1].points == fs::path("p2.csv"));
}

TEST_CASE("defaults of a minimal plan", "[plan]") {
  const PartPlan plan = parse_plan(kBase, kPlanFile, false);
  CHECK(plan.probe.tip_diameter == 0.0);
  CHECK_FALSE(plan.probe.ball_centres);
  CHECK(plan.datums[0].association == PlaneAssociation::tangent_least_squares);
  CHECK_FALSE(plan.datums[1].mmb_size);
  const PlanBore& p1 = plan.bores[0];
  CHECK(p1.axis == BoreAxisMethod::mating_envelope);
  CHECK(p1.nominal_direction == Eigen::Vector3d::UnitZ());
  CHECK_FALSE(p1.depth_top);
  CHECK_FALSE(p1.position->projected_height);
  CHECK(p1.perpendicularity->condition == MaterialCondition::rfs);
  REQUIRE(p1.perpendicularity->datums.size() == 1);
  CHECK(p1.perpendicularity->datums[0].label == 'A');
  CHECK(p1.perpendicularity->datums[0].boundary == MaterialBoundary::rmb);
  CHECK(plan.bores[1].where.key == "bore[P2]");
}

TEST_CASE("datum references accept spaces and every defined order", "[plan]") {
  const std::string text = replaced(kBase, "datums = \"A|B(M)|C\"", "datums = \" A | B(L) \"");
  const PartPlan plan = parse_plan(text, kPlanFile, false);
  const auto& refs = plan.bores[0].position->datums;
  REQUIRE(refs.size() == 2);
  CHECK(refs[0].label == 'A');
  CHECK(refs[1].label == 'B');
  CHECK(refs[1].boundary == MaterialBoundary::lmb);

  const PartPlan only_a =
      parse_plan(replaced(kBase, "modifier = \"MMC\", datums = \"A|B(M)|C\"", "datums = \"A\""),
                 kPlanFile, false);
  CHECK(datum_references_text(only_a.bores[0].position->datums) == "A");
  const PartPlan c_mmb =
      parse_plan(replaced(kBase, "\"A|B(M)|C\"", "\"A|B|C(M)\""), kPlanFile, false);
  CHECK(c_mmb.bores[0].position->datums[2].boundary == MaterialBoundary::mmb);
  CHECK_FALSE(c_mmb.bores[0].position->datums[2].translating);
  // C's simulator translating: "(T)" after any material boundary modifier, read and written.
  for (const char* text : {"A|B(M)|C(T)", "A|B(M)|C(M)(T)"}) {
    const PartPlan t = parse_plan(replaced(kBase, "\"A|B(M)|C\"", "\"" + std::string(text) + "\""),
                                  kPlanFile, false);
    CHECK(t.bores[0].position->datums[2].translating);
    CHECK_FALSE(t.bores[0].position->datums[1].translating);
    CHECK(datum_references_text(t.bores[0].position->datums) == text);
  }
}

TEST_CASE("read_plan reads a plan file and checks that its point files exist", "[plan]") {
  TemporaryFolder folder;
  for (const char* name : {"a.csv", "b.csv", "c.csv", "p1.csv", "p2.csv"})
    folder.write(fs::path("points") / name, "x,y,z\n0,0,0\n");
  std::string text = kBase;
  for (const char* name : {"a.csv", "b.csv", "c.csv", "p1.csv", "p2.csv"})
    text = replaced(text, std::string("\"") + name + "\"", std::string("\"points/") + name + "\"");
  folder.write("plan.toml", text);

  const fs::path plan_file = folder.path / "plan.toml";
  const PartPlan plan = read_plan(plan_file);
  CHECK(plan.name == "Test block");
  CHECK(plan.file == plan_file);
  REQUIRE(plan.bores.size() == 2);
  CHECK(plan.bores[1].points == folder.path / "points" / "p2.csv");
  CHECK(fs::exists(plan.bores[1].points));

  SECTION("a missing point file names the key `points` and its line") {
    fs::remove(folder.path / "points" / "p2.csv");
    try {
      (void)read_plan(plan_file);
      FAIL("the plan was accepted");
    } catch (const InputError& e) {
      INFO(e.what());
      CHECK(e.file() == plan_file.string());
      CHECK(e.line() == line_of(text, "\"points/p2.csv\""));
      CHECK(e.key() == "bore[P2].points");
      CHECK_THAT(e.problem(), Contains("does not exist"));
      CHECK_THAT(e.problem(), Contains((folder.path / "points" / "p2.csv").string()));
    }
  }
  SECTION("a folder in place of a point file") {
    fs::remove(folder.path / "points" / "a.csv");
    fs::create_directories(folder.path / "points" / "a.csv");
    try {
      (void)read_plan(plan_file);
      FAIL("the plan was accepted");
    } catch (const InputError& e) {
      CHECK(e.key() == "datum.A.points");
      CHECK(e.line() == line_of(text, "\"points/a.csv\""));
      CHECK_THAT(e.problem(), Contains("not a point file"));
    }
  }
  SECTION("a plan file that does not exist") {
    try {
      (void)read_plan(folder.path / "nothing.toml");
      FAIL("the plan was accepted");
    } catch (const InputError& e) {
      CHECK(e.file() == (folder.path / "nothing.toml").string());
      CHECK(e.line() == 0);
      CHECK_THAT(e.problem(), Contains("does not exist"));
    }
  }
  SECTION("parse_plan with check_files false does not look for the point files") {
    fs::remove_all(folder.path / "points");
    CHECK_NOTHROW(parse_plan(text, plan_file, /*check_files=*/false));
    CHECK_THROWS_AS(parse_plan(text, plan_file, /*check_files=*/true), InputError);
  }
}

// ====================================================================== errors: TOML and keys

TEST_CASE("TOML syntax errors carry toml++'s message and line", "[plan][errors]") {
  check_error(replaced(kBase, "units = \"mm\"", "units = mm"), "units = mm", "",
              "TOML syntax error");
  // A key defined twice is a TOML error, not a silent override.
  check_error(replaced(kBase, "id = \"P2\"", "id = \"P2\"\nid = \"P3\""), "id = \"P3\"", "",
              "TOML syntax error");
}

TEST_CASE("missing required keys", "[plan][errors]") {
  // The line of a missing key is the line of the table that lacks it (1 for the top level).
  check_error(replaced(kBase, "format = \"cylzone-plan-1\"\n", "#\n"), "#", "format",
              "required key is missing");
  check_error(replaced(kBase, "name = \"Test block\"\n", ""), "format", "name",
              "required key is missing");
  check_error(replaced(kBase, "units = \"mm\"\n", ""), "format", "units",
              "required key is missing");
  check_error(replaced(kBase, "feature = \"plane\"\n", ""), "[datum.A]", "datum.A.feature",
              "required key is missing");
  check_error(replaced(kBase, "points = \"a.csv\"\n", ""), "[datum.A]", "datum.A.points",
              "required key is missing");
  check_error(replaced(kBase, "basic = [90.0, 0.0]\n", ""), "[datum.C]", "datum.C.basic",
              "required key is missing");
  check_error(replaced(kBase, "id = \"P2\"\n", ""), "[[bore]]\npoints = \"p2.csv\"", "bore[2].id",
              "required key is missing");
  check_error(replaced(kBase, "points = \"p1.csv\"\n", ""), "[[bore]]\nid = \"P1\"",
              "bore[P1].points", "required key is missing");
  check_error(replaced(kBase, "basic = [40.0, 25.0]\n", ""), "[[bore]]\nid = \"P1\"",
              "bore[P1].basic", "required key is missing");
  check_error(replaced(kBase, "tolerance = 0.025, ", ""),
              "position =", "bore[P1].position.tolerance", "required key is missing");
  check_error(replaced(kBase, ", datums = \"A|B(M)|C\"", ""),
              "position =", "bore[P1].position.datums", "required key is missing");
  check_error(replaced(kBase, "lower = 12.000, ", ""), "upper = 12.018", "bore[P1].size.lower",
              "required key is missing");
}

TEST_CASE("missing datum A, plane C without outward normal, no bores", "[plan][errors]") {
  const std::string no_a =
      replaced(kBase, "[datum.A]\nfeature = \"plane\"\npoints = \"a.csv\"\n\n", "");
  check_error(no_a, "[datum.B]", "datum.A", "expected [datum.A]");

  check_error(with_plane_c(""), "[datum.C]", "datum.C.outward_normal", "required key is missing");

  const std::string head = kBase.substr(0, kBase.find("[[bore]]"));
  check_error(head, "format", "bore", "at least one toleranced bore");
  check_error(replaced(head, "[datum.A]", "bore = []\n\n[datum.A]"), "bore = []", "bore",
              "at least one toleranced bore");
  check_error(
      head + "[bore]\nid = \"P1\"\npoints = \"p1.csv\"\nbasic = [1, 2]\ncylindricity = 0.01\n",
      "[bore]", "bore", "write [[bore]], not [bore]");
}

TEST_CASE("values of the wrong type", "[plan][errors]") {
  check_error(replaced(kBase, "name = \"Test block\"", "name = 7"), "name = 7", "name",
              "expected the part's name (a string), found an integer");
  check_error(replaced(kBase, "tolerance = 0.025", "tolerance = \"0.025\""), "\"0.025\"",
              "bore[P1].position.tolerance", "found a string");
  check_error(replaced(kBase, "tolerance = 0.010", "tolerance = true"), "tolerance = true",
              "bore[P1].perpendicularity.tolerance", "found a boolean");
  check_error(replaced(kBase, "basic = [40.0, 25.0]", "basic = 40.0"), "basic = 40.0",
              "bore[P1].basic", "found a floating-point number");
  check_error(replaced(kBase, "basic = [40.0, 25.0]", "basic = [40.0, 25.0, 0.0]"),
              "basic = [40.0, 25.0, 0.0]", "bore[P1].basic", "found an array of 3 elements");
  check_error(replaced(kBase, "basic = [40.0, 25.0]", "basic = [40.0,\n  \"25\"]"), "\"25\"",
              "bore[P1].basic", "(element 2), found a string");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = nan"), "nan",
              "bore[P2].cylindricity", "found nan");
  check_error(replaced(kBase, "{ tolerance = 0.010 }", "0.010"), "perpendicularity = 0.010",
              "bore[P1].perpendicularity", "expected a table { tolerance = ... }");
  check_error(replaced(kBase, "size = { lower = 19.990, upper = 20.011 }", "size = 20.0"),
              "size = 20.0", "datum.B.size", "expected limits of size");
  check_error(replaced(kBase, "feature = \"plane\"", "feature = [\"plane\"]"), "[\"plane\"]",
              "datum.A.feature", "found an array");
}

TEST_CASE("unknown keys are errors", "[plan][errors]") {
  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\nunit = \"mm\""), "unit = ", "unit",
              "unknown key at the top level");
  check_error(replaced(kBase, "tolerance = 0.025", "tolerence = 0.025"), "tolerence",
              "bore[P1].position.tolerence",
              "unknown key in a position tolerance (allowed: tolerance, modifier, datums, "
              "projected, projected_from, wide_zone_intended)");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\ndiameter = 12"),
              "diameter", "bore[P2].diameter", "unknown key in a [[bore]]");
  check_error(kBase + "\n[datum.D]\nfeature = \"plane\"\npoints = \"d.csv\"\n", "[datum.D]",
              "datum.D", "unknown key under [datum]");
  check_error(replaced(kBase, "points = \"a.csv\"", "points = \"a.csv\"\nsize = 3"), "size = 3",
              "datum.A.size", "unknown key for datum A");
  check_error(replaced(kBase, "basic = [90.0, 0.0]",
                       "basic = [90.0, 0.0]\nassociation = \"least-squares\""),
              "association = \"least-squares\"", "datum.C.association",
              "unknown key for datum C as a bore");
  check_error(replaced(kBase, "points = \"b.csv\"", "points = \"b.csv\"\nbasic = [1, 2]"),
              "basic = [1, 2]", "datum.B.basic", "unknown key for datum B");
  check_error(replaced(kBase, "{ tolerance = 0.010 }", "{ tolerance = 0.010, projected = 5 }"),
              "projected = 5", "bore[P1].perpendicularity.projected",
              "unknown key in a perpendicularity tolerance");
  check_error(replaced(kBase, "upper = 12.018", "upper = 12.018, nominal = 12"), "nominal",
              "bore[P1].size.nominal", "unknown key in a size");
  check_error(replaced(kBase, "[datum.A]", "[probe]\ntip = 2\n\n[datum.A]"), "tip = 2", "probe.tip",
              "unknown key in [probe]");
  // The first unknown key in the file is reported (toml++ keeps keys sorted by name).
  check_error(replaced(kBase, "cylindricity = 0.008", "zeta = 1\ncylindricity = 0.008\nalpha = 2"),
              "zeta", "bore[P2].zeta", "unknown key");
}

TEST_CASE("format and units", "[plan][errors]") {
  check_error(replaced(kBase, "\"cylzone-plan-1\"", "\"cylzone-plan-2\""), "cylzone-plan-2",
              "format", "unsupported plan format \"cylzone-plan-2\": expected \"cylzone-plan-1\"");
  check_error(replaced(kBase, "units = \"mm\"", "units = \"cm\""), "units", "units",
              "unknown unit \"cm\": expected \"mm\" or \"inch\"");
  check_error(replaced(kBase, "name = \"Test block\"", "name = \"  \""), "name", "name",
              "must not be empty");
}

// ====================================================================== errors: datums

TEST_CASE("datum definitions", "[plan][errors]") {
  check_error(replaced(kBase, "feature = \"plane\"", "feature = \"pin\""), "\"pin\"",
              "datum.A.feature", "datum A must be a plane");
  check_error(replaced(kBase, "[datum.B]\nfeature = \"bore\"", "[datum.B]\nfeature = \"plane\""),
              "\"plane\"\npoints = \"b.csv\"", "datum.B.feature",
              "datum B must be a bore or a pin");
  check_error(replaced(kBase, "feature = \"plane\"", "feature = \"surface\""), "\"surface\"",
              "datum.A.feature", "unknown feature \"surface\": expected \"plane\"");
  check_error(
      replaced(kBase, "points = \"a.csv\"", "points = \"a.csv\"\nassociation = \"gaussian\""),
      "\"gaussian\"", "datum.A.association", "unknown association \"gaussian\"");
  check_error(
      replaced(kBase, "points = \"a.csv\"", "points = \"a.csv\"\nmaterial_side = [0, 0, 0]"),
      "material_side", "datum.A.material_side", "direction has zero length");
  check_error(replaced(kBase, "points = \"a.csv\"", "points = \"\""), "points = \"\"",
              "datum.A.points", "empty");

  // C clocks the frame about B's axis: no C without B.
  const std::string no_b = replaced(replaced(kBase, kDatumBTable, ""), "\"A|B(M)|C\"", "\"A\"");
  check_error(no_b, "[datum.C]", "datum.C", "datum C needs datum B");

  check_error(replaced(kBase, "basic = [90.0, 0.0]", "basic = [0.0, 0.0]"), "basic = [0.0, 0.0]",
              "datum.C.basic", "must not be at datum B's axis");
  const std::string plane_c = with_plane_c("\noutward_normal = [0.0, 0.0]");
  check_error(plane_c, "outward_normal", "datum.C.outward_normal", "direction has zero length");
  check_error(replaced(plane_c, "outward_normal = [0.0, 0.0]",
                       "outward_normal = [1, 0]\nsize = { lower = 1, upper = 2 }"),
              "size = { lower = 1, ", "datum.C.size", "unknown key for datum C as a plane");
}

TEST_CASE("datum size and maximum material boundary", "[plan][errors]") {
  check_error(replaced(kBase, "lower = 19.990, upper = 20.011", "lower = 20.011, upper = 19.990"),
              "lower = 20.011", "datum.B.size",
              "the lower limit 20.011 must be less than the upper limit 19.99");
  check_error(replaced(kBase, "lower = 19.990, upper = 20.011", "lower = 20, upper = 20"),
              "lower = 20, upper = 20", "datum.B.size", "must be less than the upper limit");
  check_error(replaced(kBase, "lower = 8.000, upper = 8.015", "lower = 0, upper = 8.015"),
              "lower = 0,", "datum.C.size.lower", "must be greater than zero (found 0)");
  check_error(replaced(kBase, "lower = 12.000, upper = 12.018", "lower = -12.0, upper = 12.018"),
              "lower = -12.0", "bore[P1].size.lower", "must be greater than zero (found -12)");
  // The MMB of a bore is its MMC size or its virtual condition: never above the lower limit.
  check_error(replaced(kBase, "points = \"b.csv\"", "points = \"b.csv\"\nmmb = 19.995"),
              "mmb = 19.995", "datum.B.mmb", "must not exceed its MMC size (lower limit 19.99)");
  check_error(replaced(kBase, "points = \"b.csv\"", "points = \"b.csv\"\nmmb = -1"), "mmb = -1",
              "datum.B.mmb", "greater than zero");
  const std::string no_size = replaced(kBase, "size = { lower = 19.990, upper = 20.011 }\n", "");
  check_error(replaced(no_size, "points = \"b.csv\"", "points = \"b.csv\"\nmmb = 19.98"),
              "mmb = 19.98", "datum.B.mmb", "mmb is given without size");
  const std::string pin_b = replaced(kBase, "feature = \"bore\"\npoints = \"b.csv\"",
                                     "feature = \"pin\"\npoints = \"b.csv\"\nmmb = 20.0");
  check_error(pin_b, "mmb = 20.0", "datum.B.mmb",
              "must not be below its MMC size (upper limit 20.011)");
}

// ====================================================================== errors: datum references

TEST_CASE("datum references name defined datums in the order A, B, C", "[plan][errors]") {
  const std::string key = "bore[P1].position.datums";
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|B|D\""), "\"A|B|D\"", key,
              "datum D is not defined (defined: A, B, C)");
  const std::string no_c = replaced(kBase, "[datum.C]\n" + kDatumCBody + "\n\n", "");
  check_error(no_c, "\"A|B(M)|C\"", key, "datum C is not defined (defined: A, B)");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"B|A|C\""), "\"B|A|C\"", key,
              "datum order must be A first, then B, then C");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|C\""), "\"A|C\"", key,
              "datum order must be A first, then B, then C");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|B|B\""), "\"A|B|B\"", key,
              "datum B is repeated");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|A\""), "\"A|A\"", key, "datum A is repeated");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|B|\""), "\"A|B|\"", key, "empty datum");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|B(S)|C\""), "\"A|B(S)|C\"", key,
              "\"B(S)\" is not a datum reference");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"a|b\""), "\"a|b\"", key,
              "\"a\" is not a datum reference");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"ABC\""), "\"ABC\"", key,
              "\"ABC\" is not a datum reference");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|B(T)|C\""), "\"A|B(T)|C\"", key,
              "\"B(T)\": the translating simulator (T) applies to datum C only");
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A|B|C(T)(M)\""), "\"A|B|C(T)(M)\"", key,
              "\"C(T)(M)\" is not a datum reference");
}

TEST_CASE("material boundary modifiers only on datum features of size with a size",
          "[plan][errors]") {
  const std::string key = "bore[P1].position.datums";
  check_error(replaced(kBase, "\"A|B(M)|C\"", "\"A(M)|B|C\""), "\"A(M)|B|C\"", key,
              "datum A is a plane, not a feature of size: it takes no (M) modifier");
  const std::string plane_c = with_plane_c("\noutward_normal = [1.0, 0.0]");
  CHECK_NOTHROW(parse_plan(plane_c, kPlanFile, false));
  check_error(replaced(plane_c, "\"A|B(M)|C\"", "\"A|B|C(L)\""), "\"A|B|C(L)\"", key,
              "datum C is a plane, not a feature of size: it takes no (L) modifier");
  check_error(replaced(plane_c, "\"A|B(M)|C\"", "\"A|B(M)|C(T)\""), "\"A|B(M)|C(T)\"", key,
              "datum C is a plane, not a feature of size: it takes no (T) modifier");

  const std::string no_size = replaced(kBase, "size = { lower = 19.990, upper = 20.011 }\n", "");
  check_error(no_size, "\"A|B(M)|C\"", key,
              "datum B is referenced at MMB but [datum.B] has no size");
  check_error(replaced(no_size, "\"A|B(M)|C\"", "\"A|B(L)\""), "\"A|B(L)\"", key,
              "datum B is referenced at LMB but [datum.B] has no size");
  CHECK_NOTHROW(parse_plan(replaced(no_size, "\"A|B(M)|C\"", "\"A|B|C\""), kPlanFile, false));
}

TEST_CASE("perpendicularity is always to datum A", "[plan][errors]") {
  check_error(replaced(kBase, "{ tolerance = 0.010 }", "{ tolerance = 0.010, datums = \"A|B\" }"),
              "datums = \"A|B\"", "bore[P1].perpendicularity.datums",
              "perpendicularity is always to datum A: datums must be \"A\" (found \"A|B\")");
  CHECK_NOTHROW(
      parse_plan(replaced(kBase, "{ tolerance = 0.010 }", "{ tolerance = 0.010, datums = \"A\" }"),
                 kPlanFile, false));
}

// ====================================================================== errors: bores

TEST_CASE("tolerances at MMC or LMC need the bore's size", "[plan][errors]") {
  const std::string no_size = replaced(kBase, "size = { lower = 12.000, upper = 12.018 }\n", "");
  check_error(no_size, "modifier = \"MMC\"", "bore[P1].position.modifier",
              "a tolerance at MMC needs the bore's limits of size");
  check_error(replaced(replaced(no_size, "modifier = \"MMC\", ", ""), "{ tolerance = 0.010 }",
                       "{ tolerance = 0.010, modifier = \"LMC\" }"),
              "modifier = \"LMC\"", "bore[P1].perpendicularity.modifier",
              "a tolerance at LMC needs the bore's limits of size");
  check_error(replaced(kBase, "modifier = \"MMC\"", "modifier = \"MMB\""), "\"MMB\"",
              "bore[P1].position.modifier",
              "unknown modifier \"MMB\": expected \"RFS\", \"MMC\" or \"LMC\"");
}

TEST_CASE("tolerances and heights must be positive", "[plan][errors]") {
  check_error(replaced(kBase, "tolerance = 0.025", "tolerance = -0.025"), "-0.025",
              "bore[P1].position.tolerance",
              "the tolerance must not be negative (found -0.025)");
  // Zero tolerancing at MMC is legitimate (ASME Y14.5-2018, from memory for the section): the
  // whole zone comes from the bonus. At RFS a zero zone is an error.
  const PartPlan zero_at_mmc =
      parse_plan(replaced(kBase, "tolerance = 0.025", "tolerance = 0"), kPlanFile, false);
  CHECK(zero_at_mmc.bores.front().position->tolerance == 0.0);
  CHECK(zero_at_mmc.bores.front().position->condition == MaterialCondition::mmc);
  check_error(replaced(replaced(kBase, "tolerance = 0.025", "tolerance = 0"),
                       "modifier = \"MMC\", ", ""),
              "tolerance = 0,", "bore[P1].position.tolerance",
              "must be greater than zero (found 0); a zero tolerance is only meaningful at MMC");
  check_error(replaced(kBase, "tolerance = 0.010", "tolerance = 0.0"), "tolerance = 0.0 }",
              "bore[P1].perpendicularity.tolerance", "must be greater than zero");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = -0.008"), "-0.008",
              "bore[P2].cylindricity", "the cylindricity tolerance must be greater than zero");
  check_error(replaced(kBase, "datums = \"A|B(M)|C\"", "datums = \"A|B(M)|C\", projected = 0"),
              "projected = 0", "bore[P1].position.projected",
              "the projected height must be greater than zero");
  check_error(replaced(kBase, "[datum.A]", "[probe]\ntip_diameter = -2\n\n[datum.A]"),
              "tip_diameter", "probe.tip_diameter", "the tip diameter must be greater than zero");
}

TEST_CASE("depth ranges, directions, axis methods", "[plan][errors]") {
  const std::string at = "basic = [40.0, 25.0]";
  check_error(replaced(kBase, at, at + "\ndepth = { top = -64.0, bottom = 0.0 }"), "depth",
              "bore[P1].depth", "top -64 must be greater than bottom 0");
  check_error(replaced(kBase, at, at + "\ndepth = { top = -5, bottom = -5 }"), "depth",
              "bore[P1].depth", "must be greater than bottom");
  check_error(replaced(kBase, at, at + "\ndepth = {}"), "depth", "bore[P1].depth",
              "the depth range is empty");
  check_error(replaced(kBase, at, at + "\ndepth = { top = 0, botom = -5 }"), "botom",
              "bore[P1].depth.botom", "unknown key in a depth range");
  check_error(replaced(kBase, at, at + "\ndirection = [0, 0, 0]"), "direction",
              "bore[P1].direction", "direction has zero length");
  check_error(replaced(kBase, at, at + "\ndirection = [1, 1, 0]"), "direction",
              "bore[P1].direction", "the direction lies in datum plane A");
  // An inclined nominal axis is toleranced by position; perpendicularity would be angularity.
  const std::string inclined = replaced(kBase, at, at + "\ndirection = [0.0, 0.5, 0.866]");
  check_error(inclined, "perpendicularity =", "bore[P1].perpendicularity",
              "perpendicularity needs a nominal direction perpendicular to A, but direction "
              "(line 24) is inclined");
  CHECK(line_of(inclined, "direction") == 24);
  // (0, 0, -2) is perpendicular to A: accepted, stored as +z.
  const PartPlan down =
      parse_plan(replaced(kBase, at, at + "\ndirection = [0, 0, -2]"), kPlanFile, false);
  CHECK(down.bores[0].nominal_direction == Eigen::Vector3d::UnitZ());

  check_error(replaced(kBase, at, at + "\naxis = \"gauss\""), "axis", "bore[P1].axis",
              "unknown axis \"gauss\": expected \"mating-envelope\", \"least-squares\" or "
              "\"median-line\"");
  // A derived median line is not straight: it cannot be projected beyond A.
  check_error(replaced(replaced(kBase, at, at + "\naxis = \"median-line\""),
                       "datums = \"A|B(M)|C\"", "datums = \"A|B(M)|C\", projected = 12.5"),
              "projected", "bore[P1].position.projected",
              "a projected tolerance zone needs a straight axis");
}

TEST_CASE("a bore needs a tolerance, a usable and unique id", "[plan][errors]") {
  check_error(replaced(kBase, "cylindricity = 0.008\n", ""), "[[bore]]\nid = \"P2\"", "bore[P2]",
              "the bore has no tolerance: give position, perpendicularity or cylindricity");
  check_error(replaced(kBase, "id = \"P2\"", "id = \"P1\""), "id = \"P1\"\npoints = \"p2.csv\"",
              "bore[2].id", "duplicate bore id \"P1\": already used by bore 1 (line 20)");
  CHECK(line_of(kBase, "[[bore]]\nid = \"P1\"") == 20);
  check_error(replaced(kBase, "id = \"P2\"", "id = \"\""), "id = \"\"", "bore[2].id",
              "the bore's identifier must be non-empty");
  check_error(replaced(kBase, "id = \"P2\"", "id = \" P2\""), "id = \" P2\"", "bore[2].id",
              "leading or trailing spaces");
  check_error(replaced(kBase, "id = \"P2\"", "id = 2"), "id = 2", "bore[2].id", "found an integer");
  // Errors in a bore whose id is unusable name it by its 1-based index.
  check_error(replaced(kBase, "id = \"P2\"", "id = 2\nwidth = 3"), "width", "bore[2].width",
              "unknown key");
}

TEST_CASE("ball-centre points: plan-wide and per-feature probe tables", "[plan][probe]") {
  // Plan-wide ball centres with a tip, the outlier stages on; bore P1 overrides the tip and
  // turns the residual rejection off; datum B says its points are surface points.
  std::string text = replaced(
      kBase, "[datum.A]",
      "[probe]\npoints = \"ball-centre\"\ntip_diameter = 2.0\nneighbour_filter = true\n"
      "residual_rejection = true\n\n[datum.A]");
  text = replaced(text, "size = { lower = 19.990, upper = 20.011 }",
                  "size = { lower = 19.990, upper = 20.011 }\nprobe = { points = \"surface\" }");
  text = replaced(text, "perpendicularity = { tolerance = 0.010 }",
                  "perpendicularity = { tolerance = 0.010 }\n\n[bore.probe]\ntip_diameter = 1.5\n"
                  "residual_rejection = false");
  PartPlan plan = parse_plan(text, kPlanFile, false);
  CHECK(plan.probe.ball_centres);
  CHECK(plan.probe.tip_diameter == 2.0);
  CHECK(plan.probe.neighbour_filter);
  CHECK(plan.probe.residual_rejection);
  CHECK_FALSE(plan.datums[0].probe.any());
  const ProbeSettings b = resolved_probe(plan.probe, plan.datums[1].probe);
  CHECK_FALSE(b.ball_centres);
  CHECK(b.neighbour_filter);
  const ProbeSettings p1 = resolved_probe(plan.probe, plan.bores[0].probe);
  CHECK(p1.ball_centres);
  CHECK(p1.tip_diameter == 1.5);
  CHECK(p1.neighbour_filter);
  CHECK_FALSE(p1.residual_rejection);
  CHECK(resolved_probe(plan.probe, plan.bores[1].probe).tip_diameter == 2.0);
  // The command line overrides the plan and every feature's own setting.
  override_outlier_stages(plan, false, true);
  CHECK_FALSE(resolved_probe(plan.probe, plan.bores[0].probe).neighbour_filter);
  CHECK(resolved_probe(plan.probe, plan.bores[0].probe).residual_rejection);
  CHECK_FALSE(resolved_probe(plan.probe, plan.datums[1].probe).neighbour_filter);
  CHECK(resolved_probe(plan.probe, plan.bores[0].probe).tip_diameter == 1.5);  // untouched

  // Ball centres without a tip diameter: refused where the points are said to be ball centres.
  check_error(replaced(kBase, "[datum.A]", "[probe]\npoints = \"ball-centre\"\n\n[datum.A]"),
              "ball-centre", "probe.points",
              "datum A's points are ball centres but no tip diameter is given");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nprobe = { points = \"ball-centre\" }"),
              "ball-centre", "bore[P2].probe.points",
              "bore P2's points are ball centres but no tip diameter is given");
  // A ball that does not fit the hole's lower limit of size.
  check_error(replaced(kBase, "[datum.A]",
                       "[probe]\npoints = \"ball-centre\"\ntip_diameter = 9\n\n[datum.A]"),
              "tip_diameter = 9", "probe.tip_diameter",
              "the tip diameter 9 mm does not fit datum C (lower limit of size 8 mm)");
  check_error(replaced(kBase, "[datum.A]", "[probe]\nneighbour_filter = \"yes\"\n\n[datum.A]"),
              "neighbour_filter", "probe.neighbour_filter", "expected true or false, found a string");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nprobe = { tip = 2 }"),
              "probe = { tip = 2 }", "bore[P2].probe.tip", "unknown key in a probe table");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nprobe = { tip_diameter = -1 }"),
              "tip_diameter = -1", "bore[P2].probe.tip_diameter",
              "the tip diameter of bore P2 must be greater than zero (found -1)");
  check_error(replaced(kBase, "[datum.A]", "[probe]\npoints = \"centres\"\n\n[datum.A]"), "centres",
              "probe.points", "expected \"surface\" or \"ball-centre\"");
  const PartPlan surface = parse_plan(
      replaced(kBase, "[datum.A]", "[probe]\npoints = \"surface\"\n\n[datum.A]"), kPlanFile, false);
  CHECK_FALSE(surface.probe.ball_centres);
  CHECK_FALSE(surface.probe.neighbour_filter);
  CHECK_FALSE(surface.probe.residual_rejection);
}

// ====================================================================== datum C as a width feature

TEST_CASE("datum C as a slot or a tab", "[plan][slot]") {
  // A slot is an internal feature of size like a bore (MMC at its smallest width), a tab an
  // external one like a pin (MMC at its largest) (ASME Y14.5-2018, maximum material condition;
  // common practice).
  const std::string slot = replaced(
      replaced(kBase, kDatumCBody,
               "feature = \"slot\"\npoints = \"c.csv\"\nbasic = [0.0, -45.0]\n"
               "size = { lower = 6.000, upper = 6.030 }\nmmb = 5.995"),
      "\"A|B(M)|C\"", "\"A|B|C(M)\"");
  const PartPlan plan = parse_plan(slot, kPlanFile, false);
  const PlanDatum& c = *plan.datum('C');
  CHECK(c.kind == FeatureKind::slot);
  REQUIRE(c.basic_location);
  CHECK(*c.basic_location == Eigen::Vector2d(0.0, -45.0));
  REQUIRE(c.size);
  CHECK(c.size->mmc(c.kind) == 6.000);
  CHECK(c.size->lmc(c.kind) == 6.030);
  REQUIRE(c.mmb_size);
  CHECK(*c.mmb_size == 5.995);
  CHECK_FALSE(c.outward_normal);
  CHECK(plan.bores[0].position->datums[2].boundary == MaterialBoundary::mmb);

  const std::string tab =
      replaced(replaced(slot, "feature = \"slot\"", "feature = \"tab\""), "mmb = 5.995",
               "mmb = 6.040");
  const PartPlan tab_plan = parse_plan(tab, kPlanFile, false);
  const PlanDatum& t = *tab_plan.datum('C');
  CHECK(t.kind == FeatureKind::tab);
  CHECK(t.size->mmc(t.kind) == 6.030);
  CHECK(t.size->lmc(t.kind) == 6.000);
  CHECK(*t.mmb_size == 6.040);

  // Inch plans convert the basic location of the slot's centre like any length.
  const PartPlan inch = parse_plan(replaced(slot, "units = \"mm\"", "units = \"inch\""),
                                   kPlanFile, false);
  CHECK(inch.datum('C')->basic_location->y() == Approx(-45.0 * 25.4).epsilon(1e-15));

  SECTION("errors") {
    check_error(replaced(slot, "basic = [0.0, -45.0]\n", ""), "[datum.C]", "datum.C.basic",
                "required key is missing: expected the basic location [x, y] of C's centre");
    check_error(replaced(slot, "basic = [0.0, -45.0]", "basic = [0.0, -45.0]\n"
                                                        "outward_normal = [0, -1]"),
                "outward_normal", "datum.C.outward_normal",
                "unknown key for datum C as a slot (allowed: feature, points, basic, size, mmb, probe, "
                "nominal_size, depth, span)");
    check_error(replaced(tab, "basic = [0.0, -45.0]", "basic = [0.0, -45.0]\n"
                                                       "material_side = [0, 1, 0]"),
                "material_side", "datum.C.material_side", "unknown key for datum C as a tab");
    check_error(replaced(slot, "basic = [0.0, -45.0]", "basic = [0, 0]"), "basic = [0, 0]",
                "datum.C.basic", "must not be at datum B's axis");
    // The MMB of a slot is at most its MMC width (the lower limit), of a tab at least its MMC
    // width (the upper limit): as for a bore and a pin.
    check_error(replaced(slot, "mmb = 5.995", "mmb = 6.001"), "mmb = 6.001", "datum.C.mmb",
                "the MMB of a slot must not exceed its MMC size (lower limit 6), found 6.001");
    check_error(replaced(tab, "mmb = 6.040", "mmb = 6.020"), "mmb = 6.020", "datum.C.mmb",
                "the MMB of a tab must not be below its MMC size (upper limit 6.03), found 6.02");
    check_error(replaced(slot, "\nsize = { lower = 6.000, upper = 6.030 }\nmmb = 5.995", ""),
                "\"A|B|C(M)\"", "bore[P1].position.datums",
                "datum C is referenced at MMB but [datum.C] has no size");
    // B locates the origin with its axis: a width feature cannot be B.
    check_error(replaced(kBase, "[datum.B]\nfeature = \"bore\"", "[datum.B]\nfeature = \"slot\""),
                "\"slot\"", "datum.B.feature",
                "datum B must be a bore or a pin: it locates the frame's origin with its axis "
                "(found \"slot\")");
    check_error(replaced(kBase, "[datum.B]\nfeature = \"bore\"", "[datum.B]\nfeature = \"tab\""),
                "\"tab\"", "datum.B.feature", "datum B must be a bore or a pin");
    check_error(replaced(kBase, "feature = \"plane\"", "feature = \"tab\""), "\"tab\"",
                "datum.A.feature", "datum A must be a plane");
    check_error(replaced(kBase, "feature = \"bore\"\npoints = \"c.csv\"",
                         "feature = \"keyway\"\npoints = \"c.csv\""),
                "\"keyway\"", "datum.C.feature",
                "unknown feature \"keyway\": expected \"bore\", \"pin\", \"slot\", \"tab\" or "
                "\"plane\"");
  }
}

// ====================================================================== names

TEST_CASE("names of the tolerancing vocabulary round-trip", "[plan][names]") {
  // Abbreviations as used in ASME Y14.5-2018 (RFS, MMC, LMC, RMB, MMB, LMB).
  CHECK(condition_name(MaterialCondition::rfs) == "RFS");
  CHECK(condition_name(MaterialCondition::mmc) == "MMC");
  CHECK(condition_name(MaterialCondition::lmc) == "LMC");
  CHECK(boundary_name(MaterialBoundary::rmb) == "RMB");
  CHECK(boundary_name(MaterialBoundary::mmb) == "MMB");
  CHECK(boundary_name(MaterialBoundary::lmb) == "LMB");
  CHECK(feature_kind_name(FeatureKind::plane) == "plane");
  CHECK(feature_kind_name(FeatureKind::bore) == "bore");
  CHECK(feature_kind_name(FeatureKind::pin) == "pin");
  CHECK(feature_kind_name(FeatureKind::slot) == "slot");
  CHECK(feature_kind_name(FeatureKind::tab) == "tab");
  // Internal features (bore, slot) are at MMC at their lower limit, external ones (pin, tab)
  // at their upper limit (ASME Y14.5-2018 definition of MMC; common practice).
  const SizeLimits limits{10.0, 10.2};
  for (FeatureKind k : {FeatureKind::bore, FeatureKind::slot}) {
    CHECK_FALSE(is_external(k));
    CHECK(limits.mmc(k) == 10.0);
  }
  for (FeatureKind k : {FeatureKind::pin, FeatureKind::tab}) {
    CHECK(is_external(k));
    CHECK(limits.mmc(k) == 10.2);
  }
  CHECK(datum_references_text({}) == "");
  CHECK(datum_references_text({{'A', MaterialBoundary::rmb},
                               {'B', MaterialBoundary::lmb},
                               {'C', MaterialBoundary::mmb}}) == "A|B(L)|C(M)");

  for (PlaneAssociation m :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax,
        PlaneAssociation::least_squares, PlaneAssociation::minimum_zone})
    CHECK(parse_association(association_name(m)) == m);
  CHECK(association_name(PlaneAssociation::tangent_minimax) == "tangent-minimax");
  CHECK_FALSE(parse_association("Tangent-Minimax"));
  for (BoreAxisMethod m : {BoreAxisMethod::mating_envelope, BoreAxisMethod::least_squares,
                           BoreAxisMethod::median_line})
    CHECK(parse_axis_method(axis_method_name(m)) == m);
  CHECK(axis_method_name(BoreAxisMethod::median_line) == "median-line");
  CHECK_FALSE(parse_axis_method(""));
}

// ====================================================================== bounds and new keys

TEST_CASE("plan numbers are bounded to the physically meaningful", "[plan][errors][bounds]") {
  // docs/plan.md "Bounds": lengths within 10 m, tolerances at most 100 mm. A depth of 1e308
  // once reached the report as inf.
  const std::string at = "basic = [40.0, 25.0]";
  check_error(replaced(kBase, at, at + "\ndepth = { top = 1e308, bottom = -5 }"), "depth",
              "bore[P1].depth.top",
              "the top of the range is beyond the plan's bound of 10 m (10000 mm) in magnitude: "
              "found 1e+308 mm");
  check_error(replaced(kBase, at, at + "\ndepth = { bottom = -1e308 }"), "bottom = -1e308",
              "bore[P1].depth.bottom", "found -1e+308 mm");
  check_error(replaced(kBase, at, "basic = [40.0, 25000.0]"), "basic = [40.0, 25000.0]",
              "bore[P1].basic", "the true position (element 2) is beyond the plan's bound");
  check_error(replaced(kBase, "basic = [90.0, 0.0]", "basic = [90.0, -1e12]"), "-1e12",
              "datum.C.basic", "the basic location of C (element 2) is beyond");
  check_error(replaced(kBase, "upper = 12.018", "upper = 12018.0"), "upper = 12018.0",
              "bore[P1].size.upper", "the upper limit of size is beyond");
  check_error(replaced(kBase, "tolerance = 0.025", "tolerance = 250"), "tolerance = 250",
              "bore[P1].position.tolerance",
              "the tolerance exceeds the plan's ceiling of 100 mm: found 250 mm");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 1e300"), "cylindricity",
              "bore[P2].cylindricity", "exceeds the plan's ceiling of 100 mm");
  check_error(replaced(kBase, "datums = \"A|B(M)|C\"", "datums = \"A|B(M)|C\", projected = 1e9"),
              "projected = 1e9", "bore[P1].position.projected", "the projected height is beyond");
  // In inch: 400 inch = 10160 mm is beyond; the message quotes the plan's own number and unit.
  const std::string inch = replaced(kBase, "units = \"mm\"", "units = \"inch\"");
  check_error(replaced(inch, at, "basic = [400, 1]"), "basic = [400, 1]", "bore[P1].basic",
              "found 400 inch");
  check_error(replaced(inch, "tolerance = 0.025", "tolerance = 4"), "tolerance = 4",
              "bore[P1].position.tolerance", "ceiling of 100 mm: found 4 inch");
  // 1e307 inch overflows to inf in millimetres: still refused, never carried on.
  check_error(replaced(inch, at, at + "\ndepth = { top = 1e307 }"), "depth",
              "bore[P1].depth.top", "is beyond the plan's bound");
  // Directions must be finite: TOML's inf is refused where the number is read.
  check_error(replaced(kBase, at, at + "\ndirection = [0, 0, inf]"), "direction",
              "bore[P1].direction", "found inf");
  // A direction carries no unit: a huge one is normalised without overflow.
  const PartPlan huge = parse_plan(replaced(kBase, at, at + "\ndirection = [0, 0, 1e308]"),
                                   kPlanFile, false);
  CHECK((huge.bores[0].nominal_direction - Eigen::Vector3d::UnitZ()).norm() <= 1e-15);
  // At the bounds: accepted (a 100 mm zone on a 12 mm bore must say it is intended, docs/
  // evaluation.md "Plausibility checks").
  const PartPlan edge = parse_plan(
      replaced(replaced(replaced(kBase, at, at + "\ndepth = { top = 0, bottom = -10000 }"),
                        "tolerance = 0.025", "tolerance = 100"),
               "datums = \"A|B(M)|C\" }", "datums = \"A|B(M)|C\", wide_zone_intended = true }"),
      kPlanFile, false);
  CHECK(*edge.bores[0].depth_bottom == -10000.0);
  CHECK(edge.bores[0].position->tolerance == 100.0);
}

TEST_CASE("section gap: plan-wide, overridden per bore", "[plan][section_gap]") {
  const std::string wide = replaced(kBase, "units = \"mm\"", "units = \"mm\"\nsection_gap = 1.5");
  const PartPlan plan = parse_plan(
      replaced(wide, "cylindricity = 0.008", "cylindricity = 0.008\nsection_gap = 0.25"),
      kPlanFile, false);
  REQUIRE(plan.section_gap);
  CHECK(*plan.section_gap == 1.5);
  CHECK(*plan.bores[0].section_gap == 1.5);   // P1: the plan-wide gap
  CHECK(*plan.bores[1].section_gap == 0.25);  // P2: its own
  // Without either, the evaluation's option applies.
  CHECK_FALSE(parse_plan(kBase, kPlanFile, false).bores[0].section_gap);
  // In inch, converted at 25.4 mm per inch (exact by definition of the inch).
  const PartPlan inch = parse_plan(
      replaced(replaced(kBase, "units = \"mm\"", "units = \"inch\"\nsection_gap = 0.02"),
               "tolerance = 0.025", "tolerance = 0.001"),
      kPlanFile, false);
  CHECK(*inch.bores[1].section_gap == Approx(0.508).epsilon(1e-15));

  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\nsection_gap = 0"), "section_gap",
              "section_gap", "the section gap must be greater than zero (found 0)");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nsection_gap = -1"),
              "section_gap", "bore[P2].section_gap", "must be greater than zero (found -1)");
  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\nsection_gap = \"fine\""),
              "section_gap", "section_gap", "expected the section gap (a number), found a string");
}

TEST_CASE("projected zone from a face other than datum A", "[plan][projected]") {
  // ASME Y14.5-2018 projected tolerance zone (from memory for the clause): the zone starts at
  // the face the mating part rests on; projected_from gives its height in the frame.
  const std::string with_from = replaced(kBase, "datums = \"A|B(M)|C\"",
                                         "datums = \"A|B(M)|C\", projected = 15, projected_from = 6.5");
  const PartPlan plan = parse_plan(with_from, kPlanFile, false);
  REQUIRE(plan.bores[0].position->projected_from);
  CHECK(*plan.bores[0].position->projected_from == 6.5);
  CHECK(*plan.bores[0].position->projected_height == 15.0);
  // A face below A (a counterbore floor) is a negative height.
  const PartPlan below = parse_plan(replaced(with_from, "6.5", "-4"), kPlanFile, false);
  CHECK(*below.bores[0].position->projected_from == -4.0);
  // Inch: 0.25 inch = 6.35 mm.
  const PartPlan inch = parse_plan(
      replaced(replaced(replaced(with_from, "units = \"mm\"", "units = \"inch\""), "6.5", "0.25"),
               "tolerance = 0.025", "tolerance = 0.001"),
      kPlanFile, false);
  CHECK(*inch.bores[0].position->projected_from == Approx(6.35).epsilon(1e-15));

  check_error(replaced(kBase, "datums = \"A|B(M)|C\"", "datums = \"A|B(M)|C\", projected_from = 3"),
              "projected_from", "bore[P1].position.projected_from",
              "projected_from is given without projected");
  check_error(replaced(with_from, "6.5", "20000"), "projected_from",
              "bore[P1].position.projected_from", "is beyond the plan's bound");
  check_error(replaced(kBase, "{ tolerance = 0.010 }", "{ tolerance = 0.010, projected_from = 2 }"),
              "projected_from = 2", "bore[P1].perpendicularity.projected_from",
              "unknown key in a perpendicularity tolerance");
}

TEST_CASE("the [part] table: id, serial, a zoned time and notes in the order written",
          "[plan][identity]") {
  // Time: a TOML offset date-time (TOML v1.0.0, RFC 3339), kept as ISO 8601 (ISO 8601-1:2019).
  const std::string text = kBase + R"(
[part]
id = "HM-3207"
serial = "SN 0042"
time = 2026-12-02T17:40:00+01:30
notes = { shift = "night", operator = "J. Moreau", "machine.cell" = "C-2" }
)";
  const PartPlan plan = parse_plan(text, kPlanFile, false);
  CHECK(plan.part.id == "HM-3207");
  CHECK(plan.part.serial == "SN 0042");
  CHECK(plan.part.timestamp == "2026-12-02T17:40:00+01:30");
  using Note = std::pair<std::string, std::string>;
  // Written order, not toml++'s sorted order.
  CHECK(plan.part.notes == std::vector<Note>{{"shift", "night"}, {"operator", "J. Moreau"},
                                             {"machine.cell", "C-2"}});
  CHECK(parse_plan(replaced(text, "+01:30", "Z"), kPlanFile, false).part.timestamp ==
        "2026-12-02T17:40:00Z");
  // Without [part]: all empty.
  CHECK(parse_plan(kBase, kPlanFile, false).part.id.empty());

  check_error(replaced(text, "2026-12-02T17:40:00+01:30", "2026-12-02T17:40:00"), "time =",
              "part.time", "without a zone");
  check_error(replaced(text, "2026-12-02T17:40:00+01:30", "\"today\""), "time =", "part.time",
              "a date-time with a zone");
  check_error(replaced(text, "serial = \"SN 0042\"", "serial = 42"), "serial =", "part.serial",
              "found an integer");
  check_error(replaced(text, "serial = ", "batch = "), "batch =", "part.batch", "unknown key");
  check_error(replaced(text, "operator = \"J. Moreau\"", "operator = 3"), "operator = 3",
              "part.notes.operator", "expected a string");
  check_error(replaced(text, "SN 0042", "SN\\u001b[31m"), "serial =", "part.serial",
              "control characters");
}

TEST_CASE("wide_zone_intended acknowledges a zone wider than the bore", "[plan][plausibility]") {
  // P1 is 12.000-12.018: a 20 mm zone (typed for 0.020) is refused at its line, naming the
  // value meant; the key that acknowledges it is a boolean.
  const std::string wide = replaced(kBase, "tolerance = 0.025, modifier", "tolerance = 20, modifier");
  check_error(wide, "tolerance = 20,", "bore[P1].position.tolerance", "was 0.02 meant?");
  const PartPlan plan = parse_plan(
      replaced(wide, "datums = \"A|B(M)|C\" }", "datums = \"A|B(M)|C\", wide_zone_intended = true }"),
      kPlanFile, false);
  CHECK(plan.bores[0].position->wide_zone_intended);
  CHECK(plan.warnings.empty());
  check_error(replaced(kBase, "perpendicularity = { tolerance = 0.010 }",
                       "perpendicularity = { tolerance = 0.010, wide_zone_intended = \"yes\" }"),
              "wide_zone_intended", "bore[P1].perpendicularity.wide_zone_intended",
              "expected true or false");
  // 2 on 12 (16.7 %): a warning with the line of the tolerance.
  const PartPlan warned =
      parse_plan(replaced(kBase, "tolerance = 0.025, modifier", "tolerance = 2, modifier"),
                 kPlanFile, false);
  REQUIRE(warned.warnings.size() == 1);
  CHECK_THAT(warned.warnings[0],
             Contains("bore[P1].position.tolerance (line " +
                      std::to_string(line_of(kBase, "tolerance = 0.025, modifier")) + ")"));
}

TEST_CASE("sampling thresholds: plan-wide [sampling], overridden per bore, value by value",
          "[plan][sampling]") {
  // evaluate/sampling_coverage.hpp: a section circle needs 3 points (plane geometry), a
  // coverage is an arc of at most 360 degrees, the magnification is at least 1 by definition.
  const std::string wide = replaced(
      kBase, "units = \"mm\"",
      "units = \"mm\"\n[sampling]\nmin_section_points = 12\nmax_magnification = 1.5\n");
  const PartPlan plan = parse_plan(
      replaced(wide, "cylindricity = 0.008",
               "cylindricity = 0.008\nsampling = { min_section_points = 5, min_coverage = 270 }"),
      kPlanFile, false);
  CHECK(*plan.sampling.min_section_points == 12);
  CHECK_FALSE(plan.sampling.min_coverage_deg);
  CHECK(*plan.bores[0].sampling.min_section_points == 12);  // P1: the plan-wide values
  CHECK(*plan.bores[0].sampling.max_magnification == 1.5);
  CHECK_FALSE(plan.bores[0].sampling.min_coverage_deg);
  CHECK(*plan.bores[1].sampling.min_section_points == 5);   // P2: its own, then the plan's
  CHECK(*plan.bores[1].sampling.min_coverage_deg == 270.0);
  CHECK(*plan.bores[1].sampling.max_magnification == 1.5);
  // Without either, the evaluation's defaults apply.
  CHECK_FALSE(parse_plan(kBase, kPlanFile, false).bores[0].sampling.any());

  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\n[sampling]\nmin_section_points = 2\n"),
              "min_section_points", "sampling.min_section_points",
              "from 3 (a circle needs 3) to 100000 (found 2)");
  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\n[sampling]\nmin_section_points = 8.5\n"),
              "min_section_points", "sampling.min_section_points",
              "expected a whole number of points, found a floating-point number");
  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\n[sampling]\nmin_section_points = -4\n"),
              "min_section_points", "sampling.min_section_points", "must not be negative (found -4)");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nsampling = { min_coverage = 400 }"),
              "sampling =", "bore[P2].sampling.min_coverage",
              "above 0 and at most 360 degrees (found 400)");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nsampling = { max_magnification = 0.5 }"),
              "sampling =", "bore[P2].sampling.max_magnification",
              "from 1 (no extrapolation) to 1000 (found 0.5)");
  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\n[sampling]\nmin_points = 8\n"),
              "min_points", "sampling.min_points", "unknown key in [sampling]");
  check_error(replaced(kBase, "units = \"mm\"", "units = \"mm\"\n[sampling]\nmin_coverage = \"half\"\n"),
              "min_coverage", "sampling.min_coverage", "expected an angle in degrees (a number), found a string");
}

namespace {
/// kBase with a [decision] table of `body` after the units.
std::string with_decision(const std::string& body) {
  return replaced(kBase, "units = \"mm\"", "units = \"mm\"\n[decision]\n" + body);
}
}  // namespace

TEST_CASE("the [decision] table: rule, guard band, stated uncertainty budget", "[plan][decision]") {
  // Without the table: simple acceptance and no U, as before the table existed.
  const PartPlan plain = parse_plan(kBase, kPlanFile, false);
  CHECK(plain.decision.rule.kind == DecisionRuleKind::simple_acceptance);
  CHECK_FALSE(plain.decision.rule.stated_uncertainty.any());
  CHECK_FALSE(plain.decision.rule.guard_band.any());

  // A stated budget per kind with its coverage factor (a laboratory's uncertainty budget,
  // GUM 6.2; common practice), lengths in the plan's unit.
  const PartPlan iso = parse_plan(
      with_decision("rule = \"iso-14253-1\"\nuncertainty = { position = 0.0015, "
                    "perpendicularity = 0.001, size = 0.0008, form = 0.0005, k = 2 }\n"),
      kPlanFile, false);
  const DecisionRule& r = iso.decision.rule;
  CHECK(r.kind == DecisionRuleKind::iso_14253_1);
  CHECK(*r.stated_uncertainty[CharacteristicKind::position] == 0.0015);
  CHECK(*r.stated_uncertainty[CharacteristicKind::perpendicularity] == 0.001);
  CHECK(*r.stated_uncertainty[CharacteristicKind::size] == 0.0008);
  CHECK(*r.stated_uncertainty[CharacteristicKind::form] == 0.0005);
  CHECK_FALSE(r.stated_uncertainty[CharacteristicKind::virtual_condition]);
  CHECK(r.coverage_factor == 2.0);
  CHECK(iso.warnings.empty());

  // One guard band for every kind, converted from inch (1 in = 25.4 mm exactly; common
  // practice); a table of guard bands by kind.
  const std::string inch = replaced(
      replaced(replaced(kBase, "units = \"mm\"", "units = \"inch\"\n[decision]\nrule = \"guard-band\"\nguard_band = 0.0001\n"),
               "size = { lower = 12.000, upper = 12.018 }", "size = { lower = 0.4724, upper = 0.4731 }"),
      "tolerance = 0.025,", "tolerance = 0.001,");
  const PartPlan banded = parse_plan(
      replaced(replaced(replaced(inch, "tolerance = 0.010", "tolerance = 0.0004"),
                        "size = { lower = 19.990, upper = 20.011 }",
                        "size = { lower = 0.787, upper = 0.7878 }"),
               "size = { lower = 8.000, upper = 8.015 }", "size = { lower = 0.315, upper = 0.3156 }"),
      kPlanFile, false);
  for (const auto& g : banded.decision.rule.guard_band.values) CHECK(*g == Approx(0.00254));
  const PartPlan per_kind = parse_plan(
      with_decision("rule = \"guard-band\"\nguard_band = { position = 0.002, size = 0.001 }\n"),
      kPlanFile, false);
  CHECK(*per_kind.decision.rule.guard_band[CharacteristicKind::position] == 0.002);
  CHECK(*per_kind.decision.rule.guard_band[CharacteristicKind::size] == 0.001);
  CHECK_FALSE(per_kind.decision.rule.guard_band[CharacteristicKind::form]);

  // The command line's rule over the plan's; a guard band rule needs a stated band.
  PartPlan switched = iso;
  override_decision_rule(switched, DecisionRuleKind::simple_acceptance);
  CHECK(switched.decision.rule.kind == DecisionRuleKind::simple_acceptance);
  CHECK_THROWS_WITH(override_decision_rule(switched, DecisionRuleKind::guard_band),
                    Contains("--decision-rule guard-band") && Contains("no guard band"));
}

TEST_CASE("the [decision] table's errors name the line and key", "[plan][decision]") {
  check_error(with_decision("rule = \"strict\"\n"), "rule =", "decision.rule",
              "unknown decision rule \"strict\": expected \"simple\", \"iso-14253-1\" or "
              "\"guard-band\"");
  check_error(with_decision("rule = \"simple\"\nguardband = 0.001\n"), "guardband",
              "decision.guardband", "unknown key in [decision]");
  check_error(with_decision("uncertainty = { position = 0.001, forms = 0.001 }\n"), "forms",
              "decision.uncertainty.forms", "unknown key in decision.uncertainty");
  check_error(with_decision("uncertainty = { position = -0.001 }\n"), "uncertainty =",
              "decision.uncertainty.position", "must not be negative (found -0.001)");
  check_error(with_decision("uncertainty = { size = nan }\n"), "uncertainty =",
              "decision.uncertainty.size", "expected a length (a number), found nan");
  check_error(with_decision("uncertainty = { size = 150 }\n"), "uncertainty =",
              "decision.uncertainty.size", "exceeds the plan's ceiling of 100 mm");
  check_error(with_decision("uncertainty = { size = 0.001, k = 0.5 }\n"), "uncertainty =",
              "decision.uncertainty.k", "coverage factor k must be from 1 to 10 (found 0.5)");
  check_error(with_decision("guard_band = -0.001\n"), "guard_band", "decision.guard_band",
              "the guard band must not be negative (found -0.001)");
  check_error(with_decision("guard_band = { form = -0.001 }\n"), "guard_band",
              "decision.guard_band.form", "the guard band for form must not be negative");
  check_error(with_decision("guard_band = \"wide\"\n"), "guard_band", "decision.guard_band",
              "expected a length (a number) or a table by kind");
  // A guard band rule with no band to apply.
  check_error(with_decision("rule = \"guard-band\"\n"), "rule =", "decision.rule",
              "needs the agreed guard band");
  // P1's perpendicularity zone is 0.010: a guard band of 0.006 leaves 0.004 of it to accept,
  // less than half (docs/plan.md, rule 36).
  check_error(with_decision("rule = \"guard-band\"\nguard_band = { perpendicularity = 0.006 }\n"),
              "guard_band", "decision.guard_band.perpendicularity",
              "the guard band 0.006 mm for perpendicularity is more than half of bore \"P1\"'s "
              "perpendicularity tolerance 0.01 mm");
  // The size's span 12.000..12.018 is 0.018: 0.010 on each side leaves no acceptance zone.
  check_error(with_decision("guard_band = { size = 0.010 }\n"), "guard_band",
              "decision.guard_band.size", "is more than half of bore \"P1\"'s size tolerance");
  // A zero tolerance at MMC is all bonus: not compared (P1's position here).
  CHECK_NOTHROW(parse_plan(replaced(with_decision("guard_band = { position = 0.010 }\n"),
                                    "tolerance = 0.025,", "tolerance = 0,"),
                           kPlanFile, false));
}

TEST_CASE("a stated U larger than a tolerance of its kind is warned, not refused", "[plan][decision]") {
  // U above the tolerance: under the ISO 14253-1:2017 default rule no value can be proven to
  // conform (the acceptance zone is empty), which a plan may state knowingly.
  const std::string text = with_decision("rule = \"iso-14253-1\"\nuncertainty = { form = 0.009 }\n");
  const PartPlan plan = parse_plan(text, kPlanFile, false);
  REQUIRE(plan.warnings.size() == 1);
  CHECK_THAT(plan.warnings[0],
             Contains("decision.uncertainty.form (line " +
                      std::to_string(line_of(text, "uncertainty =")) + ")") &&
                 Contains("0.009 mm exceeds bore \"P2\"'s form tolerance 0.008 mm"));
}

TEST_CASE("a bore's own stated uncertainty, bounded and warned like the plan's", "[plan][decision]") {
  const std::string text = replaced(
      with_decision("rule = \"iso-14253-1\"\nuncertainty = { position = 0.0015 }\n"),
      "perpendicularity = { tolerance = 0.010 }",
      "perpendicularity = { tolerance = 0.010 }\nuncertainty = { position = 0.003, perpendicularity = 0.012 }");
  const PartPlan plan = parse_plan(text, kPlanFile, false);
  CHECK(*plan.bores[0].uncertainty[CharacteristicKind::position] == 0.003);
  CHECK(*plan.bores[0].uncertainty[CharacteristicKind::perpendicularity] == 0.012);
  CHECK_FALSE(plan.bores[1].uncertainty.any());
  // 0.012 above P1's perpendicularity tolerance 0.010: warned (docs/plan.md, rule 37).
  REQUIRE(plan.warnings.size() == 1);
  CHECK_THAT(plan.warnings[0], Contains("bore[P1].uncertainty.perpendicularity") &&
                                   Contains("exceeds the bore's perpendicularity tolerance 0.01 mm"));
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nuncertainty = { form = -1 }"),
              "uncertainty =", "bore[P2].uncertainty.form",
              "the expanded uncertainty U of form must not be negative");
  check_error(replaced(kBase, "cylindricity = 0.008", "cylindricity = 0.008\nuncertainty = { form = 0.001, k = 2 }"),
              "uncertainty =", "bore[P2].uncertainty.k", "unknown key in bore[P2].uncertainty");
}
