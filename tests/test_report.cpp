// Reports: atomic writing that never damages an input, and the CSV/JSON rendering of a result
// assembled by hand (so the values are known without running any fit).
#include <catch2/catch.hpp>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <unistd.h>

#include "cylzone/core/errors.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/report/report.hpp"

namespace fs = std::filesystem;
using namespace cylzone;

namespace {

fs::path scratch_directory() {
  char name[] = "/tmp/cylzone-report-XXXXXX";
  REQUIRE(::mkdtemp(name) != nullptr);
  return name;
}

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

void spit(const fs::path& p, const std::string& text) { std::ofstream(p, std::ios::binary) << text; }

bool has_temporary_files(const fs::path& dir) {
  for (const auto& entry : fs::directory_iterator(dir))
    if (entry.path().filename().string().find(".tmp-") != std::string::npos) return true;
  return false;
}

/// A result with one bore at true position offsets (0.04, 0.03) at the top: a positional
/// diameter of 0.100 (2 sqrt(0.04^2 + 0.03^2), common practice), tolerance 0.080 + bonus 0.010.
PartCheckResult hand_made_result() {
  PartCheckResult r;
  r.plan.name = "Bracket, \"first\" article, rev B";  // comma and quotes exercise CSV quoting
  r.plan.file = "plan.toml";
  r.plan.unit = LengthUnit::millimetre;
  BoreResult b;
  b.id = "H1";
  PositionResult p;
  p.spec.tolerance = 0.080;
  p.spec.condition = MaterialCondition::mmc;
  p.spec.datums = {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::mmb}};
  p.top = {0.0, Eigen::Vector2d(0.04, 0.03)};
  p.bottom = {-40.0, Eigen::Vector2d(0.01, 0.0)};
  p.worst = p.top;
  p.value = 0.100;
  p.bonus = 0.010;
  p.allowed = 0.090;
  b.position = p;
  PositionResult moved = p;
  moved.value = 0.085;
  b.position_with_mobility = moved;
  b.mobility_motion = FrameMotion{};
  r.bores.push_back(b);
  r.characteristics = bore_characteristics(b);
  r.verdict = combine(r.characteristics);
  return r;
}

}  // namespace

TEST_CASE("write_file_atomically replaces the target whole and leaves no temporary file") {
  const fs::path dir = scratch_directory();
  const fs::path target = dir / "report.json";
  spit(target, "old contents");
  write_file_atomically(target, "{\"new\": true}\n", {});
  CHECK(slurp(target) == "{\"new\": true}\n");
  CHECK_FALSE(has_temporary_files(dir));
  fs::remove_all(dir);
}

TEST_CASE("write_file_atomically refuses to write over an input, also through another name") {
  const fs::path dir = scratch_directory();
  const fs::path input = dir / "points.csv";
  spit(input, "1,2,3\n");
  const fs::path alias = dir / "alias.csv";
  fs::create_hard_link(input, alias);  // same file, different name: identity, not spelling
  for (const fs::path& target : {input, alias, dir / "." / "points.csv"}) {
    try {
      write_file_atomically(target, "overwritten", {input});
      FAIL("no error for " << target);
    } catch (const InputError& e) {
      CHECK(std::string(e.what()).find("input") != std::string::npos);
      CHECK(e.file() == target.string());
    }
  }
  CHECK(slurp(input) == "1,2,3\n");
  CHECK_FALSE(has_temporary_files(dir));
  fs::remove_all(dir);
}

TEST_CASE("write_file_atomically names a missing directory") {
  const fs::path dir = scratch_directory();
  const fs::path target = dir / "missing" / "report.csv";
  try {
    write_file_atomically(target, "x", {});
    FAIL("no error");
  } catch (const InputError& e) {
    CHECK(std::string(e.what()).find("does not exist") != std::string::npos);
    CHECK(std::string(e.what()).find("missing") != std::string::npos);
  }
  CHECK_FALSE(fs::exists(target));
  fs::remove_all(dir);
}

TEST_CASE("characteristic rows: the datum-mobility row decides, the fixed frame is shown beside") {
  const auto rows = characteristic_rows(hand_made_result());
  REQUIRE(rows.size() == 2);
  CHECK(rows[0].characteristic == "position, frame fixed");
  CHECK_FALSE(rows[0].decisive);
  CHECK(rows[0].verdict == Verdict::does_not_conform);
  CHECK(rows[1].characteristic == "position, datum mobility");
  CHECK(rows[1].decisive);
  CHECK(rows[1].reference == "A|B(M) MMC");
}

TEST_CASE("CSV: RFC 4180 quoting, four decimals in mm, one row per characteristic") {
  // RFC 4180 (Common Format for CSV Files): fields with commas or quotes are quoted and inner
  // quotes doubled.
  const std::string csv = format_csv(hand_made_result());
  std::istringstream lines(csv);
  std::string header, first, second, extra;
  std::getline(lines, header);
  std::getline(lines, first);
  std::getline(lines, second);
  CHECK_FALSE(std::getline(lines, extra));
  CHECK(header ==
        "part,bore,characteristic,reference,value,tolerance,bonus,allowed,comparison,verdict,"
        "decisive,units");
  CHECK(first ==
        "\"Bracket, \"\"first\"\" article, rev B\",H1,\"position, frame fixed\",A|B(M) MMC,"
        "0.1000,0.0800,0.0100,0.0900,<=,does not conform,no,mm");
  CHECK(second ==
        "\"Bracket, \"\"first\"\" article, rev B\",H1,\"position, datum mobility\",A|B(M) MMC,"
        "0.0850,0.0800,0.0100,0.0900,<=,conforms,yes,mm");
}

TEST_CASE("JSON and table carry the safety caution and the single-plane position") {
  const PartCheckResult r = hand_made_result();
  const std::string json = format_json(r);
  CHECK(json.find("\"schema\": \"cylzone-report-1\"") != std::string::npos);
  CHECK(json.find("do not replace") != std::string::npos);
  const std::string table = format_table(r);
  CHECK(table.find("Caution:") != std::string::npos);
  // Single-plane position at the top, 2 sqrt(0.04^2 + 0.03^2) = 0.100 (common practice).
  CHECK(table.find("0.1000") != std::string::npos);
}
