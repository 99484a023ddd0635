// The HTML report (report.hpp, format_html) rendered from a result assembled by hand, so every
// figure's expected geometry follows from numbers the test chose: document structure, escaping
// of hostile text, the exit point at its depth, the stated magnification and scale bar agreeing
// with what is drawn, and the colour scale against the published cividis table.
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <regex>
#include <string>
#include <vector>

#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/report/report_reader.hpp"

using namespace cylzone;

namespace {

constexpr double stated = 0.030, bonus = 0.0029;
const Eigen::Vector2d top_offset(0.0036, -0.0020), bottom_offset(0.0231, 0.0112);
constexpr double top_z = 0.0, bottom_z = -60.0;

/// Where a straight axis, offset(h) = a + h s, first reaches radius R scanning down from the
/// top: the larger root of |a + h s|^2 = R^2 (closed form, common practice).
double exit_height(double radius) {
  const Eigen::Vector2d s = (bottom_offset - top_offset) / (bottom_z - top_z);
  const Eigen::Vector2d a = top_offset - top_z * s;
  const double qa = s.squaredNorm(), qb = 2 * a.dot(s), qc = a.squaredNorm() - radius * radius;
  return (-qb - std::sqrt(qb * qb - 4 * qa * qc)) / (2 * qa);  // s points down: h < 0
}

/// A part with one bore "P2" drilled on a tilt (on position at the mouth, out at the bottom),
/// a surface map with known cells, and hostile text in the ids and notes.
PartCheckResult tilted_bore_result(const std::string& bore_id = "P2") {
  PartCheckResult r;
  r.plan.name = "Manifold <b>bold</b> & \"quoted\"";
  r.plan.file = "plan.toml";
  r.plan.unit = LengthUnit::millimetre;
  r.inputs.push_back({"plan", "plan.toml", std::string(64, 'a'), 0, {}});
  r.inputs.push_back({"bore " + bore_id, "points/<P2>.csv", std::string(64, 'b'), 210, {}});
  BoreResult b;
  b.id = bore_id;
  b.probed_top = -2.0;
  b.probed_bottom = -58.0;
  PositionResult p;
  p.spec.tolerance = stated;
  p.spec.condition = MaterialCondition::mmc;
  p.spec.datums = {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::rmb}};
  p.range_top = top_z;
  p.range_bottom = bottom_z;
  p.top = {top_z, top_offset};
  p.bottom = {bottom_z, bottom_offset};
  p.worst = p.bottom;
  p.value = 2 * bottom_offset.norm();
  p.bonus = bonus;
  p.allowed = stated + bonus;
  p.leaves_zone_at = exit_height(p.allowed / 2);
  b.position = p;
  SurfaceMapOptions grid;
  grid.angle_cells = 8;
  grid.depth_cells = 2;
  Eigen::Matrix3Xd points(3, 4);
  points << 5, 0, -5, 0,  //
      0, 5, 0, -5,        //
      -2, -2, -58, -58;
  Eigen::VectorXd dev(4);
  dev << 0.0020, -0.0015, 0.0005, -0.0020;  // largest cell |mean| 2.0 um: 8 classes of 0.5 um
  Axis axis;
  b.surface_map = radial_deviation_map(points, dev, axis,
                                       ZoneFrame::at({0, 0}, Eigen::Vector3d::UnitZ()), grid);
  b.warnings.push_back("note <script>alert('w')</script> & more");
  r.bores.push_back(b);
  r.characteristics = bore_characteristics(b);
  r.verdict = combine(r.characteristics);
  return r;
}

std::size_t occurrences(const std::string& text, const std::string& what) {
  std::size_t n = 0;
  for (std::size_t at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++n;
  return n;
}

/// The numbers of attribute `name` in the first element after `anchor`.
double attribute(const std::string& html, const std::string& anchor, const std::string& name) {
  const std::size_t from = html.find(anchor);
  REQUIRE(from != std::string::npos);
  std::smatch m;
  const std::string tail = html.substr(from, 4000);
  REQUIRE(std::regex_search(tail, m, std::regex(name + "=\"(-?[0-9.]+)\"")));
  return std::stod(m[1].str());
}

/// The section of `html` from `anchor` to the next `end`.
std::string between(const std::string& html, const std::string& anchor, const std::string& end) {
  const std::size_t from = html.find(anchor);
  REQUIRE(from != std::string::npos);
  const std::size_t to = html.find(end, from);
  REQUIRE(to != std::string::npos);
  return html.substr(from, to - from);
}

/// Relative luminance of an sRGB colour "#rrggbb" (IEC 61966-2-1 transfer function, Rec. 709
/// primaries' weights; the WCAG 2 definition).
double luminance(const std::string& hex) {
  const auto channel = [&](int k) {
    const double c = std::stoi(hex.substr(1 + 2 * k, 2), nullptr, 16) / 255.0;
    return c <= 0.04045 ? c / 12.92 : std::pow((c + 0.055) / 1.055, 2.4);
  };
  return 0.2126 * channel(0) + 0.7152 * channel(1) + 0.0722 * channel(2);
}

}  // namespace

TEST_CASE("HTML: one self-contained document, a figure set per bore, the caution, no script") {
  PartCheckResult r = tilted_bore_result();
  BoreResult second = r.bores.front();
  second.id = "P7";
  r.bores.push_back(second);
  r.characteristics = bore_characteristics(r.bores[0]);
  const auto more = bore_characteristics(r.bores[1]);
  r.characteristics.insert(r.characteristics.end(), more.begin(), more.end());
  const std::string html = format_html(make_report_model(r));
  CHECK(html.rfind("<!DOCTYPE html>", 0) == 0);
  CHECK(html.find("<meta charset=\"utf-8\">") != std::string::npos);
  CHECK(occurrences(html, "class=\"figure-set\"") == 2);
  CHECK(occurrences(html, "<figure class=\"top-view\"") == 2);
  CHECK(occurrences(html, "<figure class=\"side-view\"") == 2);
  CHECK(occurrences(html, "<figure class=\"surface-map\"") == 2);
  CHECK(occurrences(html, "<section class=\"bore\"") == 2);
  // The project's caution, word for word (top and foot of the report).
  CHECK(occurrences(html, std::string(safety_caution)) == 2);
  // Self-contained: no script, no external resource (the SVG namespace is a name, not a fetch).
  CHECK(html.find("<script") == std::string::npos);
  CHECK(html.find("<link") == std::string::npos);
  CHECK(html.find("src=") == std::string::npos);
  CHECK(html.find("url(") == std::string::npos);
  CHECK(occurrences(html, "http") == occurrences(html, "xmlns=\"http://www.w3.org/2000/svg\""));
  // Print: page breaks between bores.
  CHECK(html.find("@media print") != std::string::npos);
  CHECK(html.find("section.bore{break-before:page}") != std::string::npos);
  // Verdicts in words with a symbol, never colour alone.
  CHECK(html.find("\u2718 does not conform") != std::string::npos);
  CHECK(html.find("Part verdict: <span class=\"verdict v-fail\">\u2718 does not conform</span>") !=
        std::string::npos);
  // Inputs with their digests, the methods with their sources.
  CHECK(html.find(std::string(64, 'b')) != std::string::npos);
  CHECK(html.find("cividis") != std::string::npos);
  CHECK(html.find("ISO 1101") != std::string::npos);
}

TEST_CASE("HTML: hostile ids, names, paths and notes are escaped") {
  const std::string hostile = "<script>alert(\"x\")</script>";
  PartCheckResult r = tilted_bore_result(hostile);
  ReportModelOptions options;
  options.part.id = "A&B <i>";
  options.part.notes = {{"operator", "O'Brien <img src=x onerror=alert(1)>"}};
  const std::string html = format_html(make_report_model(r, options));
  CHECK(html.find("<script") == std::string::npos);
  CHECK(html.find("<img") == std::string::npos);
  CHECK(html.find("<b>bold") == std::string::npos);
  CHECK(html.find("&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;") != std::string::npos);
  CHECK(html.find("Manifold &lt;b&gt;bold&lt;/b&gt; &amp; &quot;quoted&quot;") !=
        std::string::npos);
  CHECK(html.find("O'Brien &lt;img src=x onerror=alert(1)&gt;") != std::string::npos);
  CHECK(html.find("points/&lt;P2&gt;.csv") != std::string::npos);
  CHECK(html.find("note &lt;script&gt;alert('w')&lt;/script&gt; &amp; more") != std::string::npos);
  // Anchors use the bore's index, never its text.
  CHECK(html.find("id=\"bore-1\"") != std::string::npos);
}

TEST_CASE("HTML: the axis leaves its zone at the depth found, marked in every view") {
  const PartCheckResult r = tilted_bore_result();
  const ReportModel m = make_report_model(r);
  const double allowed = stated + bonus;
  const double z_exit = exit_height(allowed / 2);
  // Located where the tilted axis reaches the allowed radius (the table's -36.1 of the demo's
  // P2 comes from the same kind of axis): strictly inside the range.
  REQUIRE(z_exit < -30.0);
  REQUIRE(z_exit > -40.0);
  REQUIRE(m.bores.front().depth);
  const DepthProfile& d = *m.bores.front().depth;
  REQUIRE(d.exit);
  CHECK(d.exit->height == Approx(z_exit).margin(1e-12));
  CHECK(d.exit->radial() == Approx(allowed / 2).margin(1e-12));

  const std::string html = format_html(m);
  const std::string side = between(html, "<figure class=\"side-view\"", "</figure>");
  // Every panel (x, y, radial) marks the exit at z_exit; its drawn height follows the stated
  // depth scale from the top of the range.
  CHECK(occurrences(side, "class=\"exit\"") == 3);
  const double depth_scale = attribute(side, "<figure", "data-depth-scale");
  const double top_y = attribute(side, "class=\"panel\"", "y");  // the panel frame's top
  std::smatch g;
  REQUIRE(std::regex_search(
      side, g,
      std::regex(
          "class=\"exit\" data-z=\"(-?[0-9.]+)\" data-x=\"(-?[0-9.]+)\" data-y=\"(-?[0-9.]+)\"")));
  CHECK(std::stod(g[1].str()) == Approx(z_exit).margin(1e-4));
  CHECK(std::stod(g[3].str()) == Approx(top_y + (top_z - z_exit) * depth_scale).margin(0.01));
  // In the radial panel the exit lies on the allowed wall.
  const std::string radial = between(side, "data-plane=\"radial\"", "</g><path");
  const double magnification = attribute(side, "<figure", "data-magnification");
  std::smatch wall;
  REQUIRE(std::regex_search(radial, wall, std::regex("class=\"wall\" d=\"M(-?[0-9.]+) ")));
  std::smatch mark;
  REQUIRE(std::regex_search(
      radial, mark, std::regex("class=\"exit\" data-z=\"[-0-9.]+\" data-x=\"(-?[0-9.]+)\"")));
  CHECK(std::stod(mark[1].str()) == Approx(std::stod(wall[1].str())).margin(0.011));
  std::smatch frame;
  REQUIRE(std::regex_search(radial, frame, std::regex("<rect x=\"(-?[0-9.]+)\"")));
  CHECK(std::stod(wall[1].str()) ==
        Approx(std::stod(frame[1].str()) + 1.0 + allowed / 2 * magnification).margin(0.011));
  // The words say it too.
  CHECK(html.find("leaves its zone at z = \u221236.") != std::string::npos);
}

TEST_CASE("HTML: the stated magnification and scale bar are the ones drawn") {
  const std::string html = format_html(make_report_model(tilted_bore_result()));
  const std::string top = between(html, "<figure class=\"top-view\"", "</figure>");
  // The SVG's user unit is one millimetre of paper.
  std::smatch size;
  REQUIRE(std::regex_search(
      top, size,
      std::regex(
          "width=\"([0-9.]+)mm\" height=\"([0-9.]+)mm\" viewBox=\"0 0 ([0-9.]+) ([0-9.]+)\"")));
  CHECK(size[1].str() == size[3].str());
  CHECK(size[2].str() == size[4].str());
  const double magnification = attribute(top, "<figure", "data-magnification");
  CHECK(top.find("magnification " + std::to_string(static_cast<long>(magnification)) + " : 1") !=
        std::string::npos);
  // A round number (1, 2 or 5 x 10^k) that fits the farthest point of the axis, 0.0257 mm out,
  // into the view's 26 mm radius, and the next round number would not.
  const double extent = bottom_offset.norm();
  CHECK(extent * magnification <= 26.0);
  CHECK(extent * magnification * 2.0 > 26.0);
  CHECK(magnification == 1000.0);
  // Mouth and bottom marks: their distance on paper over the axis' true displacement.
  const double mx = attribute(top, "class=\"mouth\"", "cx"),
               my = attribute(top, "class=\"mouth\"", "cy");
  const double bx = attribute(top, "class=\"bottom\"", "x") + 1.0;
  const double by = attribute(top, "class=\"bottom\"", "y") + 1.0;
  const Eigen::Vector2d drawn(bx - mx, -(by - my));  // paper y runs down
  const Eigen::Vector2d actual = bottom_offset - top_offset;
  CHECK(drawn.x() == Approx(actual.x() * magnification).margin(0.015));
  CHECK(drawn.y() == Approx(actual.y() * magnification).margin(0.015));
  // The zone circle: radius = allowed / 2 x magnification.
  CHECK(attribute(top, "class=\"zone-allowed\"", "r") ==
        Approx((stated + bonus) / 2 * magnification).margin(0.006));
  CHECK(attribute(top, "class=\"zone-stated\"", "r") ==
        Approx(stated / 2 * magnification).margin(0.006));
  // Scale bar: a round number of micrometres whose drawn length is that many micrometres
  // magnified.
  const double um = attribute(top, "class=\"scale-bar\"", "data-um");
  CHECK(um == 10.0);
  std::smatch bar;
  REQUIRE(std::regex_search(
      top, bar,
      std::regex("class=\"scale-bar\"[^>]*><path d=\"M[-0-9.]+ [-0-9.]+v1h([0-9.]+)v-1")));
  CHECK(std::stod(bar[1].str()) == Approx(um / 1000.0 * magnification).margin(0.006));
  CHECK(top.find(">10 \u00b5m<") != std::string::npos);
}

TEST_CASE("HTML: the surface map's colour scale is cividis, light rising with the deviation") {
  const std::string html = format_html(make_report_model(tilted_bore_result()));
  const std::string map = between(html, "<figure class=\"surface-map\"", "</figure>");
  // Largest cell mean 2.0 um: classes of 0.5 um from -2 to +2, labelled in micrometres.
  CHECK(attribute(map, "<figure", "data-step-um") == 0.5);
  CHECK(map.find(">+2.0<") != std::string::npos);
  CHECK(map.find(">\u22122.0<") != std::string::npos);
  CHECK(map.find(">\u00b5m<") != std::string::npos);
  CHECK(map.find("no points") != std::string::npos);
  const std::string legend = between(map, "<g class=\"legend\">", "</g>");
  std::vector<std::string> fills;  // from the top (largest) down
  const std::regex fill("fill=\"(#[0-9a-f]{6})\"");
  for (auto it = std::sregex_iterator(legend.begin(), legend.end(), fill);
       it != std::sregex_iterator(); ++it)
    fills.push_back((*it)[1].str());
  REQUIRE(fills.size() == 9);  // 8 classes and the white "no points" swatch
  fills.pop_back();
  std::reverse(fills.begin(), fills.end());  // class 0 (most negative) first
  // Class c is drawn in cividis at (c + 0.5) / 8, i.e. table entry 255 (c + 0.5) / 8: the
  // authors' published 256-entry table (Nuñez, Anderton & Renslow 2018, PLOS ONE 13(7)
  // e0199239, supplementary colour map; the nearest entries 16, 48, ..., 239).
  const double reference[8][3] = {{0.0000, 0.1714, 0.4102}, {0.1752, 0.2583, 0.4224},
                                  {0.3209, 0.3481, 0.4244}, {0.4354, 0.4390, 0.4508},
                                  {0.5464, 0.5307, 0.4736}, {0.6732, 0.6315, 0.4553},
                                  {0.8070, 0.7392, 0.4070}, {0.9490, 0.8556, 0.3155}};
  for (int c = 0; c < 8; ++c)
    for (int k = 0; k < 3; ++k)
      CHECK(std::stoi(fills[c].substr(1 + 2 * k, 2), nullptr, 16) / 255.0 ==
            Approx(reference[c][k]).margin(0.012));
  // Legible in grey: the luminance rises strictly from class to class.
  for (int c = 1; c < 8; ++c) CHECK(luminance(fills[c]) > luminance(fills[c - 1]) + 0.02);
  // The cells with points are drawn in their class's colour: +2.0 um in the top class, -2.0 um
  // in the bottom one; the other cells are left empty (white background only).
  CHECK(occurrences(map, "fill=\"" + fills[7] + "\"") == 2);  // a cell and its legend swatch
  CHECK(occurrences(map, "fill=\"" + fills[0] + "\"") == 2);
}

TEST_CASE("HTML: a bore not evaluated keeps its figure set, which says why it is empty") {
  PartCheckResult r = tilted_bore_result();
  BoreResult failed;
  failed.id = "P2";
  failed.not_evaluated = "bore P2: the points lie in one cross-section";
  r.bores.front() = failed;
  PlanBore plan;
  plan.id = "P2";
  PlanTolerance tolerance;
  tolerance.tolerance = stated;
  plan.position = tolerance;
  r.characteristics = bore_characteristics(failed, plan);
  r.verdict = combine(r.characteristics);
  const std::string html = format_html(make_report_model(r));
  REQUIRE_FALSE(r.characteristics.empty());
  CHECK(occurrences(html, "class=\"figure-set\"") == 1);
  CHECK(html.find("No figures: the bore was not evaluated.") != std::string::npos);
  CHECK(html.find("? not proven") != std::string::npos);
  CHECK(html.find("<figure class=\"top-view\"") == std::string::npos);
}

TEST_CASE("HTML: a model read back from the JSON report draws the zone views and the exit") {
  const PartCheckResult r = tilted_bore_result();
  const ReportModel m = make_report_model(r);
  const ReportModel back = read_report_json(format_json(m), "earlier.json");
  REQUIRE(back.bores.front().depth);
  REQUIRE(back.bores.front().depth->exit);
  CHECK(back.bores.front().depth->exit->height ==
        Approx(exit_height((stated + bonus) / 2)).margin(1e-12));
  const std::string html = format_html(back);
  CHECK(occurrences(html, "class=\"figure-set\"") == 1);
  CHECK(occurrences(html, "<figure class=\"top-view\"") == 1);
  CHECK(occurrences(html, "class=\"exit\"") == 4);  // top view and three side panels
  // The JSON carries no surface map: the figure set says so instead of drawing an empty one.
  CHECK(html.find("<figure class=\"surface-map\"") == std::string::npos);
  CHECK(html.find("No surface map in this report") != std::string::npos);
  CHECK(occurrences(html, std::string(safety_caution)) == 2);
}

TEST_CASE("HTML in inch: lengths and heights in inch, figure deviations in micrometres") {
  PartCheckResult r = tilted_bore_result();
  r.plan.unit = LengthUnit::inch;
  const std::string html = format_html(make_report_model(r));
  // 0.0329 mm / 25.4 = 0.0012953 in, five decimals (ReportUnits); -60 mm = -2.362 in.
  CHECK(html.find("zone \u00d80.00130 with bonus") != std::string::npos);
  CHECK(html.find("bottom z = \u22122.362") != std::string::npos);
  CHECK(html.find("values in inch") != std::string::npos);
  // The physical scale does not change with the unit: the same magnification and scale bar.
  const std::string top = between(html, "<figure class=\"top-view\"", "</figure>");
  CHECK(attribute(top, "<figure", "data-magnification") == 1000.0);
  CHECK(top.find(">10 \u00b5m<") != std::string::npos);
}

namespace {

/// A Monte Carlo study of the tilted bore's position as monte_carlo_uncertainty reports one
/// (uncertainty/monte_carlo.hpp), its numbers chosen by the test: u = 1.23 um, the shortest
/// interval widened by 0.4 um at both ends (twice an ambiguity of 0.2 um), a length error.
MonteCarloSummary position_study(double value) {
  MonteCarloSummary s;
  s.status = MonteCarloStatus::converged;
  s.message = "12 trials (fixed), seed 7";
  s.seed = 7;
  s.trials = 12;
  s.coverage = 0.95;
  s.probing = ProbingModel::sigma;
  s.feature_sigma = {0.0012};
  s.length_error = LengthError{0.0015, 333.0};
  s.length = 120.5;
  s.warm_fits = 96;
  s.warm_descents = 40;
  s.warm_restarts = 1;
  CharacteristicUncertainty c;
  c.id = "P2/position";
  c.value = value;
  c.statistics.mean = 0.0514;
  c.statistics.standard_uncertainty = 0.00123;
  c.statistics.symmetric = {0.0491, 0.0536};
  c.statistics.shortest = {0.0493, 0.0537};
  c.statistics.trials = 12;
  c.ambiguity = 0.0002;
  c.ambiguity_range = 0.0004;
  c.interval = {0.0489, 0.0541};
  c.tie_breaking = true;
  c.note = "interval widened by 0.0004 mm over equally good axes";
  s.characteristics.push_back(c);
  s.warnings.push_back("study <warning> & more");
  return s;
}

/// A probing prediction for the bore (forecast/probing_advice.hpp), numbers chosen by the test.
ProbingPrediction bore_prediction() {
  ProbingPrediction p;
  p.pattern.section_heights = {-2.0, -30.0, -58.0};
  p.pattern.points_per_section = 8;
  p.pattern.arc_deg = 360.0;
  p.probing_sigma = 0.001;
  p.trials = 2000;
  p.top = {-2.0, 0.0011, 0.0009, {0.0021, 0.0011, 0.0040}};
  p.bottom = {-58.0, 0.0013, 0.0012, {0.0025, 0.0013, 0.0047}};
  p.full_depth = {0.0030, 0.0014, 0.0056};
  p.perpendicularity = {0.0012, 0.0006, 0.0024};
  p.u_tilt = 3.2e-5;
  p.magnification = 1.07;
  p.position = {stated, 0.0042, 0.0042 / stated, false};
  p.meets_target = false;
  return p;
}

/// The tilted bore decided by the ISO 14253-1 rule with the study's U, with its prediction.
struct StudiedPart {
  PartCheckResult result;
  ReportModel model;
};

void make_studied(StudiedPart& part) {
  part.result = tilted_bore_result();
  const MonteCarloSummary study = position_study(part.result.bores.front().position->value);
  DecisionRule rule;
  rule.kind = DecisionRuleKind::iso_14253_1;
  decide_with_study(part.result.characteristics, study, rule);
  part.result.verdict = combine(part.result.characteristics);
  part.model = make_report_model(part.result);
  part.model.uncertainty = study;
  part.model.bores.front().probing_prediction = bore_prediction();
}

}  // namespace

TEST_CASE("HTML: the uncertainty study, the rule in force with its limits, the prediction") {
  StudiedPart part;
  make_studied(part);
  const ReportModel& m = part.model;
  const std::string html = format_html(m);
  // The study's section, once, with how it was run (the model's own numbers).
  REQUIRE(occurrences(html, "<section id=\"uncertainty\"") == 1);
  const std::string study = between(html, "<section id=\"uncertainty\"", "</section>");
  CHECK(study.find("JCGM 101:2008") != std::string::npos);
  CHECK(study.find("data-trials=\"12\" data-seed=\"7\"") != std::string::npos);
  CHECK(study.find("<tr><th>trials</th><td>12 (fixed)</td></tr>") != std::string::npos);
  CHECK(study.find("<tr><th>seed</th><td>7</td></tr>") != std::string::npos);
  CHECK(study.find("96 fits of the trials started from the unperturbed ones: 40 Chebyshev fits "
                   "descended from there (their contacts changed), 1 solved again from their "
                   "own start") != std::string::npos);
  CHECK(study.find("converged: 12 trials (fixed), seed 7") != std::string::npos);
  CHECK(study.find("E = A + L/K, A 0.0015 mm, K 333.0, L 120.5000 mm") != std::string::npos);
  CHECK(study.find("<tr><td>bore P2</td><td class=\"num\">0.001200</td></tr>") !=
        std::string::npos);
  // Per characteristic: value, u, U (k), the interval and its kind, the widening, the note.
  // U = k u + the widening over equally good axes (docs/uncertainty.md, "Decisions"), recomputed
  // here: 2 x 0.00123 + 0.0004 = 0.00286, 0.0029 at the report's four decimals.
  const Characteristic* position = m.find("P2/position");
  REQUIRE(position);
  REQUIRE(position->uncertainty);
  CHECK(position->uncertainty->expanded == Approx(2 * 0.00123 + 0.0004).margin(1e-15));
  const std::string row = between(study, "<tr data-id=\"P2/position\">", "</tr>");
  const double value = 2 * bottom_offset.norm();  // the test's own axis: 2 |offset at bottom|
  CHECK(row.find("<td class=\"num\">" + ReportUnits::fixed(value, 4) + "</td>") !=
        std::string::npos);
  CHECK(row.find("<td class=\"num\">0.001230</td>") != std::string::npos);
  CHECK(row.find("0.0029 (2.00)") != std::string::npos);
  CHECK(row.find("[0.048900, 0.054100]") != std::string::npos);
  CHECK(row.find("<td>shortest</td>") != std::string::npos);
  CHECK(row.find("<td class=\"num\">0.000400 !</td>") != std::string::npos);
  CHECK(study.find("<li data-id=\"P2/position\">P2/position: <strong>! tie-breaking:</strong>") !=
        std::string::npos);
  CHECK(study.find("axes as much as the part; interval widened by 0.0004 mm") != std::string::npos);
  CHECK(study.find("study &lt;warning&gt; &amp; more") != std::string::npos);
  // The rule in force beside the part verdict, and each row's limits in the bore's table:
  // ISO 14253-1:2017 (from memory) accepts at or inside allowed - U and rejects beyond
  // allowed + U, recomputed from the test's tolerance and bonus.
  const std::string header = between(html, "<header>", "</header>");
  CHECK(header.find("Decision rule in force: <strong>ISO 14253-1</strong>") != std::string::npos);
  const double allowed = stated + bonus, expanded = 2 * 0.00123 + 0.0004;
  const std::string bore = between(html, "<section class=\"bore\"", "</section>");
  CHECK(bore.find("accept &lt;= " + ReportUnits::fixed(allowed - expanded, 4) + ", reject &gt; " +
                  ReportUnits::fixed(allowed + expanded, 4)) != std::string::npos);
  // The top view draws both limits as rings at the stated magnification: radius = limit / 2 x M.
  const std::string top = between(html, "<figure class=\"top-view\"", "</figure>");
  const double magnification = attribute(top, "<figure", "data-magnification");
  CHECK(attribute(top, "class=\"limit-accept\"", "r") ==
        Approx((allowed - expanded) / 2 * magnification).margin(0.005));  // 0.01 mm of paper
  CHECK(attribute(top, "class=\"limit-reject\"", "r") ==
        Approx((allowed + expanded) / 2 * magnification).margin(0.005));
  CHECK(top.find("accept \u00d8" + ReportUnits::fixed(allowed - expanded, 4) + ", reject \u00d8" +
                 ReportUnits::fixed(allowed + expanded, 4) + " (ISO 14253-1)") !=
        std::string::npos);
  // The prediction, one table in the bore's section: the pattern, U and its share recomputed.
  CHECK(occurrences(html, "<table class=\"prediction\"") == 1);
  const std::string prediction = between(bore, "<table class=\"prediction\"", "</table>");
  CHECK(bore.find("<strong>Probing prediction</strong> for the pattern probed: 3 sections \u00d7 "
                  "8 points over 360\u00b0, probing sigma 0.001000 mm, 2000 trials.") !=
        std::string::npos);
  CHECK(prediction.find("<td class=\"num\">0.0042</td><td class=\"num\">" +
                        ReportUnits::fixed(100.0 * 0.0042 / stated, 1) +
                        "</td><td><strong>not met</strong>") != std::string::npos);
  CHECK(bore.find("0.001100 at the top (z \u22122.00), 0.001300 at the bottom (z \u221258.00), "
                  "tilt 32.0 \u00b5rad") != std::string::npos);
  // Verdicts still in words, the caution top and foot, nothing scripted.
  CHECK(html.find("\u2718 does not conform") != std::string::npos);
  CHECK(occurrences(html, std::string(safety_caution)) == 2);
  CHECK(html.find("<script") == std::string::npos);
}

TEST_CASE("HTML without a study, a rule or a prediction has none of their parts") {
  const std::string html = format_html(make_report_model(tilted_bore_result()));
  CHECK(html.find("id=\"uncertainty\"") == std::string::npos);
  CHECK(html.find("Decision rule in force") == std::string::npos);
  CHECK(html.find("class=\"prediction\"") == std::string::npos);
  CHECK(html.find("limit-accept") == std::string::npos);
}

TEST_CASE("JSON reader: the study and the prediction read back render the same HTML and CSV") {
  StudiedPart part;
  make_studied(part);
  const ReportModel& m = part.model;
  const ReportModel back = read_report_json(format_json(m), "report.json");
  REQUIRE(back.uncertainty);
  const MonteCarloSummary& a = *m.uncertainty;
  const MonteCarloSummary& b = *back.uncertainty;
  CHECK(b.status == a.status);
  CHECK(b.message == a.message);
  CHECK(b.seed == a.seed);
  CHECK(b.trials == a.trials);
  CHECK(b.coverage == a.coverage);
  CHECK(b.feature_sigma == a.feature_sigma);  // mm: shortest round-trip decimals
  REQUIRE(b.length_error);
  CHECK(b.length_error->a == a.length_error->a);
  CHECK(b.length_error->k == a.length_error->k);
  CHECK(b.length == a.length);
  CHECK(b.warm_fits == a.warm_fits);
  CHECK(b.warm_descents == a.warm_descents);
  CHECK(b.warm_restarts == a.warm_restarts);
  REQUIRE(b.characteristics.size() == 1);
  const CharacteristicUncertainty& ca = a.characteristics.front();
  const CharacteristicUncertainty& cb = b.characteristics.front();
  CHECK(cb.id == ca.id);
  CHECK(cb.statistics.standard_uncertainty == ca.statistics.standard_uncertainty);
  CHECK(cb.interval.low == ca.interval.low);
  CHECK(cb.interval.high == ca.interval.high);
  CHECK(cb.statistics.shortest.low == ca.statistics.shortest.low);
  CHECK(cb.statistics.symmetric.high == ca.statistics.symmetric.high);
  CHECK(cb.ambiguity_range == ca.ambiguity_range);
  CHECK(cb.tie_breaking == ca.tie_breaking);
  CHECK(cb.note == ca.note);
  REQUIRE(back.bores.front().probing_prediction);
  const ProbingPrediction& pa = *m.bores.front().probing_prediction;
  const ProbingPrediction& pb = *back.bores.front().probing_prediction;
  CHECK(pb.pattern.section_heights == pa.pattern.section_heights);
  CHECK(pb.pattern.points_per_section == pa.pattern.points_per_section);
  CHECK(pb.position.expanded == pa.position.expanded);
  CHECK(pb.position.share == pa.position.share);
  CHECK(pb.u_tilt == Approx(pa.u_tilt).epsilon(1e-14));  // written in urad
  CHECK(pb.bottom.u_y == pa.bottom.u_y);
  // The same study section, prediction table, rule line and CSV from the model read back.
  const std::string html = format_html(m), html_back = format_html(back);
  for (const auto& [from, to] : {std::pair<std::string, std::string>{"<section id=\"uncertainty\"",
                                                                     "</section>"},
                                 {"<table class=\"prediction\"", "</p>"},
                                 {"<p class=\"decision-rule\">", "</p>"}})
    CHECK(between(html_back, from, to) == between(html, from, to));
  CHECK(format_csv(back) == format_csv(m));

  // A broken entry is refused with its JSON path.
  std::string broken = format_json(m);
  broken.replace(broken.find("\"probing_model\": \"sigma\""), 24, "\"probing_model\": \"guess\"");
  CHECK_THROWS_WITH(read_report_json(broken, "r.json"),
                    Catch::Matchers::Contains("uncertainty.probing_model") &&
                        Catch::Matchers::Contains("unknown probing model"));
  std::string total = format_json(m);
  total.replace(total.find("\"total_points\": 24"), 18, "\"total_points\": 25");
  CHECK_THROWS_WITH(read_report_json(total, "r.json"),
                    Catch::Matchers::Contains("probing_prediction.pattern.total_points"));
}

TEST_CASE("CSV: the probing prediction's columns appended last, only when it ran") {
  StudiedPart part;
  make_studied(part);
  const std::string csv = format_csv(part.model);
  const std::string header = csv.substr(0, csv.find('\n'));
  // After the study's columns (docs/report-schema.md), at the end.
  const std::string tail =
      ",u,interval_low,interval_high,prediction_status,prediction_sections,"
      "prediction_points_per_section,prediction_arc_deg,prediction_sigma,"
      "prediction_position_expanded,prediction_position_share,"
      "prediction_perpendicularity_expanded,prediction_perpendicularity_share,"
      "prediction_meets_target";
  CHECK(header.size() >= tail.size());
  CHECK(header.compare(header.size() - tail.size(), tail.size(), tail) == 0);
  // The row of P2/position: the model's own numbers, the share recomputed as U / tolerance.
  const std::size_t at = csv.find(",P2/position,");
  REQUIRE(at != std::string::npos);
  const std::string row = csv.substr(at, csv.find('\n', at) - at);
  CHECK(row.find(",predicted,3,8,360.0,0.001000,0.0042," +
                 ReportUnits::fixed(100.0 * 0.0042 / stated, 1) + ",,,no") !=
        std::string::npos);
  // Without a prediction the columns are absent (the report keeps its columns exactly).
  const std::string plain = format_csv(make_report_model(tilted_bore_result()));
  CHECK(plain.find("prediction_") == std::string::npos);
}
