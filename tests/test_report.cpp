// Reports: the report model built from a result assembled by hand (so the values are known
// without running any fit), its renderers (CSV, JSON, table) and the JSON reader.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <sstream>
#include <regex>
#include <stdexcept>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/io/read_points.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/report/report_reader.hpp"

using namespace cylzone;

namespace {

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

/// The same bore with size limits (the mating envelope below the lower limit: a lower-limit
/// failure) and a cylindricity tolerance, in `unit`.
PartCheckResult result_with_size(LengthUnit unit) {
  PartCheckResult r = hand_made_result();
  r.plan.unit = unit;
  BoreResult& b = r.bores.front();
  b.size.limits = SizeLimits{12.000, 12.027};
  b.size.mating_envelope = 11.9953;
  // No opposed point pairs: the upper limit is checked with the minimum material envelope.
  b.size.minimum_material_envelope = 12.0150;
  b.form.cylindricity = 0.0041;
  b.form.tolerance = 0.005;
  r.inputs.push_back({"bore H1", "points/H1.csv",
                      "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855", 0, {}});
  r.characteristics = bore_characteristics(b);
  r.verdict = combine(r.characteristics);
  return r;
}

/// CSV fields of one line, RFC 4180 quoting undone.
std::vector<std::string> csv_fields(const std::string& line) {
  std::vector<std::string> fields(1);
  bool quoted = false;
  for (std::size_t k = 0; k < line.size(); ++k) {
    const char c = line[k];
    if (quoted && c == '"' && k + 1 < line.size() && line[k + 1] == '"') {
      fields.back() += '"';
      ++k;
    } else if (c == '"') {
      quoted = !quoted;
    } else if (c == ',' && !quoted) {
      fields.emplace_back();
    } else {
      fields.back() += c;
    }
  }
  return fields;
}

std::string error_of(std::string_view json, std::string* key = nullptr) {
  try {
    read_report_json(json, "earlier.json");
  } catch (const InputError& e) {
    CHECK(e.file() == "earlier.json");
    if (key) *key = e.key();
    return e.what();
  }
  FAIL("no InputError");
  return {};
}

/// `text` with the first `from` after `anchor` replaced by `to`.
std::string replaced(std::string text, const std::string& from, const std::string& to,
                     const std::string& anchor = "\"characteristics\": [") {
  const std::size_t start = text.find(anchor);
  REQUIRE(start != std::string::npos);
  const std::size_t at = text.find(from, start);
  REQUIRE(at != std::string::npos);
  return text.replace(at, from.size(), to);
}

}  // namespace

TEST_CASE("characteristics: the datum-mobility one decides, the fixed frame is shown beside") {
  const auto rows = report_characteristics(hand_made_result());
  REQUIRE(rows.size() == 2);
  CHECK(rows[0].id == "H1/position");
  CHECK(rows[0].feature == "H1");
  CHECK(rows[0].name == "position, frame fixed");
  CHECK_FALSE(rows[0].decisive);
  CHECK(rows[0].verdict == Verdict::does_not_conform);
  CHECK(rows[1].id == "H1/position/mobility");
  CHECK(rows[1].name == "position, datum mobility");
  CHECK(rows[1].decisive);
  CHECK(rows[1].reference == "A|B(M) MMC");
}

TEST_CASE("model: verdicts combine the characteristics; size and form carry their ids") {
  const PartCheckResult r = result_with_size(LengthUnit::millimetre);
  const ReportModel m = make_report_model(r);
  REQUIRE(m.characteristics.size() == 5);
  REQUIRE(m.find("H1/size/lower"));
  CHECK(m.find("H1/size/lower")->comparison == Comparison::at_least);
  CHECK(m.find("H1/size/upper")->comparison == Comparison::at_most);
  CHECK(m.find("H1/cylindricity")->allowed == 0.005);
  CHECK(m.find("H1/perpendicularity") == nullptr);
  // The non-decisive fixed-frame position does not count; the lower size limit fails.
  CHECK(m.bores.front().verdict == Verdict::does_not_conform);
  CHECK(m.verdict == Verdict::does_not_conform);
  // Without the size and form, only the conforming mobility position decides.
  CHECK(make_report_model(hand_made_result()).verdict == Verdict::conforms);
}

TEST_CASE("model: the depth profile of a straight axis, top to bottom") {
  ReportModelOptions options;
  options.depth_samples = 5;
  const PartCheckResult r = hand_made_result();
  const ReportModel m = make_report_model(r, options);
  REQUIRE(m.bores.front().depth);
  const DepthProfile& d = *m.bores.front().depth;
  CHECK(d.characteristic_id == "H1/position/mobility");
  CHECK(d.allowed == 0.090);
  REQUIRE(d.samples.size() == 5);
  // A straight axis deviates affinely with height (common practice): through (0.04, 0.03) at
  // z = 0 and (0.01, 0) at z = -40, at z = -10 it is (0.0325, 0.0225), single-plane position
  // 2 sqrt(0.0325^2 + 0.0225^2) = 0.079057 (common practice: position = 2 x radial deviation).
  CHECK(d.samples[0].height == 0.0);
  CHECK(d.samples[1].height == Approx(-10.0));
  CHECK(d.samples[1].offset.x() == Approx(0.0325).margin(1e-15));
  CHECK(d.samples[1].offset.y() == Approx(0.0225).margin(1e-15));
  CHECK(d.samples[1].diameter() == Approx(2.0 * std::hypot(0.0325, 0.0225)));
  CHECK(d.samples.back().height == -40.0);
  CHECK(d.samples.back().offset.x() == 0.01);
  // The table's along-the-depth line reads the profile's ends.
  CHECK(format_table(m).find("H1         0.0000   0.0400   0.0300   0.1000") != std::string::npos);
}

TEST_CASE("model: a derived median line's profile is its section centres, top to bottom") {
  PartCheckResult r = hand_made_result();
  BoreResult& b = r.bores.front();
  b.position_with_mobility.reset();
  b.mobility_motion.reset();
  // Three centres of a median line that bends: no straight line through them, so a profile
  // interpolated between the ends would miss the middle one (-20: 0.05 off-line in dx).
  b.position->section_centres = {{-2.0, Eigen::Vector2d(0.01, 0.00)},
                                 {-20.0, Eigen::Vector2d(0.06, 0.00)},
                                 {-38.0, Eigen::Vector2d(0.01, 0.00)}};
  b.position->top = b.position->section_centres.front();
  b.position->bottom = b.position->section_centres.back();
  const ReportModel m = make_report_model(r);
  REQUIRE(m.bores.front().depth);
  const DepthProfile& d = *m.bores.front().depth;
  CHECK(d.characteristic_id == "H1/position");
  REQUIRE(d.samples.size() == 3);
  CHECK(d.samples[1].height == -20.0);
  CHECK(d.samples[1].offset.x() == 0.06);
  // Single-plane position at that section: 2 x 0.06 (common practice).
  CHECK(d.samples[1].diameter() == Approx(0.12));
}

TEST_CASE("CSV: RFC 4180 quoting, four decimals in mm, one row per characteristic") {
  // RFC 4180 (Common Format for CSV Files): fields with commas or quotes are quoted and inner
  // quotes doubled. RFC 4180 has no comment lines: the caution is a column of every row.
  const std::string csv = format_csv(hand_made_result());
  const std::string caution = "\"" + std::string(safety_caution) + "\"";
  std::istringstream lines(csv);
  std::string header, first, second, extra;
  std::getline(lines, header);
  std::getline(lines, first);
  std::getline(lines, second);
  CHECK_FALSE(std::getline(lines, extra));
  CHECK(header ==
        "part,bore,characteristic,reference,value,tolerance,bonus,allowed,comparison,verdict,"
        "decisive,units,id,caution,part_id,serial,timestamp,notes,range_source,status,reason,outliers_removed,"
        "probed_span,evaluated_length,extrapolation_top,extrapolation_bottom,tilt_magnification,"
        "sections,section_points_min,section_points_median,coverage_deg,"
        "worst_section_coverage_deg,sampling_warnings,"
        "scan_points,scan_angular_coverage_deg,scan_probed_depth,scan_nominal_depth,"
        "rule,expanded_uncertainty,coverage_factor,acceptance_limit,rejection_limit,"
        "uncertainty_source,rule_note");
  // Simple acceptance, no U: both limits are the allowed value (decide/characteristic.hpp).
  const std::string decision = ",simple acceptance,,,0.0900,0.0900,,";
  CHECK(first ==
        "\"Bracket, \"\"first\"\" article, rev B\",H1,\"position, frame fixed\",A|B(M) MMC,"
        "0.1000,0.0800,0.0100,0.0900,<=,does not conform,no,mm,H1/position," + caution +
            ",,,,,plan depth,evaluated,,0" + ",,,,,,,,,,," + ",,,," + decision);  // no sampling measured, no scan: empty
  CHECK(second ==
        "\"Bracket, \"\"first\"\" article, rev B\",H1,\"position, datum mobility\",A|B(M) MMC,"
        "0.0850,0.0800,0.0100,0.0900,<=,conforms,yes,mm,H1/position/mobility," + caution +
            ",,,,,plan depth,evaluated,,0" + ",,,,,,,,,,," + ",,,," + decision);
  const std::vector<std::string> fields = csv_fields(second);
  REQUIRE(fields.size() == 44);
  CHECK(fields[0] == "Bracket, \"first\" article, rev B");
  CHECK(fields[13] == safety_caution);
}

TEST_CASE("CSV in inch: five decimals, lengths / 25.4") {
  // The inch is 25.4 mm exactly (common practice): 11.9953 mm = 0.472256 in, 12 mm = 0.47244 in.
  const std::string csv = format_csv(result_with_size(LengthUnit::inch));
  CHECK(csv.find(",\"size, mating envelope\",lower limit,0.47226,0.47244,0.00000,0.47244,>=,"
                 "does not conform,yes,inch,H1/size/lower,") != std::string::npos);
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

TEST_CASE("JSON: every characteristic with its id, decisive flag and verdict; bores' profile") {
  const std::string json = format_json(result_with_size(LengthUnit::millimetre));
  CHECK(json.find("\"characteristics\": [") != std::string::npos);
  CHECK(json.find("\"id\": \"H1/position/mobility\"") != std::string::npos);
  CHECK(json.find("\"decisive\": false") != std::string::npos);
  CHECK(json.find("\"depth_profile\": {") != std::string::npos);
}

TEST_CASE("JSON round trip: rendered, read back, every characteristic equal") {
  for (LengthUnit unit : {LengthUnit::millimetre, LengthUnit::inch}) {
    const PartCheckResult r = result_with_size(unit);
    const ReportModel written = make_report_model(r);
    const ReportModel read = read_report_json(format_json(written), "report.json");
    REQUIRE(read.characteristics.size() == written.characteristics.size());
    // mm: the JSON's shortest round-trip decimal gives the same double back (exactly). inch:
    // x / 25.4 * 25.4 may differ from x in the last bit or two of the double.
    const double eps = unit == LengthUnit::millimetre ? 0.0 : 1e-15;
    for (std::size_t k = 0; k < read.characteristics.size(); ++k) {
      const Characteristic& a = written.characteristics[k];
      const Characteristic& b = read.characteristics[k];
      CHECK(b.id == a.id);
      CHECK(b.feature == a.feature);
      CHECK(b.name == a.name);
      CHECK(b.reference == a.reference);
      CHECK(b.value == Approx(a.value).epsilon(eps).margin(0.0));
      CHECK(b.tolerance == Approx(a.tolerance).epsilon(eps).margin(0.0));
      CHECK(b.bonus == Approx(a.bonus).epsilon(eps).margin(0.0));
      CHECK(b.allowed == Approx(a.allowed).epsilon(eps).margin(0.0));
      CHECK(b.comparison == a.comparison);
      CHECK(b.decisive == a.decisive);
      CHECK(b.verdict == a.verdict);
      if (unit == LengthUnit::millimetre) CHECK(b.value == a.value);
    }
    CHECK(read.units.unit() == unit);
    CHECK(read.plan_name == written.plan_name);
    CHECK(read.verdict == written.verdict);
    REQUIRE(read.inputs.size() == 1);
    CHECK(read.inputs[0].sha256 == written.inputs[0].sha256);
    REQUIRE(read.bores.size() == 1);
    CHECK(read.bores[0].verdict == written.bores[0].verdict);
    REQUIRE(read.bores[0].depth);
    CHECK(read.bores[0].depth->samples.size() == written.bores[0].depth->samples.size());
    CHECK(read.evaluation == nullptr);
    // It has no evaluation to render the JSON's detailed blocks from, and says so.
    CHECK_THROWS_AS(format_json(read), std::invalid_argument);
    // A model read back renders the same CSV as the one it was written from.
    if (unit == LengthUnit::millimetre) CHECK(format_csv(read) == format_csv(written));
  }
}

TEST_CASE("JSON reader: malformed input names the source and the JSON path") {
  const std::string good = format_json(result_with_size(LengthUnit::millimetre));
  CHECK(error_of("{\n  \"schema\": ,\n}").find("earlier.json:2") != std::string::npos);
  CHECK(error_of("[1, 2]").find("expected a JSON object") != std::string::npos);
  const std::string schema = error_of(replaced(good, "cylzone-report-1", "cylzone-report-9", "{"));
  CHECK(schema.find("cylzone-report-9") != std::string::npos);
  std::string key;
  error_of(replaced(good, "\"value\": 0.1", "\"value\": \"0.1\""), &key);
  CHECK(key == "characteristics[0].value");
  CHECK(error_of(replaced(good, "\"verdict\": \"conforms\"", "\"verdict\": \"fine\""))
            .find("unknown verdict 'fine'") != std::string::npos);
  error_of(replaced(good, "\"comparison\": \">=\"", "\"comparison\": \"=>\""), &key);
  CHECK(key.find(".comparison") != std::string::npos);
  error_of(replaced(good, "\"characteristics\": [", "\"characteristic_list\": [", "{"), &key);
  CHECK(key == "characteristics");
  const std::string units = error_of(
      replaced(good, "\"units\": \"mm\"", "\"units\": \"cubit\"", "\"plan\": {"), &key);
  CHECK(key == "plan.units");
  CHECK(units.find("cubit") != std::string::npos);
}

TEST_CASE("JSON reader: what fuzzing found is refused as an InputError") {
  const std::string good = format_json(result_with_size(LengthUnit::millimetre));
  // A number beyond the range of an IEEE 754 binary64 double is valid JSON syntax (RFC 8259,
  // section 6, leaves the range to implementations): refused, not an escaping exception.
  CHECK(error_of(replaced(good, "\"value\": 0.1", "\"value\": -30.00067021e30849293044"))
            .find("not a readable JSON report") != std::string::npos);
  // Characteristics are matched by id: an id that is not of its own feature is no report of ours.
  std::string key;
  error_of(replaced(good, "\"id\": \"H1/position\"", "\"id\": \"P0/position\""), &key);
  CHECK(key.find("characteristics[") == 0);
  CHECK(key.find(".id") != std::string::npos);
}

// ------------------------------------------------------------------ full depth, identity, table

TEST_CASE("range source: a bore without a plan depth says its range is the probed extent") {
  // ASME Y14.5-2018 (position, from memory for the clause): the zone applies over the full
  // length of the feature; a range taken from the probed band is not that, and every report
  // must say so.
  PartCheckResult r = hand_made_result();
  BoreResult& b = r.bores.front();
  b.depth_source = RangeSource::probed_extent;
  b.position->range_source = RangeSource::probed_extent;
  b.position_with_mobility->range_source = RangeSource::probed_extent;
  const ReportModel m = make_report_model(r);
  REQUIRE(m.bores.front().depth);
  CHECK(m.bores.front().depth->range_source == RangeSource::probed_extent);
  CHECK(m.range_source(*m.find("H1/position/mobility")) == RangeSource::probed_extent);

  const std::string json = format_json(m);
  CHECK(json.find("\"depth_source\": \"probed extent\"") != std::string::npos);
  CHECK(json.find("\"range_source\": \"probed extent\"") != std::string::npos);
  std::istringstream csv(format_csv(m));
  std::string header, row;
  std::getline(csv, header);
  std::getline(csv, row);
  // The range_source column (later columns, e.g. status, follow it).
  const std::vector<std::string> names = csv_fields(header);
  const auto column = std::find(names.begin(), names.end(), "range_source");
  REQUIRE(column != names.end());
  CHECK(csv_fields(row).at(static_cast<std::size_t>(column - names.begin())) == "probed extent");
  const std::string table = format_table(m);
  CHECK(table.find("no full depth in the plan for H1") != std::string::npos);

  // Read back: the source survives the round trip; a projected zone keeps its own source.
  CHECK(read_report_json(json, "r.json").bores.front().depth->range_source ==
        RangeSource::probed_extent);
  b.position_with_mobility->range_source = RangeSource::projected_zone;
  b.depth_source = RangeSource::plan_depth;
  const ReportModel projected = make_report_model(r);
  CHECK(projected.range_source(*projected.find("H1/position/mobility")) ==
        RangeSource::projected_zone);
  CHECK(format_table(projected).find("no full depth") == std::string::npos);
}

TEST_CASE("part identity: CSV columns after the existing ones, a JSON object, the table header") {
  ReportModelOptions options;
  options.part.id = "HM-3207";
  options.part.serial = "S 0042";
  options.part.timestamp = "2026-12-02T17:40:00Z";
  options.part.notes = {{"operator", "Lee"}, {"fixture", "F2, rev \"b\""}};
  const PartCheckResult r = hand_made_result();
  const ReportModel m = make_report_model(r, options);

  std::istringstream csv(format_csv(m));
  std::string header, row;
  std::getline(csv, header);
  std::getline(csv, row);
  const std::vector<std::string> names = csv_fields(header), fields = csv_fields(row);
  REQUIRE(fields.size() == names.size());
  // The first 14 columns keep their positions; identity follows the caution.
  CHECK(names[13] == "caution");
  CHECK(names[14] == "part_id");
  CHECK(fields[14] == "HM-3207");
  CHECK(fields[15] == "S 0042");
  CHECK(fields[16] == "2026-12-02T17:40:00Z");
  // RFC 4180: the comma and quotes of a note survive quoting.
  CHECK(fields[17] == "operator=Lee; fixture=F2, rev \"b\"");

  const std::string json = format_json(m);
  const ReportModel back = read_report_json(json, "r.json");
  CHECK(back.part.id == "HM-3207");
  CHECK(back.part.serial == "S 0042");
  CHECK(back.part.timestamp == "2026-12-02T17:40:00Z");
  REQUIRE(back.part.notes.size() == 2);  // a JSON object: read back in key order
  CHECK(back.part.notes[0] == std::make_pair(std::string("fixture"), std::string("F2, rev \"b\"")));

  const std::string table = format_table(m);
  CHECK(table.find("part: id HM-3207, serial S 0042, time 2026-12-02T17:40:00Z, operator=Lee; "
                   "fixture=F2, rev \"b\"\n") != std::string::npos);
  // Nothing given: null in JSON, empty CSV cells, no header line.
  CHECK(format_json(make_report_model(r)).find("\"serial\": null") != std::string::npos);
  CHECK(format_table(make_report_model(r)).find("part: ") == std::string::npos);
}

TEST_CASE("timestamps: ISO 8601 date-times with a zone") {
  // RFC 3339 section 5.8 examples (a profile of ISO 8601-1:2019, extended format).
  CHECK(is_iso8601_timestamp("1985-04-12T23:20:50.52Z"));
  CHECK(is_iso8601_timestamp("1996-12-19T16:39:57-08:00"));
  CHECK(is_iso8601_timestamp("1990-12-31T23:59:60Z"));  // a leap second
  CHECK(is_iso8601_timestamp("2026-12-02T17:40Z"));     // ISO 8601 reduced precision
  CHECK_FALSE(is_iso8601_timestamp("2026-12-02"));                 // no time: not a run's time
  CHECK_FALSE(is_iso8601_timestamp("2026-12-02T17:40:00"));        // local time without zone
  CHECK_FALSE(is_iso8601_timestamp("2026-13-02T17:40:00Z"));       // month 13
  CHECK_FALSE(is_iso8601_timestamp("2026-12-02T24:00:00Z"));       // hour 24
  CHECK_FALSE(is_iso8601_timestamp("2026-12-02 17:40:00Z"));       // blank for T
  CHECK_FALSE(is_iso8601_timestamp("2026-12-02T17:40:00Z; rm"));   // trailing text
}

TEST_CASE("warnings: lengths in the report's unit, stray points with their file lines") {
  // The inch is 25.4 mm exactly (common practice): 0.0254 mm = 0.001 inch, 2.54 mm = 0.1 inch.
  const ReportUnits inch(LengthUnit::inch);
  CHECK(in_report_unit("the depth range extends 0.0254 mm above and 2.5400 mm below", inch) ==
        "the depth range extends 0.00100 inch above and 0.10000 inch below");
  CHECK(in_report_unit("shift up to 12.7000 mm; 3 mmb", inch) == "shift up to 0.50000 inch; 3 mmb");
  CHECK(in_report_unit("0.0254 mm", ReportUnits()) == "0.0254 mm");  // mm: unchanged

  // Data order 1-based -> the file's lines.
  const std::vector<std::size_t> lines{3, 4, 7, 8};
  CHECK(with_file_lines("2 suspect point(s) (largest local excess 0.0100 mm at point #3 of the "
                        "file); points #1, #4 are contacts",
                        lines) ==
        "2 suspect point(s) (largest local excess 0.0100 mm at point #3 (line 7) of the "
        "file); points #1 (line 3), #4 (line 8) are contacts");
  CHECK(with_file_lines("per ASME Rule #1", lines) == "per ASME Rule #1");  // not a stray message

  // The delimited reader records each point's line: comments, a header and blank lines skipped.
  const PointCloud cloud =
      parse_delimited_points("# probe log\nx,y,z\n1,2,3\n\n4,5,6  # note\n# end\n7,8,9\n", "p.csv");
  CHECK(cloud.lines == std::vector<std::size_t>{3, 5, 7});

  // Through the model: a bore's stray-point warning names the lines, the JSON each point's line.
  PartCheckResult r = result_with_size(LengthUnit::inch);
  r.inputs.front().point_lines = lines;
  r.bores.front().warnings = {"1 suspect point(s) (largest local excess 0.0254 mm at point #2 of "
                              "the file); verdicts use all points: review the data"};
  r.bores.front().stray_points.points.push_back({1, 0.03, 0.0254});
  const ReportModel m = make_report_model(r);
  CHECK(m.bores.front().warnings.front() ==
        "1 suspect point(s) (largest local excess 0.00100 inch at point #2 (line 4) of the file); "
        "verdicts use all points: review the data");
  const std::string json = format_json(m);
  CHECK(json.find("\"line\": 4") != std::string::npos);
  // The size reason in inch too: 11.9953 mm = 0.4723 inch, 12 mm = 0.4724 inch (4 decimals).
  CHECK(json.find("\"reason\": \"actual mating envelope 0.4723 is below the lower limit 0.4724\"") !=
        std::string::npos);
}

TEST_CASE("preparation: removed outliers by file line in JSON, CSV and table") {
  // Bore H1's file: 6 points on lines 3..8; the residual rejection removed the third (line 5),
  // so the fits used file points 1, 2, 4, 5, 6, and the stray point #4 of the fits is line 7.
  PartCheckResult r = result_with_size(LengthUnit::millimetre);
  REQUIRE(r.inputs.front().role == "bore H1");
  r.inputs.front().point_lines = {3, 4, 5, 6, 7, 8};
  r.bores.front().warnings = {"1 suspect point(s) (largest local excess 0.0020 mm at point #4 of "
                              "the file); verdicts use all points: review the data"};
  FeaturePreparation p{"bore H1", {}};
  p.record.outliers.residual_rejection.enabled = true;
  p.record.outliers.residual_rejection.examined = 6;
  p.record.outliers.residual_rejection.removed.push_back({2, 5, -0.025, true});
  p.record.kept = {0, 1, 3, 4, 5};
  r.preparation = {FeaturePreparation{"datum A", {}}, p};
  const ReportModel m = make_report_model(r);
  CHECK(m.points_prepared());
  CHECK(m.bores.front().warnings.front().find("point #4 (line 7)") != std::string::npos);
  const std::string json = format_json(m);
  CHECK(json.find("\"preparation\"") != std::string::npos);
  CHECK(json.find("\"removed_count\": 1") != std::string::npos);
  CHECK(json.find("\"line\": 5") != std::string::npos);
  CHECK(json.find("\"envelope_contact\": true") != std::string::npos);
  std::istringstream csv(format_csv(m));
  std::string header, row;
  std::getline(csv, header);
  std::getline(csv, row);
  CHECK(csv_fields(header).at(21) == "outliers_removed");  // sampling and scan columns follow
  CHECK(csv_fields(row).at(21) == "1");
  const std::string table = format_table(m);
  CHECK(table.find("Preparation of the points") != std::string::npos);
  CHECK(table.find("bore H1: residual rejection: 1 of 6 removed (line 5)") != std::string::npos);
  // Nothing asked: no section in the table.
  r.preparation = {FeaturePreparation{"datum A", {}}};
  CHECK(format_table(make_report_model(r)).find("Preparation") == std::string::npos);
}

namespace {

/// A result with three bores: a long id, one without a perpendicularity tolerance, and a
/// sensitivity study where two associations give identical figures for every bore.
PartCheckResult sensitivity_result() {
  PartCheckResult r = hand_made_result();
  BoreResult second = r.bores.front();
  second.id = "manifold-cross-bore-left-upper-07";  // longer than the column's cap
  second.perpendicularity = PerpendicularityResult{};
  second.perpendicularity->spec.tolerance = 0.015;
  second.perpendicularity->value = 0.0123;
  second.perpendicularity->allowed = 0.015;
  r.bores.push_back(second);
  second.id = "manifold-cross-bore-left-upper-08";  // shortens like the one before
  r.bores.push_back(second);
  r.characteristics.clear();
  for (const BoreResult& b : r.bores)
    for (const Characteristic& c : bore_characteristics(b)) r.characteristics.push_back(c);
  for (const BoreResult& b : r.bores) {
    BoreSensitivity s;
    s.bore_id = b.id;
    const double q = b.perpendicularity ? 0.0123 : 0.0;
    s.rows = {{PlaneAssociation::tangent_least_squares, 0.0850, q, Verdict::conforms, {}},
              {PlaneAssociation::tangent_minimax, 0.0861, q + 0.001, Verdict::conforms, {}},
              {PlaneAssociation::least_squares, 0.0840, q, Verdict::conforms, {}},
              {PlaneAssociation::minimum_zone, 0.0861, q + 0.001, Verdict::conforms, {}}};
    s.position_spread = 0.0021;
    s.perpendicularity_spread = 0.001;
    r.sensitivity.push_back(s);
  }
  return r;
}

}  // namespace

TEST_CASE("table: widths from the content, long ids shortened and listed, lines within 120") {
  const PartCheckResult r = sensitivity_result();
  const ReportModel m = make_report_model(r);
  TableOptions ascii;
  const std::string table = format_table(m, ascii);
  std::istringstream lines(table);
  std::string line;
  while (std::getline(lines, line)) CHECK(line.size() <= 120);
  // Cut at 16 columns with "~", listed in full once below.
  CHECK(table.find("manifold-cross-~") != std::string::npos);
  CHECK(table.find("  manifold-cross-~ = manifold-cross-bore-left-upper-07\n") != std::string::npos);
  // One that would shorten alike gets a number after the marker.
  CHECK(table.find("  manifold-cross~2 = manifold-cross-bore-left-upper-08\n") != std::string::npos);
  // ASCII: every byte below 0x80 (ISO/IEC 646), angles in "deg", tilts in "urad".
  for (char c : table) CHECK(static_cast<unsigned char>(c) < 0x80);
  CHECK(table.find("tilt urad") != std::string::npos);
  CHECK(table.find(" deg\n") != std::string::npos);
  // Identical figures of two associations: one column headed with both names.
  CHECK(table.find("tangent-minimax = minimum-zone") != std::string::npos);
  CHECK(table.find("minimum-zone", table.find("minimum-zone") + 1) == std::string::npos);
  // H1 has no perpendicularity tolerance: "-", never 0.0000, in its sensitivity cells.
  const std::size_t h1 = table.find("\nH1 ", table.find("Sensitivity"));
  REQUIRE(h1 != std::string::npos);
  const std::string h1_row = table.substr(h1 + 1, table.find('\n', h1 + 1) - h1 - 1);
  CHECK(h1_row.find("0.0850 / -") != std::string::npos);
  CHECK(h1_row.find("0.0000") == std::string::npos);

  TableOptions unicode;
  unicode.unicode = true;
  const std::string utf8 = format_table(m, unicode);
  CHECK(utf8.find("tilt \u00b5rad") != std::string::npos);
  CHECK(utf8.find("\u00b0\n") != std::string::npos);
  CHECK(utf8.find("0.0850 / \u2014") != std::string::npos);
  CHECK(utf8.find("manifold-cross-\u2026") != std::string::npos);
}

TEST_CASE("a bore not evaluated: every report lists it with its reason, the part is not proven") {
  // H1 as above; H2 could not be evaluated (its plan asks for position and size).
  PartCheckResult r = hand_made_result();
  PlanBore h1;
  h1.id = "H1";
  PlanBore h2;
  h2.id = "H2";
  PlanTolerance position;
  position.tolerance = 0.050;
  position.datums = {{'A', MaterialBoundary::rmb}};
  h2.position = position;
  h2.size = SizeLimits{8.0, 8.02};
  r.plan.bores = {h1, h2};
  BoreResult b;
  b.id = "H2";
  b.not_evaluated = "bore H2: the points lie in one cross-section (axial span 0.0000 mm)";
  r.bores.push_back(b);
  for (Characteristic& c : bore_characteristics(b, h2)) r.characteristics.push_back(c);
  r.verdict = combine(r.characteristics);
  // H1's deciding position (after mobility, 0.085 within 0.090) conforms, so the rows not
  // evaluated decide: not proven (ISO 14253-1:2017 section 5, from memory).
  REQUIRE(r.verdict == Verdict::not_proven);
  const ReportModel m = make_report_model(r);
  REQUIRE(m.bore("H2") != nullptr);
  CHECK_FALSE(m.bore("H2")->evaluated());
  CHECK(m.bore("H1")->evaluated());
  CHECK_FALSE(m.range_source(*m.find("H2/position")).has_value());

  const std::string table = format_table(m);
  CHECK(table.find("H2 not evaluated: bore H2: the points lie in one cross-section") !=
        std::string::npos);
  CHECK(table.find("Part verdict: NOT PROVEN (3 of") != std::string::npos);
  CHECK(table.find("Caution:") != std::string::npos);

  std::istringstream csv(format_csv(m));
  std::string header, row;
  std::getline(csv, header);
  const std::vector<std::string> names = csv_fields(header);
  const auto index = [&](const char* name) {
    return static_cast<std::size_t>(std::find(names.begin(), names.end(), name) - names.begin());
  };
  std::size_t not_evaluated_rows = 0;
  while (std::getline(csv, row)) {
    const std::vector<std::string> fields = csv_fields(row);
    REQUIRE(fields.size() == names.size());
    if (fields[index("bore")] != "H2") {
      CHECK(fields[index("status")] == "evaluated");
      continue;
    }
    ++not_evaluated_rows;
    CHECK(fields[index("status")] == "not evaluated");
    CHECK(fields[index("value")].empty());
    CHECK(fields[index("verdict")] == "not proven");
    CHECK(fields[index("reason")] == b.not_evaluated);
  }
  CHECK(not_evaluated_rows == 3);  // position, size/lower, size/upper

  const std::string json = format_json(m);
  CHECK(json.find("\"status\": \"not evaluated\"") != std::string::npos);
  const ReportModel back = read_report_json(json, "r.json");
  REQUIRE(back.bore("H2") != nullptr);
  CHECK(back.bore("H2")->not_evaluated == b.not_evaluated);
  REQUIRE(back.find("H2/size/lower") != nullptr);
  CHECK(back.find("H2/size/lower")->not_evaluated == b.not_evaluated);
  CHECK(back.find("H2/size/lower")->verdict == Verdict::not_proven);
  CHECK(back.verdict == Verdict::not_proven);
  // A row not evaluated without its reason is no report of ours.
  std::string broken = json;
  const std::size_t at = broken.find("\"reason\": \"bore H2");
  REQUIRE(at != std::string::npos);
  broken.replace(at, std::string("\"reason\": ").size(), "\"reason\": null, \"was\": ");
  CHECK_THROWS_AS(read_report_json(broken, "r.json"), InputError);
  // A status of neither kind is refused, naming the key.
  std::string unknown = json;
  const std::size_t status = unknown.find("\"status\": \"not evaluated\"");
  unknown.replace(status, std::string("\"status\": \"not evaluated\"").size(),
                  "\"status\": \"skipped\"");
  CHECK_THROWS_WITH(read_report_json(unknown, "r.json"),
                    Catch::Matchers::Contains("status") && Catch::Matchers::Contains("skipped"));
}

TEST_CASE("sampling adequacy: JSON round trip, CSV's appended columns, one table line") {
  // A bore probed over 5 mm of a 40 mm range (magnification 40 / 5 = 8, from the definition in
  // evaluate/sampling_coverage.hpp), two sections of 12 and 4 points.
  for (LengthUnit unit : {LengthUnit::millimetre, LengthUnit::inch}) {
    PartCheckResult r = hand_made_result();
    r.plan.unit = unit;
    SamplingCoverage s;
    s.span_top = 0.0;
    s.span_bottom = -5.0;
    s.range_top = 0.0;
    s.range_bottom = -40.0;
    s.extrapolation_bottom = 35.0;
    s.magnification = 8.0;
    s.sections = {{-5.0, 4, 270.0}, {0.0, 12, 330.0}};
    s.section_points_min = 4;
    s.section_points_median = 8.0;
    s.sparse_sections = 1;
    s.coverage_deg = 345.0;
    s.worst_section_coverage_deg = 270.0;
    s.worst_section_height = -5.0;
    s.warnings = {"extends 35.0000 mm below"};
    r.bores.front().sampling = s;
    const ReportModel written = make_report_model(r);
    const ReportModel read = read_report_json(format_json(written), "report.json");
    REQUIRE(read.bores.front().sampling.has_value());
    const SamplingCoverage& back = *read.bores.front().sampling;
    const double eps = unit == LengthUnit::millimetre ? 0.0 : 1e-13;
    CHECK(back.span_bottom == Approx(-5.0).margin(eps));
    CHECK(back.range_bottom == Approx(-40.0).margin(eps));
    CHECK(back.extrapolation_bottom == Approx(35.0).margin(eps));
    CHECK(*back.magnification == 8.0);  // a ratio: no unit
    REQUIRE(back.sections.size() == 2);
    CHECK(back.sections[0].points == 4);
    CHECK(back.sections[1].coverage_deg == 330.0);
    CHECK(back.worst_section_height == Approx(-5.0).margin(eps));
    CHECK(back.section_points_median == 8.0);
    CHECK(back.thresholds.min_section_points == 8);
    // Warnings in the report's unit: 35 mm = 1.37795 inch (25.4 mm per inch, exact).
    CHECK(back.warnings.front() ==
          (unit == LengthUnit::millimetre ? "extends 35.0000 mm below" : "extends 1.37795 inch below"));

    std::istringstream csv(format_csv(written));
    std::string header, row;
    std::getline(csv, header);
    std::getline(csv, row);
    const std::vector<std::string> names = csv_fields(header), fields = csv_fields(row);
    REQUIRE(fields.size() == names.size());
    const auto field = [&](const std::string& name) {
      return fields[static_cast<std::size_t>(std::find(names.begin(), names.end(), name) - names.begin())];
    };
    CHECK(field("probed_span") == (unit == LengthUnit::millimetre ? "5.0000" : "0.19685"));
    CHECK(field("tilt_magnification") == "8.000");
    CHECK(field("sections") == "2");
    CHECK(field("section_points_min") == "4");
    CHECK(field("worst_section_coverage_deg") == "270.0");
    CHECK(field("sampling_warnings") == back.warnings.front());
    const std::string table = format_table(written);
    CHECK(table.find("Sampling (probed span") != std::string::npos);
    CHECK(table.find(" 8.00 ") != std::string::npos);
  }
}

TEST_CASE("decision rule in the reports: U, k, rule and limits in JSON (read back), CSV, table, HTML") {
  // ISO 14253-1:2017 default rule (decide/characteristic.hpp): H1's moved position 0.085 against
  // 0.090 with U = 0.006 lies between 0.084 and 0.096: not proven; the mating envelope 11.9953
  // is below 12.000 - 0.002: non-conformance proven.
  PartCheckResult r = result_with_size(LengthUnit::millimetre);
  DecisionRule rule;
  rule.kind = DecisionRuleKind::iso_14253_1;
  rule.stated_uncertainty[CharacteristicKind::position] = 0.006;
  rule.stated_uncertainty[CharacteristicKind::size] = 0.002;
  r.characteristics = bore_characteristics(r.bores.front(), rule);
  r.verdict = combine(r.characteristics);
  const ReportModel written = make_report_model(r);
  const Characteristic* moved = written.find("H1/position/mobility");
  REQUIRE(moved);
  CHECK(moved->verdict == Verdict::not_proven);

  const std::string json = format_json(written);
  CHECK(json.find("\"effective_tolerance\": 0.09") != std::string::npos);
  CHECK(json.find("\"rule\": \"ISO 14253-1\"") != std::string::npos);
  const ReportModel read = read_report_json(json, "report.json");
  REQUIRE(read.characteristics.size() == written.characteristics.size());
  for (std::size_t k = 0; k < read.characteristics.size(); ++k) {
    const Characteristic& a = written.characteristics[k];
    const Characteristic& b = read.characteristics[k];
    INFO(a.id);
    CHECK(b.rule == a.rule);
    CHECK(b.rule_note == a.rule_note);
    CHECK(b.acceptance_limit == a.acceptance_limit);  // mm: shortest round-trip decimals
    CHECK(b.rejection_limit == a.rejection_limit);
    REQUIRE(b.uncertainty.has_value() == a.uncertainty.has_value());
    if (a.uncertainty) {
      CHECK(b.uncertainty->expanded == a.uncertainty->expanded);
      CHECK(b.uncertainty->coverage_factor == a.uncertainty->coverage_factor);
      CHECK(b.uncertainty->source == a.uncertainty->source);
    }
  }
  // The cylindricity has no stated U: simple acceptance, and the JSON says why.
  const Characteristic* form = read.find("H1/cylindricity");
  REQUIRE(form);
  CHECK(form->rule == DecisionRuleKind::simple_acceptance);
  CHECK(form->rule_note == "U not evaluated: simple acceptance");
  CHECK(format_csv(read) == format_csv(written));

  // CSV: the decision columns appended last (docs/report-schema.md).
  const std::string csv = format_csv(written);
  CHECK(csv.find(",ISO 14253-1,0.0060,2.00,0.0840,0.0960,stated budget ([decision].uncertainty),\n") !=
        std::string::npos);
  CHECK(csv.find(",simple acceptance,,,0.0050,0.0050,,U not evaluated: simple acceptance\n") !=
        std::string::npos);

  // Table: U and the rule on each row, and a legend, only when a rule or a U is present.
  const std::string table = format_table(written);
  // U, then the acceptance limit: 0.090 - 0.006 for the position, 12.000 + 0.002 for the
  // lower size limit (ISO 14253-1:2017 logic).
  CHECK(table.find("0.0060   0.0840  ISO 14253-1\n") != std::string::npos);
  CHECK(table.find("0.0020  12.0020  ISO 14253-1\n") != std::string::npos);
  CHECK(table.find("simple acceptance (U not evaluated)") != std::string::npos);
  CHECK(table.find("Decision rule: ISO 14253-1") != std::string::npos);
  CHECK(format_table(result_with_size(LengthUnit::millimetre)).find("Decision rule") ==
        std::string::npos);

  // HTML: the characteristic table carries U (k) and the rule with its limits.
  const std::string html = format_html(written);
  CHECK(html.find("<th>U (k), decision rule</th>") != std::string::npos);
  CHECK(format_html(make_report_model(result_with_size(LengthUnit::millimetre)))
            .find("<th>U (k), decision rule</th>") == std::string::npos);
  CHECK(html.find("0.0060 (2.00)") != std::string::npos);
  CHECK(html.find("accept &lt;= 0.0840, reject &gt; 0.0960") != std::string::npos);

  // The reader refuses an unknown rule and a negative U, naming the JSON path.
  std::string unknown = json;
  unknown.replace(unknown.find("\"ISO 14253-1\""), 13, "\"lenient\"");
  CHECK_THROWS_WITH(read_report_json(unknown, "r.json"),
                    Catch::Matchers::Contains("rule") && Catch::Matchers::Contains("unknown decision rule 'lenient'"));
  std::string negative = json;
  negative.replace(negative.find("\"expanded\": 0.006"), 17, "\"expanded\": -0.006");
  CHECK_THROWS_WITH(read_report_json(negative, "r.json"),
                    Catch::Matchers::Contains("uncertainty.expanded") &&
                        Catch::Matchers::Contains("must not be negative"));
}
