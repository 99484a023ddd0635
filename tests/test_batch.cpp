// check/batch.hpp: finding a part's files, the parts list, the batch runner against check_part
// alone, the tallies and the spread of the position deviations with Hotelling's T².
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>

#include "cylzone/check/batch.hpp"
#include "cylzone/core/errors.hpp"

namespace fs = std::filesystem;
using namespace cylzone;

namespace {

const std::string kPlan = R"(format = "cylzone-plan-1"
name = "Batch test block"
units = "mm"

[datum.A]
feature = "plane"
points = "points/a.csv"

[datum.B]
feature = "bore"
points = "../shared/b.csv"
size = { lower = 19.990, upper = 20.011 }

[[bore]]
id = "P1"
points = "points/p1.csv"
basic = [40.0, 25.0]
size = { lower = 12.000, upper = 12.018 }
position = { tolerance = 0.025, modifier = "MMC", datums = "A|B" }
)";

/// A fresh folder under the system's temporary folder.
fs::path fresh_folder(const std::string& name) {
  const fs::path dir = fs::temp_directory_path() / ("cylzone-test-batch-" + name);
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

Characteristic characteristic(const std::string& id, double value, double allowed,
                              Comparison comparison, Verdict verdict) {
  Characteristic c;
  c.id = id;
  c.feature = id.substr(0, id.find('/'));
  c.name = id.substr(id.find('/') + 1);
  c.value = value;
  c.allowed = allowed;
  c.tolerance = allowed;
  c.comparison = comparison;
  c.verdict = verdict;
  return c;
}

}  // namespace

TEST_CASE("plan_for_part looks every relative point path up in the part's folder") {
  const PartPlan plan = parse_plan(kPlan, "/data/plans/block.toml", false);
  const PartPlan part = plan_for_part(plan, "/data/parts/SN-7");
  CHECK(part.datums[0].points == fs::path("/data/parts/SN-7/points/a.csv"));
  // "../shared/b.csv" keeps its meaning relative to the part's folder.
  CHECK(part.datums[1].points == fs::path("/data/parts/shared/b.csv"));
  CHECK(part.bores[0].points == fs::path("/data/parts/SN-7/points/p1.csv"));
  // The plan itself is unchanged: same file, same digest.
  CHECK(part.file == plan.file);
  CHECK(part.sha256 == plan.sha256);

  // A plan read from the working folder ("block.toml": an empty parent).
  const PartPlan here = parse_plan(kPlan, "block.toml", false);
  CHECK(plan_for_part(here, "parts/SN-8").bores[0].points == fs::path("parts/SN-8/points/p1.csv"));
}

TEST_CASE("plan_for_part refuses an absolute point path, naming the plan's key") {
  std::string text = kPlan;
  text.replace(text.find("points/p1.csv"), 13, "/elsewhere/p1.csv");
  const PartPlan plan = parse_plan(text, "plans/block.toml", false);
  try {
    plan_for_part(plan, "parts/SN-1");
    FAIL("no error");
  } catch (const InputError& e) {
    const std::string message = e.what();
    CHECK(message.find("plans/block.toml") != std::string::npos);
    CHECK(message.find("points") != std::string::npos);
    CHECK(message.find("/elsewhere/p1.csv") != std::string::npos);
  }
}

TEST_CASE("batch_parts names each part by its folder and refuses bad folders") {
  const fs::path root = fresh_folder("parts");
  fs::create_directories(root / "SN-1");
  fs::create_directories(root / "other" / "SN-1");
  fs::create_directories(root / "SN-2");
  std::ofstream(root / "file.txt") << "x\n";

  const std::vector<BatchPart> parts = batch_parts({root / "SN-1", root / "SN-2" / ""});
  REQUIRE(parts.size() == 2);
  CHECK(parts[0].serial == "SN-1");
  CHECK(parts[1].serial == "SN-2");  // a trailing separator does not hide the name
  CHECK(batch_parts({root / "SN-1" / "."})[0].serial == "SN-1");
  CHECK(batch_parts({root / "other" / "SN-1" / ".." / ".." / "SN-2"})[0].serial == "SN-2");

  CHECK_THROWS_WITH(batch_parts({root / "SN-1", root / "other" / "SN-1"}),
                    Catch::Contains("SN-1") && Catch::Contains("already"));
  CHECK_THROWS_WITH(batch_parts({root / "missing"}),
                    Catch::Contains("missing") && Catch::Contains("does not exist"));
  CHECK_THROWS_WITH(batch_parts({root / "file.txt"}), Catch::Contains("not a folder"));
  fs::remove_all(root);
}

TEST_CASE("read_parts_list skips comments and blank lines, resolves against its own folder") {
  const fs::path root = fresh_folder("list");
  std::ofstream(root / "parts.txt") << "# the week's parts\n\n  SN-1  \r\n\t# indented comment\n"
                                       "/abs/SN-2\nsub/SN-3\n";
  const std::vector<fs::path> folders = read_parts_list(root / "parts.txt");
  REQUIRE(folders.size() == 3);
  CHECK(folders[0] == root / "SN-1");
  CHECK(folders[1] == fs::path("/abs/SN-2"));
  CHECK(folders[2] == root / "sub/SN-3");

  std::ofstream(root / "empty.txt") << "# nothing\n\n";
  CHECK_THROWS_WITH(read_parts_list(root / "empty.txt"), Catch::Contains("names no folder"));
  std::ofstream(root / "bad.txt") << "SN-1\nSN\x01" "2\n";
  CHECK_THROWS_WITH(read_parts_list(root / "bad.txt"),
                    Catch::Contains("bad.txt") && Catch::Contains(":2"));
  CHECK_THROWS_WITH(read_parts_list(root / "absent.txt"), Catch::Contains("absent.txt"));
  fs::remove_all(root);
}

TEST_CASE("deviation_spread: mean, spread and Hotelling's T² against closed forms and scipy") {
  // Four deviations m + (+-a, 0), m + (0, +-a): S = diag(2a²/3, 2a²/3), so Hotelling's
  // T² = n m^T S^-1 m = 6 |m|² / a² (Hotelling 1931, the one-sample statistic), and for p = 2
  // the F(2, n-2) tail gives p = (1 + T²/(n-1))^(-(n-2)/2). With m = (0.5, 0.25), a = 1:
  // T² = 1.875, F = T² (n-2) / (2 (n-1)) = 0.625, and scipy.stats.f.sf(0.625, 2, 2) =
  // 0.6153846153846154 (Debian's scipy 1.10).
  const Eigen::Vector2d m(0.5, 0.25);
  const std::vector<Eigen::Vector2d> cross{m + Eigen::Vector2d(1, 0), m + Eigen::Vector2d(-1, 0),
                                           m + Eigen::Vector2d(0, 1), m + Eigen::Vector2d(0, -1)};
  const DeviationSpread s = deviation_spread(cross, 0.05);
  CHECK(s.count == 4);
  CHECK(s.mean.isApprox(m, 1e-15));
  CHECK(s.standard_deviation.x() == Approx(std::sqrt(2.0 / 3.0)).epsilon(1e-14));
  CHECK(s.standard_deviation.y() == Approx(std::sqrt(2.0 / 3.0)).epsilon(1e-14));
  REQUIRE(s.t_squared);
  CHECK(*s.t_squared == Approx(1.875).epsilon(1e-13));
  REQUIRE(s.p_value);
  CHECK(*s.p_value == Approx(0.6153846153846154).epsilon(1e-13));
  CHECK_FALSE(s.systematic);
  double radial = 0.0;
  for (const Eigen::Vector2d& d : cross) radial += d.norm();
  CHECK(s.mean_radial == Approx(radial / 4).epsilon(1e-14));

  // Five scattered deviations: numpy gives T² = 71.67346938775509 (n m^T S^-1 m with
  // numpy.cov, ddof 1), scipy.stats.f.sf(T² 3/8, 2, 3) = 0.01215274873823634, and
  // numpy.std(ddof=1) = (1.03682207, 0.79056942).
  const std::vector<Eigen::Vector2d> five{{1.0, 2.0}, {2.5, 1.0}, {0.5, 3.0}, {3.0, 2.5},
                                          {1.5, 1.5}};
  const DeviationSpread f = deviation_spread(five, 0.05);
  REQUIRE(f.t_squared);
  CHECK(*f.t_squared == Approx(71.67346938775509).epsilon(1e-12));
  CHECK(*f.p_value == Approx(0.01215274873823634).epsilon(1e-12));
  CHECK(f.standard_deviation.x() == Approx(1.03682207).epsilon(1e-8));
  CHECK(f.standard_deviation.y() == Approx(0.79056942).epsilon(1e-8));
  CHECK(f.systematic);                              // p < 0.05
  CHECK_FALSE(deviation_spread(five, 0.01).systematic);  // but not at 0.01
  CHECK(f.note.find("systematic") != std::string::npos);

  // The statistic does not depend on the unit: the same deviations in inches.
  std::vector<Eigen::Vector2d> inches;
  for (const Eigen::Vector2d& d : five) inches.push_back(d / 25.4);
  CHECK(*deviation_spread(inches).t_squared == Approx(*f.t_squared).epsilon(1e-12));
}

TEST_CASE("deviation_spread without a test: too few parts, identical parts") {
  const DeviationSpread two = deviation_spread({{1.0, 0.0}, {3.0, 0.0}});
  CHECK(two.mean.isApprox(Eigen::Vector2d(2.0, 0.0)));
  CHECK(two.standard_deviation.x() == Approx(std::sqrt(2.0)));
  CHECK_FALSE(two.t_squared);
  CHECK_FALSE(two.systematic);
  CHECK(two.note.find("at least 3") != std::string::npos);

  // Every part the same: no scatter at all, the offset is systematic by construction.
  const DeviationSpread same = deviation_spread({{0.004, -0.002}, {0.004, -0.002}, {0.004, -0.002}});
  CHECK_FALSE(same.t_squared);
  CHECK(same.systematic);
  const DeviationSpread none = deviation_spread({{0.0, 0.0}, {0.0, 0.0}, {0.0, 0.0}});
  CHECK_FALSE(none.systematic);
  CHECK(deviation_spread({}).count == 0);
}

TEST_CASE("summarize_batch tallies verdicts and finds the worst part by its margin") {
  std::vector<BatchPartRecord> records(4);
  records[0].part = {"a/S1", "S1"};
  records[0].verdict = Verdict::conforms;
  records[0].characteristics = {
      characteristic("P1/position", 0.020, 0.030, Comparison::at_most, Verdict::conforms),
      characteristic("P1/size/lower", 12.004, 12.000, Comparison::at_least, Verdict::conforms)};
  records[1].part = {"a/S2", "S2"};
  records[1].verdict = Verdict::does_not_conform;
  // A larger value but a larger bonus: margin 0.040 - 0.035 = 0.005 < 0.010 of S1's.
  records[1].characteristics = {
      characteristic("P1/position", 0.035, 0.040, Comparison::at_most, Verdict::conforms),
      characteristic("P1/size/lower", 11.998, 12.000, Comparison::at_least,
                     Verdict::does_not_conform)};
  records[2].part = {"a/S3", "S3"};
  records[2].error = "a/S3/points/p1.csv: file not found";
  records[3].part = {"a/S4", "S4"};
  records[3].verdict = Verdict::not_proven;
  Characteristic unevaluated =
      characteristic("P1/position", 99.0, 0.030, Comparison::at_most, Verdict::not_proven);
  unevaluated.not_evaluated = "bore P1: one section only";
  records[3].characteristics = {unevaluated};

  const BatchSummary s = summarize_batch(records);
  CHECK(s.parts == 4);
  CHECK(s.evaluated == 3);
  CHECK(s.failed == std::vector<std::size_t>{2});
  CHECK(s.conforming == 1);
  CHECK(s.not_conforming == 1);
  CHECK(s.not_proven == 1);
  REQUIRE(s.characteristics.size() == 2);
  const CharacteristicTally& position = s.characteristics[0];
  CHECK(position.id == "P1/position");
  CHECK(position.conforming == 2);
  CHECK(position.not_proven == 1);
  REQUIRE(position.worst_part);
  CHECK(*position.worst_part == 1);  // not S4: its value was not evaluated
  CHECK(position.worst_margin == Approx(0.005));
  const CharacteristicTally& size = s.characteristics[1];
  CHECK(size.not_conforming == 1);
  REQUIRE(size.worst_part);
  CHECK(*size.worst_part == 1);
  CHECK(size.worst_margin == Approx(-0.002));
}

TEST_CASE("check_batch gives each part check_part's result alone and fails a part on its own") {
  const fs::path demo = fs::path(CYLZONE_SOURCE_DIR) / "point-clouds" / "valve-manifold";
  const PartPlan plan = read_plan(demo / "plan.toml");
  const fs::path empty = fresh_folder("empty-part");
  CheckOptions options;
  options.sensitivity = false;
  options.evaluation.threads = 1;
  const PartCheckResult alone = check_part(plan, options);

  BatchOptions batch;
  batch.check = options;
  batch.threads = 2;
  std::size_t handed_over = 0, last_done = 0;
  const std::vector<BatchPartRecord> records = check_batch(
      plan, batch_parts({demo, empty}), batch,
      [&](std::size_t index, const PartCheckResult&) { CHECK(index == 0); ++handed_over; },
      [&](std::size_t done, std::size_t total) {
        CHECK(total == 2);
        CHECK(done == last_done + 1);
        last_done = done;
      });
  REQUIRE(records.size() == 2);
  CHECK(handed_over == 1);
  CHECK(last_done == 2);
  // The demo folder as a part: bit for bit the check of the plan alone.
  REQUIRE(records[0].evaluated());
  CHECK(records[0].verdict == alone.verdict);
  REQUIRE(records[0].characteristics.size() == alone.characteristics.size());
  for (std::size_t k = 0; k < alone.characteristics.size(); ++k) {
    CHECK(records[0].characteristics[k].id == alone.characteristics[k].id);
    CHECK(records[0].characteristics[k].value == alone.characteristics[k].value);
    CHECK(records[0].characteristics[k].allowed == alone.characteristics[k].allowed);
    CHECK(records[0].characteristics[k].verdict == alone.characteristics[k].verdict);
  }
  REQUIRE(records[0].positions.size() == alone.bores.size());
  CHECK(records[0].positions[0].top == alone.bores[0].position->top.offset);
  CHECK(records[0].inputs.size() == alone.inputs.size());
  // The empty folder: failed, naming its missing file; no characteristics.
  CHECK_FALSE(records[1].evaluated());
  CHECK(records[1].error.find("cylzone-test-batch-empty-part") != std::string::npos);
  CHECK(records[1].error.find("datum-A.csv") != std::string::npos);
  CHECK(records[1].characteristics.empty());
  fs::remove_all(empty);
}
