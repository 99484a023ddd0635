// The HTML report (report.hpp, format_html): the report model for people who read, print and
// sign it. One self-contained HTML5 document: inline CSS and inline SVG, no script, nothing
// fetched. Every text from the model is escaped. docs/html-report.md explains the figures.
//
// Figures are drawn in millimetres of paper: each SVG's width and height are given in mm and its
// user unit is 1 mm, so a stated magnification holds on paper printed at 100 % (and on a screen
// at 100 % zoom, where CSS defines 1 mm as 96/25.4 px; CSS Values and Units Level 3, 5.2).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/report/report.hpp"
#include "report/detail/html_page.hpp"

namespace cylzone {
// The page frame, style and figure helpers are shared with the audit's page (audit_html.cpp)
// through report/detail/html_page.hpp; the rest stays private to this file.
namespace html {

// ------------------------------------------------------------------ text

/// `text` safe in HTML element content and in double-quoted attribute values, the only kind
/// this renderer writes (HTML Living Standard, 13.1.2.6 and 13.5: `&`, `<`, `>` and `"` as
/// character references; from memory for the clause numbers). Control characters other than
/// tab and line feed are dropped: they are not allowed in HTML text.
std::string esc(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      default:
        if ((static_cast<unsigned char>(c) < 0x20 && c != '\t' && c != '\n') || c == 0x7f) break;
        out += c;
    }
  }
  return out;
}

/// Fixed-point text of a coordinate on paper (mm, 0.01 mm is far below a printer's dot).
std::string at(double mm) { return ReportUnits::fixed(mm, 2); }

/// A minus sign as U+2212 in figure labels (typographic; ASCII '-' in tables stays); none for a
/// value that rounds to zero ("-0.00" is "0.00").
std::string signed_text(const std::string& fixed) {
  if (fixed.empty() || fixed[0] != '-') return fixed;
  if (fixed.find_first_not_of("-0.") == std::string::npos) return fixed.substr(1);
  return "\u2212" + fixed.substr(1);
}

/// Micrometres from millimetres, with `decimals`.
std::string micrometres(double mm, int decimals) {
  return signed_text(ReportUnits::fixed(mm * 1000.0, decimals));
}

/// A height in the report's unit for figure labels (2 decimals in mm, 3 in inch).
std::string height_text(const ReportUnits& u, double mm) {
  return signed_text(ReportUnits::fixed(u.length(mm), u.decimals() - 2));
}

// ------------------------------------------------------------------ scales

/// The largest of 1, 2, 5 x 10^k not above `x` (> 0): magnifications and scale bars are stated
/// in round numbers, the series of the enlargement scales of technical drawings (ISO 5455:1979,
/// 2:1, 5:1, 10:1, ...; from memory).
double nice_floor(double x) {
  const double decade = std::pow(10.0, std::floor(std::log10(x)));
  for (double m : {5.0, 2.0, 1.0})
    if (m * decade <= x * (1.0 + 1e-12)) return m * decade;
  return decade;
}

/// The smallest of 1, 2, 5 x 10^k not below `x` (> 0).
double nice_ceil(double x) {
  const double decade = std::pow(10.0, std::floor(std::log10(x)));
  for (double m : {1.0, 2.0, 5.0, 10.0})
    if (m * decade >= x * (1.0 - 1e-12)) return m * decade;
  return 10.0 * decade;
}

/// "1000 : 1", or "1 : 5" below 1.
std::string ratio_text(double scale) {
  const auto whole = [](double v) {
    return ReportUnits::fixed(v, std::abs(v - std::round(v)) < 1e-9 ? 0 : 2);
  };
  return scale >= 1.0 ? whole(scale) + " : 1" : "1 : " + whole(1.0 / scale);
}

struct Rgb {
  double r, g, b;
};

/// The cividis colour map (J. R. Nuñez, C. R. Anderton, R. S. Renslow, "Optimizing colormaps
/// with consideration for color vision deficiency to enable accurate interpretation of
/// scientific data", PLOS ONE 13(7): e0199239, 2018): every 8th entry of the authors' 256-entry
/// sRGB table (and the last), interpolated linearly between them (within 0.018 of the table).
/// Its lightness rises monotonically from dark blue through grey to yellow, so it reads the same
/// to viewers with red-green colour-vision deficiency and in black-and-white print.
Rgb cividis(double t) {
  static constexpr double table[][3] = {
      {0.0000, 0.1262, 0.3015}, {0.0000, 0.1492, 0.3537}, {0.0000, 0.1714, 0.4102},
      {0.0000, 0.1901, 0.4365}, {0.0236, 0.2130, 0.4314}, {0.1204, 0.2357, 0.4262},
      {0.1752, 0.2583, 0.4224}, {0.2183, 0.2808, 0.4204}, {0.2556, 0.3032, 0.4201},
      {0.2894, 0.3256, 0.4215}, {0.3209, 0.3481, 0.4244}, {0.3509, 0.3706, 0.4288},
      {0.3798, 0.3933, 0.4346}, {0.4080, 0.4161, 0.4419}, {0.4354, 0.4390, 0.4508},
      {0.4622, 0.4622, 0.4620}, {0.4897, 0.4856, 0.4714}, {0.5196, 0.5095, 0.4737},
      {0.5502, 0.5338, 0.4735}, {0.5813, 0.5584, 0.4714}, {0.6129, 0.5835, 0.4673},
      {0.6449, 0.6089, 0.4617}, {0.6773, 0.6347, 0.4543}, {0.7101, 0.6610, 0.4450},
      {0.7434, 0.6877, 0.4338}, {0.7771, 0.7150, 0.4205}, {0.8114, 0.7427, 0.4049},
      {0.8461, 0.7710, 0.3869}, {0.8813, 0.7998, 0.3657}, {0.9172, 0.8293, 0.3409},
      {0.9536, 0.8593, 0.3116}, {0.9907, 0.8901, 0.2759}, {1.0000, 0.9169, 0.2731}};
  // Table entry k sits at index 8k of the 256 (0..255), the last at 255.
  const double index = std::clamp(t, 0.0, 1.0) * 255.0;
  std::size_t k = std::min<std::size_t>(static_cast<std::size_t>(index / 8.0), 31);
  const double lo = 8.0 * static_cast<double>(k);
  const double hi = k == 31 ? 255.0 : lo + 8.0;
  const double f = std::clamp((index - lo) / (hi - lo), 0.0, 1.0);
  return {table[k][0] + f * (table[k + 1][0] - table[k][0]),
          table[k][1] + f * (table[k + 1][1] - table[k][1]),
          table[k][2] + f * (table[k + 1][2] - table[k][2])};
}

std::string hex(const Rgb& c) {
  const auto byte = [](double v) {
    return static_cast<unsigned>(std::lround(std::clamp(v, 0.0, 1.0) * 255.0));
  };
  char buffer[8];
  std::snprintf(buffer, sizeof buffer, "#%02x%02x%02x", byte(c.r), byte(c.g), byte(c.b));
  return buffer;
}

// ------------------------------------------------------------------ verdicts

/// Words and a symbol, never colour alone: "✔ conforms", "✘ does not conform", "? not proven";
/// with the style class that frames it (thin solid, thick solid, dashed).
struct VerdictMark {
  const char* text;
  const char* style;
};

VerdictMark verdict_mark(Verdict v) {
  switch (v) {
    case Verdict::conforms:
      return {"\u2714 conforms", "v-ok"};
    case Verdict::does_not_conform:
      return {"\u2718 does not conform", "v-fail"};
    case Verdict::not_proven:
      break;
  }
  return {"? not proven", "v-open"};
}

std::string verdict_span(Verdict v) {
  const VerdictMark mark = verdict_mark(v);
  return std::string("<span class=\"verdict ") + mark.style + "\">" + mark.text + "</span>";
}

// ------------------------------------------------------------------ figures

ZoneSizes zone_sizes(const ReportModel& m, const DepthProfile& d) {
  ZoneSizes z;
  z.allowed = d.allowed;
  const Characteristic* c = m.find(d.characteristic_id);
  z.stated = c ? c->tolerance : d.allowed;
  return z;
}

/// The largest radial deviation the figures must show: the zone or the axis, whichever is wider.
double figure_extent(const DepthProfile& d, const ZoneSizes& z) {
  double e = std::max(z.allowed, z.stated) / 2.0;
  for (const AxisDeviation& s : d.samples) e = std::max(e, s.radial());
  return e > 0.0 ? e : 1e-3;
}

/// Round magnification so that `extent` (mm of the part) fits in `room` (mm of paper).
double magnification_for(double extent, double room) { return nice_floor(room / extent); }

/// A scale bar of a round number of micrometres about `target` mm long on paper.
double scale_bar_um(double magnification, double target) {
  return nice_floor(target / magnification * 1000.0);
}

void scale_bar(std::ostream& out, double x, double y, double magnification, double target) {
  const double um = scale_bar_um(magnification, target);
  const double length = um / 1000.0 * magnification;
  out << "<g class=\"scale-bar\" data-um=\"" << ReportUnits::fixed(um, um < 1 ? 2 : 0)
      << "\"><path d=\"M" << at(x) << ' ' << at(y - 1) << "v1h" << at(length) << "v-1\" "
      << "fill=\"none\" stroke=\"#000\" stroke-width=\"0.35\"/>"
      << "<text x=\"" << at(x + length / 2) << "\" y=\"" << at(y - 1.6)
      << "\" text-anchor=\"middle\">" << ReportUnits::fixed(um, um < 1 ? 2 : 0)
      << " \u00b5m</text></g>";
}

/// Cross marker of the exit point (the "×" reads in black and white).
void exit_marker(std::ostream& out, double x, double y, double z_mm) {
  out << "<g class=\"exit\" data-z=\"" << ReportUnits::fixed(z_mm, 4) << "\" data-x=\"" << at(x)
      << "\" data-y=\"" << at(y) << "\"><path d=\"M" << at(x - 1.3) << ' ' << at(y - 1.3)
      << "l2.6 2.6m0 -2.6l-2.6 2.6\" "
      << "stroke=\"#000\" stroke-width=\"0.6\"/><circle cx=\"" << at(x) << "\" cy=\"" << at(y)
      << "\" r=\"1.9\" fill=\"none\" stroke=\"#000\" stroke-width=\"0.25\"/></g>";
}

constexpr const char* svg_open =
    "<svg xmlns=\"http://www.w3.org/2000/svg\" font-family=\"DejaVu Sans, Arial, sans-serif\" "
    "font-size=\"2.5\" ";

/// Top view of the position zone, looking along the nominal direction into the bore (x to the
/// right, y up): the allowed zone, the stated zone, the axis from mouth to bottom.
void top_view(std::ostream& out, const ReportModel& m, const BoreSummary& b,
              const DepthProfile& d) {
  const ZoneSizes z = zone_sizes(m, d);
  // The decision rule's limits as rings about the zone when a rule other than simple acceptance
  // decided the position (ISO 14253-1 or a guard band): conformance is proven while the axis
  // stays inside the inner ring over the whole range, non-conformance once it passes the outer.
  const Characteristic* decided = m.find(d.characteristic_id);
  const bool guarded = decided && decided->not_evaluated.empty() &&
                       decided->rule != DecisionRuleKind::simple_acceptance &&
                       decided->comparison == Comparison::at_most &&
                       std::abs(decided->rejection_limit - decided->acceptance_limit) > 1e-12;
  constexpr double width = 72.0, cx = 36.0, cy = 31.0, room = 26.0;
  const double height = guarded ? 88.0 : 84.0;
  const double extent = std::max(figure_extent(d, z),
                                 guarded ? decided->rejection_limit / 2.0 : 0.0);
  const double magnification = magnification_for(extent, room);
  const auto px = [&](const AxisDeviation& s) { return cx + s.offset.x() * magnification; };
  const auto py = [&](const AxisDeviation& s) { return cy - s.offset.y() * magnification; };
  out << "<figure class=\"top-view\" data-magnification=\"" << ReportUnits::fixed(magnification, 0)
      << "\" data-scale-bar-um=\"" << ReportUnits::fixed(scale_bar_um(magnification, 12.0), 2)
      << "\">";
  out << svg_open << "width=\"" << width << "mm\" height=\"" << height << "mm\" viewBox=\"0 0 "
      << width << ' ' << height << "\" role=\"img\" aria-label=\"top view of the position zone\">";
  // Cross-hairs through the true position.
  out << "<path d=\"M" << at(cx - room - 2) << ' ' << at(cy) << "H" << at(cx + room + 2) << "M"
      << at(cx) << ' ' << at(cy + room + 2) << "V" << at(cy - room - 2)
      << "\" stroke=\"#777\" stroke-width=\"0.15\"/>"
      << "<text x=\"" << at(cx + room + 2.5) << "\" y=\"" << at(cy + 0.9) << "\">+x</text>"
      << "<text x=\"" << at(cx + 1) << "\" y=\"" << at(cy - room - 2.5) << "\">+y</text>";
  // Zones: allowed (with bonus) solid and lightly filled; stated dashed when a bonus widens it.
  out << "<circle class=\"zone-allowed\" cx=\"" << at(cx) << "\" cy=\"" << at(cy) << "\" r=\""
      << at(z.allowed / 2 * magnification)
      << "\" fill=\"#eeeeee\" stroke=\"#000\" stroke-width=\"0.5\"/>";
  if (std::abs(z.allowed - z.stated) > 1e-12)
    out << "<circle class=\"zone-stated\" cx=\"" << at(cx) << "\" cy=\"" << at(cy) << "\" r=\""
        << at(z.stated / 2 * magnification)
        << "\" fill=\"none\" stroke=\"#000\" stroke-width=\"0.3\" stroke-dasharray=\"1.2 0.8\"/>";
  if (guarded)
    for (const auto& [kind, limit] : {std::pair<const char*, double>{"accept",
                                                                     decided->acceptance_limit},
                                      {"reject", decided->rejection_limit}})
      if (limit > 0.0)
        out << "<circle class=\"limit-" << kind << "\" cx=\"" << at(cx) << "\" cy=\"" << at(cy)
            << "\" r=\"" << at(limit / 2 * magnification)
            << "\" fill=\"none\" stroke=\"#000\" stroke-width=\"0.25\" "
               "stroke-dasharray=\"0.3 0.6\"/>";
  // The axis from the top of the range to the bottom, with a mark at every sampled height.
  if (!d.samples.empty()) {
    out << "<polyline class=\"axis-trace\" fill=\"none\" stroke=\"#000\" stroke-width=\"0.6\" "
           "points=\"";
    for (const AxisDeviation& s : d.samples) out << at(px(s)) << ',' << at(py(s)) << ' ';
    out << "\"/>";
    for (std::size_t k = 1; k + 1 < d.samples.size(); ++k)
      out << "<circle class=\"depth-mark\" cx=\"" << at(px(d.samples[k])) << "\" cy=\""
          << at(py(d.samples[k])) << "\" r=\"0.45\" fill=\"#fff\" stroke=\"#000\" "
          << "stroke-width=\"0.2\"/>";
    const AxisDeviation& top = d.samples.front();
    const AxisDeviation& bottom = d.samples.back();
    out << "<circle class=\"mouth\" cx=\"" << at(px(top)) << "\" cy=\"" << at(py(top))
        << "\" r=\"1.1\" fill=\"#fff\" stroke=\"#000\" stroke-width=\"0.35\"/>"
        << "<rect class=\"bottom\" x=\"" << at(px(bottom) - 1) << "\" y=\"" << at(py(bottom) - 1)
        << "\" width=\"2\" height=\"2\" fill=\"#000\"/>";
  }
  if (d.exit) exit_marker(out, px(*d.exit), py(*d.exit), d.exit->height);
  // Scale bar, magnification, legend.
  scale_bar(out, 4.0, 65.0, magnification, 12.0);
  out << "<text x=\"" << at(width - 2) << "\" y=\"64\" text-anchor=\"end\">magnification "
      << ratio_text(magnification) << "</text>";
  const ReportUnits& u = m.units;
  out << "<g class=\"legend\">"
      << "<circle cx=\"5\" cy=\"69\" r=\"1.1\" fill=\"#fff\" stroke=\"#000\" "
         "stroke-width=\"0.35\"/>"
      << "<text x=\"9\" y=\"69.9\">top z = "
      << height_text(u, d.samples.empty() ? d.range_top : d.samples.front().height)
      << "</text><rect x=\"38\" y=\"68\" width=\"2\" height=\"2\" fill=\"#000\"/>"
      << "<text x=\"42\" y=\"69.9\">bottom z = "
      << height_text(u, d.samples.empty() ? d.range_bottom : d.samples.back().height) << "</text>"
      << "<path d=\"M2.5 73h5\" stroke=\"#000\" stroke-width=\"0.5\"/><text x=\"9\" "
         "y=\"73.9\">zone \u00d8"
      << u.text(z.allowed) << (std::abs(z.allowed - z.stated) > 1e-12 ? " with bonus" : "")
      << "</text>";
  if (std::abs(z.allowed - z.stated) > 1e-12)
    out << "<path d=\"M2.5 77h5\" stroke=\"#000\" stroke-width=\"0.3\" stroke-dasharray=\"1.2 "
           "0.8\"/>"
        << "<text x=\"9\" y=\"77.9\">stated zone \u00d8" << u.text(z.stated) << "</text>";
  if (d.exit)
    out << "<path d=\"M3.7 79.7l2.6 2.6m0 -2.6l-2.6 2.6\" stroke=\"#000\" stroke-width=\"0.5\"/>"
        << "<text x=\"9\" y=\"81.9\">leaves the zone at z = " << height_text(u, d.exit->height)
        << "</text>";
  if (guarded)
    out << "<path d=\"M2.5 85h5\" stroke=\"#000\" stroke-width=\"0.25\" stroke-dasharray=\"0.3 "
           "0.6\"/><text class=\"limits\" x=\"9\" y=\"85.9\">accept \u00d8"
        << u.text(decided->acceptance_limit) << ", reject \u00d8" << u.text(decided->rejection_limit)
        << " (" << esc(decision_rule_name(decided->rule)) << ")</text>";
  out << "</g></svg>";
  // Where the dots are: the section centres of a median line, else evenly spaced heights.
  std::string dots = "dots at the section centres";
  if (b.axis_method != "median-line" && d.samples.size() > 2)
    dots = "dots every " +
           ReportUnits::fixed(u.length(std::abs(d.samples[1].height - d.samples[0].height)),
                              u.decimals() - 2) +
           " " + std::string(u.name()) + " of depth";
  out << "<figcaption>Top view into the bore (x right, y up): the axis from the top of the "
         "evaluated range (\u25cb) to its bottom (\u25a0), "
      << dots << ", inside the position zone"
      << (guarded ? "; dotted rings: the decision rule's acceptance (inner) and rejection (outer) "
                    "limits"
                  : "")
      << ". Deviations magnified " << ratio_text(magnification)
      << " on paper printed at 100 %.</figcaption></figure>";
}

/// Side views along the depth: the zone's walls and the axis in the x–z and y–z planes, and its
/// radial distance from the true-position axis (a cylindrical zone is left where that distance
/// passes the radius, which one plane alone may not show).
void side_views(std::ostream& out, const ReportModel& m, const BoreSummary& b,
                const DepthProfile& d) {
  side_views(out, m.units, zone_sizes(m, d), b.probed_top, b.probed_bottom, d, {});
}

void side_views(std::ostream& out, const ReportUnits& u, const ZoneSizes& z, double probed_top_h,
                double probed_bottom_h, const DepthProfile& d,
                const std::vector<SideViewMark>& marks) {
  constexpr double width = 110.0, top_y = 10.0, room_y = 64.0, panel_w = 28.0, half = 13.5,
                   left = 13.0, gap = 2.5;
  const double upper = std::max(d.range_top, d.range_bottom);
  const double lower = std::min(d.range_top, d.range_bottom);
  const double span = upper - lower;
  const double depth_scale = span > 0.0 ? nice_floor(room_y / span) : 1.0;
  const double magnification = magnification_for(figure_extent(d, z), half);
  const auto y_of = [&](double h) { return top_y + (upper - h) * depth_scale; };
  const double bottom_y = y_of(lower);
  const double height = bottom_y + 15.0;
  out << "<figure class=\"side-view\" data-magnification=\"" << ReportUnits::fixed(magnification, 0)
      << "\" data-depth-scale=\"" << ReportUnits::fixed(depth_scale, 3) << "\">";
  out << svg_open << "width=\"" << width << "mm\" height=\"" << height << "mm\" viewBox=\"0 0 "
      << width << ' ' << height << "\" role=\"img\" aria-label=\"side views of the axis along "
      << "the depth\">";
  // Depth ticks at round heights, labelled at the left.
  const double tick = span > 0.0 ? nice_ceil(span / 6.0) : 1.0;
  for (double h = std::ceil(lower / tick) * tick; h <= upper + 1e-9; h += tick)
    out << "<path d=\"M" << at(left - 1.5) << ' ' << at(y_of(h)) << "h1.5\" stroke=\"#000\" "
        << "stroke-width=\"0.2\"/><text x=\"" << at(left - 2) << "\" y=\"" << at(y_of(h) + 0.9)
        << "\" text-anchor=\"end\">" << height_text(u, h) << "</text>";
  out << "<text x=\"2\" y=\"" << at(top_y - 4) << "\">z</text>";
  // Three panels: dx, dy (centred on the true-position axis) and radial distance (from it).
  struct Panel {
    const char* title;
    bool radial;
    int component;
  };
  const Panel panels[] = {{"dx (x\u2013z plane)", false, 0},
                          {"dy (y\u2013z plane)", false, 1},
                          {"radial distance", true, 0}};
  const auto value = [](const AxisDeviation& s, const Panel& p) {
    return p.radial ? s.radial() : s.offset[p.component];
  };
  for (std::size_t k = 0; k < 3; ++k) {
    const Panel& p = panels[k];
    const double x0 = left + static_cast<double>(k) * (panel_w + gap);
    const double origin = p.radial ? x0 + 1.0 : x0 + panel_w / 2;
    const auto x_of = [&](double v) { return origin + v * magnification; };
    out << "<g class=\"panel\" data-plane=\""
        << (p.radial ? "radial"
            : k == 0 ? "x"
                     : "y")
        << "\"><rect x=\"" << at(x0) << "\" y=\"" << at(top_y) << "\" width=\"" << at(panel_w)
        << "\" height=\"" << at(bottom_y - top_y) << "\" fill=\"none\" stroke=\"#999\" "
        << "stroke-width=\"0.15\"/><text x=\"" << at(x0 + panel_w / 2) << "\" y=\""
        << at(top_y - 1.5) << "\" text-anchor=\"middle\">" << p.title << "</text>";
    // The true-position axis (dash-dot, the drafting line for a centre line).
    out << "<path d=\"M" << at(origin) << ' ' << at(top_y) << "V" << at(bottom_y)
        << "\" stroke=\"#555\" stroke-width=\"0.2\" stroke-dasharray=\"3 0.8 0.6 0.8\"/>";
    // The zone's walls: allowed solid, stated dashed.
    for (double sign : p.radial ? std::vector<double>{1.0} : std::vector<double>{-1.0, 1.0}) {
      out << "<path class=\"wall\" d=\"M" << at(x_of(sign * z.allowed / 2)) << ' ' << at(top_y)
          << "V" << at(bottom_y) << "\" stroke=\"#000\" stroke-width=\"0.5\"/>";
      if (std::abs(z.allowed - z.stated) > 1e-12)
        out << "<path class=\"wall-stated\" d=\"M" << at(x_of(sign * z.stated / 2)) << ' '
            << at(top_y) << "V" << at(bottom_y) << "\" stroke=\"#000\" stroke-width=\"0.3\" "
            << "stroke-dasharray=\"1.2 0.8\"/>";
    }
    // The axis: its offsets are affine between samples, so the radial distance (not affine) is
    // drawn through intermediate heights interpolated between them.
    if (!d.samples.empty()) {
      out << "<polyline class=\"axis-trace\" fill=\"none\" stroke=\"#000\" stroke-width=\"0.6\" "
             "points=\"";
      for (std::size_t i = 0; i < d.samples.size(); ++i) {
        const AxisDeviation& s = d.samples[i];
        out << at(x_of(value(s, p))) << ',' << at(y_of(s.height)) << ' ';
        if (!p.radial || i + 1 == d.samples.size()) continue;
        const AxisDeviation& n = d.samples[i + 1];
        for (int j = 1; j < 8; ++j) {
          const double t = j / 8.0;
          const AxisDeviation between{s.height + t * (n.height - s.height),
                                      s.offset + t * (n.offset - s.offset)};
          out << at(x_of(value(between, p))) << ',' << at(y_of(between.height)) << ' ';
        }
      }
      out << "\"/>";
    }
    if (d.exit) exit_marker(out, x_of(value(*d.exit, p)), y_of(d.exit->height), d.exit->height);
    // Another system's centre at its plane: an open diamond.
    for (const SideViewMark& mark : marks) {
      const double x = x_of(value(mark.deviation, p)), y = y_of(mark.deviation.height);
      out << "<path class=\"mark\" d=\"M" << at(x) << ' ' << at(y - 1.4) << "l1.4 1.4l-1.4 1.4"
          << "l-1.4 -1.4z\" fill=\"#fff\" stroke=\"#000\" stroke-width=\"0.35\"/>";
    }
    out << "</g>";
  }
  // Datum A and the exit height across all panels.
  const double right = left + 3 * panel_w + 2 * gap;
  if (upper >= 0.0 && lower <= 0.0)
    out << "<path d=\"M" << at(left) << ' ' << at(y_of(0.0)) << "H" << at(right)
        << "\" stroke=\"#000\" stroke-width=\"0.25\"/><text x=\"" << at(right + 0.8) << "\" y=\""
        << at(y_of(0.0) + 0.9) << "\">A</text>";
  for (const SideViewMark& mark : marks)
    out << "<path class=\"mark-level\" d=\"M" << at(left) << ' ' << at(y_of(mark.deviation.height))
        << "H" << at(right) << "\" stroke=\"#000\" stroke-width=\"0.25\" "
        << "stroke-dasharray=\"2 0.8\"/><text x=\"" << at(left + 0.6) << "\" y=\""
        << at(y_of(mark.deviation.height) + 2.4) << "\" font-size=\"2\">" << esc(mark.label)
        << "</text>";
  if (d.exit)
    out << "<path class=\"exit-level\" d=\"M" << at(left) << ' ' << at(y_of(d.exit->height)) << "H"
        << at(right) << "\" stroke=\"#000\" stroke-width=\"0.25\" "
        << "stroke-dasharray=\"0.4 0.6\"/>";
  // The band the probe covered, beside the panels: beyond it the axis is extrapolated.
  const double probed_top = std::clamp(std::max(probed_top_h, probed_bottom_h), lower, upper);
  const double probed_bottom = std::clamp(std::min(probed_top_h, probed_bottom_h), lower, upper);
  out << "<rect class=\"probed\" x=\"" << at(right + 3.5) << "\" y=\"" << at(y_of(probed_top))
      << "\" width=\"1.2\" height=\"" << at((probed_top - probed_bottom) * depth_scale)
      << "\" fill=\"#aaaaaa\"/>";
  scale_bar(out, left, bottom_y + 8.0, magnification, 10.0);
  out << "<text x=\"" << at(right) << "\" y=\"" << at(bottom_y + 7.0)
      << "\" text-anchor=\"end\">deviation " << ratio_text(magnification) << ", depth "
      << ratio_text(depth_scale) << "</text>";
  out << "<text x=\"" << at(left) << "\" y=\"" << at(bottom_y + 12.5) << "\">"
      << (d.exit ? "\u00d7 leaves the zone at z = " + height_text(u, d.exit->height)
                 : std::string("stays inside the zone over the range"))
      << "</text></svg>";
  out << "<figcaption>Along the depth: the zone's walls (solid: allowed \u00d8"
      << esc(u.text(z.allowed))
      << (std::abs(z.allowed - z.stated) > 1e-12 ? "; dashed: stated \u00d8" + esc(u.text(z.stated))
                                                 : "")
      << ") and the axis (thick) in the x\u2013z and y\u2013z planes and as radial distance from "
         "the true-position axis (dash-dot). The zone is a cylinder: the axis leaves it where "
         "the radial distance passes the wall, which a single plane may not show. Grey bar: "
         "the band the probe covered; beyond it the axis is extrapolated.</figcaption>"
      << "</figure>";
}

/// The colour classes of a surface map: symmetric about 0 in round micrometre steps.
struct MapScale {
  double step_um = 1.0;  ///< class width
  int half = 1;          ///< classes on each side of 0
  int classes() const { return 2 * half; }
  /// The class of a deviation (mm), clamped to the scale.
  int class_of(double mm) const {
    const int c = static_cast<int>(std::floor(mm * 1000.0 / step_um)) + half;
    return std::clamp(c, 0, classes() - 1);
  }
  std::string colour(int c) const {
    return hex(cividis((static_cast<double>(c) + 0.5) / static_cast<double>(classes())));
  }
};

/// At most 5 classes each side, in a round step covering the largest cell mean.
MapScale map_scale(const SurfaceMap& map) {
  MapScale s;
  const double largest_um = map.largest_cell_magnitude() * 1000.0;
  if (largest_um <= 0.0) return s;
  s.step_um = nice_ceil(largest_um / 5.0);
  s.half = std::max(1, static_cast<int>(std::ceil(largest_um / s.step_um - 1e-9)));
  return s;
}

/// The unrolled surface: angle about the axis (0 at +x, counter-clockwise seen from above)
/// against height; each cell coloured by its mean deviation, empty cells left white.
void surface_map(std::ostream& out, const ReportModel& m, const SurfaceMap& map) {
  const ReportUnits& u = m.units;
  constexpr double width = 180.0, height = 66.0, x0 = 16.0, y0 = 6.0, plot_w = 140.0, plot_h = 44.0;
  const MapScale scale = map_scale(map);
  const double cell_w = plot_w / static_cast<double>(map.angle_cells);
  const double cell_h = plot_h / static_cast<double>(map.depth_cells);
  out << "<figure class=\"surface-map\" data-angle-cells=\"" << map.angle_cells
      << "\" data-depth-cells=\"" << map.depth_cells << "\" data-step-um=\""
      << ReportUnits::fixed(scale.step_um, 3) << "\">";
  out << svg_open << "width=\"" << width << "mm\" height=\"" << height << "mm\" viewBox=\"0 0 "
      << width << ' ' << height << "\" role=\"img\" aria-label=\"unrolled surface map\">";
  out << "<rect x=\"" << at(x0) << "\" y=\"" << at(y0) << "\" width=\"" << at(plot_w)
      << "\" height=\"" << at(plot_h) << "\" fill=\"#fff\"/>";
  // Runs of cells of one class in a row are one rectangle: the file stays small.
  for (std::size_t r = 0; r < map.depth_cells; ++r) {
    std::size_t k = 0;
    while (k < map.angle_cells) {
      if (map.empty(r, k)) {
        ++k;
        continue;
      }
      const int c = scale.class_of(map.at(r, k));
      std::size_t end = k + 1;
      while (end < map.angle_cells && !map.empty(r, end) && scale.class_of(map.at(r, end)) == c)
        ++end;
      out << "<rect x=\"" << at(x0 + static_cast<double>(k) * cell_w) << "\" y=\""
          << at(y0 + static_cast<double>(r) * cell_h) << "\" width=\""
          << at(static_cast<double>(end - k) * cell_w) << "\" height=\"" << at(cell_h)
          << "\" fill=\"" << scale.colour(c) << "\"/>";
      k = end;
    }
  }
  // Frame, angle ticks every 45 degrees, height ticks at round values.
  out << "<rect x=\"" << at(x0) << "\" y=\"" << at(y0) << "\" width=\"" << at(plot_w)
      << "\" height=\"" << at(plot_h) << "\" fill=\"none\" stroke=\"#000\" stroke-width=\"0.25\"/>";
  const char* directions[] = {" (+x)", "", " (+y)", "", " (\u2212x)", "", " (\u2212y)", "", ""};
  for (int a = 0; a <= 360; a += 45) {
    const double x = x0 + plot_w * a / 360.0;
    out << "<path d=\"M" << at(x) << ' ' << at(y0 + plot_h) << "v1.5\" stroke=\"#000\" "
        << "stroke-width=\"0.2\"/><text x=\"" << at(x) << "\" y=\"" << at(y0 + plot_h + 4.2)
        << "\" text-anchor=\"middle\">" << a << "\u00b0" << directions[a / 45] << "</text>";
  }
  out << "<text x=\"" << at(x0 + plot_w / 2) << "\" y=\"" << at(y0 + plot_h + 8.5)
      << "\" text-anchor=\"middle\">angle about the axis, from +x toward +y</text>";
  const double span = map.top - map.bottom;
  if (span > 0.0) {
    const double tick = nice_ceil(span / 5.0);
    for (double h = std::ceil(map.bottom / tick) * tick; h <= map.top + 1e-9; h += tick) {
      const double y = y0 + (map.top - h) / span * plot_h;
      out << "<path d=\"M" << at(x0 - 1.5) << ' ' << at(y) << "h1.5\" stroke=\"#000\" "
          << "stroke-width=\"0.2\"/><text x=\"" << at(x0 - 2) << "\" y=\"" << at(y + 0.9)
          << "\" text-anchor=\"end\">" << height_text(u, h) << "</text>";
    }
  }
  out << "<text x=\"2\" y=\"" << at(y0 - 2) << "\">z</text>";
  // Legend: the classes from the largest (top) to the smallest, boundaries in micrometres.
  const double lx = 161.0, bar_h = plot_h / static_cast<double>(scale.classes());
  out << "<g class=\"legend\"><text x=\"" << at(lx) << "\" y=\"" << at(y0 - 2)
      << "\">\u00b5m</text>";
  for (int c = scale.classes() - 1; c >= 0; --c) {
    const double y = y0 + static_cast<double>(scale.classes() - 1 - c) * bar_h;
    out << "<rect x=\"" << at(lx) << "\" y=\"" << at(y) << "\" width=\"5\" height=\"" << at(bar_h)
        << "\" fill=\"" << scale.colour(c) << "\" stroke=\"#000\" stroke-width=\"0.1\"/>";
  }
  for (int b = 0; b <= scale.classes(); ++b) {
    const double y = y0 + static_cast<double>(b) * bar_h;
    const double value = (scale.half - b) * scale.step_um;
    const int decimals = scale.step_um < 1.0 ? (scale.step_um < 0.1 ? 2 : 1) : 0;
    out << "<text class=\"legend-value\" x=\"" << at(lx + 6) << "\" y=\"" << at(y + 0.9) << "\">"
        << (value > 0 ? "+" : "") << signed_text(ReportUnits::fixed(value, decimals)) << "</text>";
  }
  out << "<rect x=\"" << at(lx) << "\" y=\"" << at(y0 + plot_h + 2.5)
      << "\" width=\"5\" height=\"2.5\" fill=\"#ffffff\" stroke=\"#000\" stroke-width=\"0.1\"/>"
      << "<text x=\"" << at(lx + 6) << "\" y=\"" << at(y0 + plot_h + 4.6)
      << "\">no points</text></g>";
  out << "<text x=\"" << at(x0) << "\" y=\"" << at(height - 2) << "\">cell "
      << ReportUnits::fixed(360.0 / static_cast<double>(map.angle_cells), 1) << "\u00b0 \u00d7 "
      << ReportUnits::fixed(u.length(span / static_cast<double>(map.depth_cells)), u.decimals() - 2)
      << ' ' << u.name() << "; points at z " << height_text(u, map.top) << " to "
      << height_text(u, map.bottom) << "; " << map.points << " points, deviations "
      << micrometres(map.smallest, 1) << " to " << micrometres(map.largest, 1) << " \u00b5m</text>";
  out << "</svg><figcaption>The bore surface unrolled (angle against depth), each cell "
         "coloured by the mean radial deviation of its points from the least-squares cylinder "
         "(+: the bore is larger there, material missing; \u2212: material stands proud). "
         "Colour scale cividis: its lightness rises steadily from dark to light, so it reads "
         "with colour-vision deficiency and in black and white.</figcaption></figure>";
}

// ------------------------------------------------------------------ page

constexpr const char* style = R"css(
*{box-sizing:border-box}
body{font-family:"DejaVu Sans",Arial,Helvetica,sans-serif;font-size:9.5pt;line-height:1.35;
color:#000;background:#fff;max-width:194mm;margin:8mm auto;padding:0 4mm}
h1{font-size:15pt;margin:0 0 2mm}h2{font-size:12.5pt;margin:5mm 0 2mm;border-bottom:0.4mm solid #000}
h3{font-size:10.5pt;margin:3mm 0 1.5mm}
table{border-collapse:collapse;margin:1mm 0 3mm}
th,td{border:0.2mm solid #888;padding:0.4mm 1.4mm;text-align:left;vertical-align:top}
table.characteristics{width:100%}
th{background:#f0f0f0}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
.hash{font-family:"DejaVu Sans Mono",monospace;font-size:7.5pt;word-break:break-all}
.verdict{white-space:nowrap;padding:0 1mm}
.v-ok{border:0.2mm solid #000}
.v-fail{font-weight:bold;border:0.6mm solid #000;text-transform:uppercase}
.v-open{font-style:italic;border:0.3mm dashed #000}
tr.fail td{font-weight:bold}
.caution{border:0.7mm solid #000;padding:2mm 3mm;margin:3mm 0;font-weight:bold}
.part-verdict{font-size:12pt;margin:2mm 0}
.figure-set{display:flex;flex-wrap:wrap;gap:2mm 3mm;align-items:flex-start;margin:2mm 0}
figure{margin:0}
figcaption{font-size:7.5pt;max-width:180mm}
figure.top-view figcaption{max-width:72mm}figure.side-view figcaption{max-width:110mm}
svg text{fill:#000}
.note{font-size:8.5pt}
ul{margin:1mm 0 2mm;padding-left:5mm}
@page{margin:11mm}
@media print{
 body{max-width:none;margin:0;padding:0;font-size:8.5pt}
 figcaption{font-size:7pt}
 th,td{padding:0.25mm 1.2mm}
 section.bore{break-before:page}
 .figure-set,figure,table,.caution{break-inside:avoid}
 h2,h3{break-after:avoid}
 th{background:none}
}
)css";

void characteristic_rows(std::ostream& out, const ReportModel& m,
                         const std::vector<Characteristic>& rows) {
  const ReportUnits& u = m.units;
  out << "<table "
         "class=\"characteristics\"><thead><tr><th>characteristic</th><th>reference</th><th>value</"
         "th><th></th><th>limit</th>"
         "<th>bonus</th><th>allowed</th><th>verdict</th>";
  // The decision rule's column, only when a rule other than simple acceptance, a U or a
  // fallback note is present (a plan without [decision] keeps the page as it was).
  const bool rule_shown = decision_details_shown(m.characteristics);
  if (rule_shown) out << "<th>U (k), decision rule</th>";
  out << "</tr></thead><tbody>";
  bool comparison_only = false;
  for (const Characteristic& c : rows) {
    const bool evaluated = c.not_evaluated.empty();
    out << "<tr" << (c.decisive && c.verdict == Verdict::does_not_conform ? " class=\"fail\"" : "")
        << "><td>" << esc(c.name) << "</td><td>" << esc(c.reference) << "</td><td class=\"num\">"
        << (evaluated ? u.text(c.value) : "\u2014") << "</td><td>"
        << esc(comparison_symbol(c.comparison)) << "</td><td class=\"num\">" << u.text(c.tolerance)
        << "</td><td class=\"num\">" << u.text(c.bonus) << "</td><td class=\"num\">"
        << u.text(c.allowed) << "</td><td>";
    if (!c.decisive) {
      out << "(" << verdict_mark(c.verdict).text << ")*";
      comparison_only = true;
    } else {
      out << verdict_span(c.verdict);
    }
    if (!evaluated) out << "<br><span class=\"note\">" << esc(c.not_evaluated) << "</span>";
    // The decision rule (decide/characteristic.hpp): U with k, the rule, its limits, and why
    // simple acceptance stood in when it did.
    out << "</td>";
    if (!rule_shown) {
      out << "</tr>";
      continue;
    }
    // Wide enough for "accept <= 10.0143," on one line beside the verdicts, which do not wrap.
    out << "<td style=\"min-width:34mm\">";
    if (c.uncertainty)
      out << u.text(c.uncertainty->expanded) << " ("
          << ReportUnits::fixed(c.uncertainty->coverage_factor, 2) << ")";
    else
      out << "\u2014";
    out << "<br>" << esc(decision_rule_name(c.rule));
    if (c.rule != DecisionRuleKind::simple_acceptance) {
      const bool upper = c.comparison == Comparison::at_most;
      out << "<br><span class=\"note\">accept " << esc(upper ? "<= " : ">= ")
          << u.text(c.acceptance_limit) << ", reject " << esc(upper ? "> " : "< ")
          << u.text(c.rejection_limit) << "</span>";
    }
    if (!c.rule_note.empty()) out << "<br><span class=\"note\">" << esc(c.rule_note) << "</span>";
    out << "</td></tr>";
  }
  out << "</tbody></table>";
  if (comparison_only)
    out << "<p class=\"note\">* shown for comparison: the datum reference lets the frame move, "
           "and the datum-mobility row decides.</p>";
}

void datum_section(std::ostream& out, const ReportModel& m) {
  const ReportUnits& u = m.units;
  out << "<section id=\"datums\"><h2>Datum reference frame</h2><table><thead><tr><th>datum</th>"
         "<th>feature</th><th>association and size</th></tr></thead><tbody>";
  for (const DatumSummary& d : m.datums) {
    out << "<tr><td>" << esc(std::string(1, d.label)) << "</td><td>" << esc(d.feature)
        << "</td><td>";
    if (d.flatness) {
      out << esc(d.association) << ", flatness " << u.text(*d.flatness) << ' ' << u.name()
          << (d.material_side_inferred ? ", material side inferred" : "");
    } else if (d.mating_size && d.boundary) {
      out << "related mating " << (d.mating_is_width ? "width " : "size ") << u.text(*d.mating_size)
          << ", " << esc(boundary_name(*d.boundary));
      if (*d.boundary == MaterialBoundary::mmb && d.mmb_size)
        out << ' ' << u.text(*d.mmb_size) << ", shift allowance " << u.text(d.shift_allowance);
      if (*d.boundary == MaterialBoundary::lmb) out << " (shift not applied: conservative)";
    } else {
      out << "tangent least squares perpendicular to A";
    }
    out << "</td></tr>";
  }
  out << "</tbody></table>";
  if (!m.frame_notes.empty()) {
    out << "<ul class=\"note\">";
    for (const std::string& n : m.frame_notes) out << "<li>" << esc(n) << "</li>";
    out << "</ul>";
  }
  out << "<p class=\"note\">Frame: z out of the material along A's normal, origin where B's axis "
         "meets A, x clocked by C; depths inside the material are negative.</p></section>";
}

/// An uncertainty figure in the report's unit: two decimals more than the report's lengths (a
/// standard uncertainty is often below their last digit), as in the CSV.
std::string fine_text(const ReportUnits& u, double mm) {
  return ReportUnits::fixed(u.length(mm), u.decimals() + 2);
}

/// The decision rules in force over `characteristics`, by name, in order of first use.
std::string rules_in_force(const std::vector<Characteristic>& characteristics) {
  std::string rules;
  for (const Characteristic& c : characteristics) {
    const std::string r(decision_rule_name(c.rule));
    if (rules.find(r) == std::string::npos) rules += (rules.empty() ? "" : ", ") + r;
  }
  return rules;
}

/// The Monte Carlo study (uncertainty/monte_carlo.hpp, JCGM 101:2008): how it was run, the
/// probing model with each feature's sigma, and per characteristic its value, u, the U that
/// decided it (Characteristic::uncertainty), the reported coverage interval and its kind, the
/// widening over equally good axes and the tie-breaking note. Present only when the study ran.
void uncertainty_section(std::ostream& out, const ReportModel& m) {
  if (!m.uncertainty) return;
  const MonteCarloSummary& s = *m.uncertainty;
  const ReportUnits& u = m.units;
  const std::string unit(u.name());
  out << "<section id=\"uncertainty\" data-trials=\"" << s.trials << "\" data-seed=\"" << s.seed
      << "\"><h2>Measurement uncertainty</h2><table class=\"study\"><tbody>"
      << "<tr><th>method</th><td>Monte Carlo propagation of distributions through the whole "
         "chain (JCGM 101:2008): every raw point perturbed, prepared, fitted and evaluated "
         "again per trial</td></tr>"
      << "<tr><th>trials</th><td>" << s.trials
      << (s.adaptive ? " (adaptive, " + std::to_string(s.batches) + " batches)"
                     : std::string(" (fixed)"))
      << (s.failed_trials > 0 ? ", " + std::to_string(s.failed_trials) + " could not be evaluated"
                              : std::string())
      << "</td></tr><tr><th>Chebyshev fits</th><td>" << s.chebyshev_fits
      << " in the trials, on the dense solver; " << s.lp_fallbacks
      << " of their linear programmes fell back to Clp; " << esc(warm_start_text(s))
      << "</td></tr><tr><th>seed</th><td>" << s.seed << "</td></tr>"
      << "<tr><th>status</th><td>" << esc(monte_carlo_status_name(s.status)) << ": "
      << esc(s.message) << "</td></tr>"
      << "<tr><th>coverage</th><td>" << ReportUnits::fixed(100.0 * s.coverage, 0)
      << " % coverage intervals from the sorted trial values</td></tr>"
      << "<tr><th>probing model</th><td>"
      << (s.probing == ProbingModel::sigma
              ? "one isotropic sigma per coordinate, as given"
              : "sigma estimated per feature: RMS residual of its own least-squares fit")
      << "</td></tr><tr><th>length error</th><td>";
  if (s.length_error)
    out << "E = A + L/K, A " << u.text(s.length_error->a) << ' ' << esc(unit) << ", K "
        << ReportUnits::fixed(s.length_error->k, 1) << ", L " << u.text(s.length) << ' '
        << esc(unit) << " (a systematic scale error per trial)";
  else
    out << "not modelled";
  out << "</td></tr></tbody></table>";
  if (!s.feature_sigma.empty()) {
    out << "<table class=\"feature-sigma\"><thead><tr><th>feature</th><th>sigma ("
        << esc(unit) << ")</th></tr></thead><tbody>";
    // The study's features are the inputs after the plan, in order (datums, then bores).
    for (std::size_t k = 0; k < s.feature_sigma.size(); ++k)
      out << "<tr><td>"
          << esc(k + 1 < m.inputs.size() ? m.inputs[k + 1].role
                                         : "feature " + std::to_string(k + 1))
          << "</td><td class=\"num\">" << fine_text(u, s.feature_sigma[k]) << "</td></tr>";
    out << "</tbody></table>";
  }
  out << "<table class=\"characteristics uncertainty\"><thead><tr><th>characteristic</th>"
         "<th>value</th><th>u</th><th>U (k)</th><th>interval</th><th>kind</th>"
         "<th>widened by</th></tr></thead><tbody>";
  for (const CharacteristicUncertainty& c : s.characteristics) {
    const bool has = c.statistics.trials >= 2;  // fewer: no figure (the note says why)
    const Characteristic* decided = m.find(c.id);
    out << "<tr data-id=\"" << esc(c.id) << "\"><td>" << esc(c.id) << "</td><td class=\"num\">"
        << u.text(c.value) << "</td><td class=\"num\">"
        << (has ? fine_text(u, c.statistics.standard_uncertainty) : "\u2014")
        << "</td><td class=\"num\">";
    if (decided && decided->uncertainty)
      out << u.text(decided->uncertainty->expanded) << " ("
          << ReportUnits::fixed(decided->uncertainty->coverage_factor, 2) << ")";
    else
      out << "\u2014";
    out << "</td><td class=\"num\">";
    if (has)
      out << "[" << fine_text(u, c.interval.low) << ", " << fine_text(u, c.interval.high) << "]";
    else
      out << "\u2014";
    out << "</td><td>" << esc(interval_kind_name(c.kind)) << "</td><td class=\"num\">"
        << (c.ambiguity_range > 0.0 ? fine_text(u, c.ambiguity_range) : "\u2014")
        << (c.tie_breaking ? " !" : "") << "</td></tr>";
  }
  out << "</tbody></table>";
  // The notes under the table, by id (a column would be too narrow for them).
  bool notes = false;
  for (const CharacteristicUncertainty& c : s.characteristics) {
    if (c.note.empty() && !c.tie_breaking) continue;
    out << (notes ? "" : "<ul class=\"note study-notes\">") << "<li data-id=\"" << esc(c.id)
        << "\">" << esc(c.id) << ": "
        << (c.tie_breaking ? "<strong>! tie-breaking:</strong> the spread measures the "
                             "solver's choice among equally good axes as much as the part; "
                           : "")
        << esc(in_report_unit(c.note, u)) << "</li>";
    notes = true;
  }
  if (notes) out << "</ul>";
  out << "<p class=\"note\">u: standard uncertainty (the trials' standard "
         "deviation, JCGM 101:2008 7.6); U: the expanded uncertainty that decided the row, k u "
         "plus the widening over equally good axes; interval: the reported "
      << ReportUnits::fixed(100.0 * s.coverage, 0)
      << " % coverage interval of the kind named (JCGM 101:2008 7.7), widened at both ends by "
         "the range the figure can take over equally good axes. Lengths in "
      << esc(unit) << ".</p>";
  if (!s.warnings.empty()) {
    out << "<ul class=\"note\">";
    for (const std::string& w : s.warnings) out << "<li>" << esc(in_report_unit(w, u)) << "</li>";
    out << "</ul>";
  }
  out << "</section>";
}

/// The probing prediction of one bore (`check --predict-probing`, forecast/probing_advice.hpp):
/// the pattern actually probed, the uncertainty a perfect bore's figures would have with it,
/// beside the measured figures. Nothing when it was not asked for.
void prediction_table(std::ostream& out, const ReportModel& m, const BoreSummary& b) {
  if (!b.probing_prediction) return;
  const ProbingPrediction& p = *b.probing_prediction;
  const ReportUnits& u = m.units;
  out << "<p class=\"note\"><strong>Probing prediction</strong> for the pattern probed: "
      << p.pattern.section_heights.size()
      << " sections \u00d7 " << p.pattern.points_per_section << " points over "
      << ReportUnits::fixed(p.pattern.arc_deg, 0) << "\u00b0, probing sigma "
      << fine_text(u, p.probing_sigma) << ' ' << esc(u.name());
  if (p.status == PredictionStatus::undetermined) {
    out << "; undetermined: " << esc(p.message) << "</p>";
    return;
  }
  out << ", " << p.trials << " trials.</p><table class=\"prediction\" data-bore=\""
      << esc(b.id) << "\"><thead><tr><th>figure</th><th>measured</th>"
         "<th>U predicted</th><th>% of tolerance</th><th>target</th></tr></thead><tbody>";
  const auto row = [&](const char* name, const std::string& id, const FigureUncertainty& f) {
    const Characteristic* c = m.find(b.id + id);
    out << "<tr><td>" << name << "</td><td class=\"num\">"
        << (c && c->not_evaluated.empty() ? u.text(c->value) : "\u2014")
        << "</td><td class=\"num\">" << u.text(f.expanded) << "</td><td class=\"num\">"
        << ReportUnits::fixed(100.0 * f.share, 1) << "</td><td>"
        << (f.meets_target ? "met" : "<strong>not met</strong>") << "</td></tr>";
  };
  row("position", "/position", p.position);
  if (p.perpendicularity_uncertainty)
    row("perpendicularity", "/perpendicularity", *p.perpendicularity_uncertainty);
  out << "</tbody></table><p class=\"note\">Predicted standard uncertainty of the axis: "
      << fine_text(u, std::max(p.top.u_x, p.top.u_y)) << " at the top (z "
      << height_text(u, p.top.height) << "), " << fine_text(u, std::max(p.bottom.u_x, p.bottom.u_y))
      << " at the bottom (z " << height_text(u, p.bottom.height) << "), tilt "
      << ReportUnits::fixed(p.u_tilt * 1e6, 1)
      << " \u00b5rad per direction (docs/probing-advice.md).</p>";
}

void bore_section(std::ostream& out, const ReportModel& m, const BoreSummary& b,
                  std::size_t index) {
  const ReportUnits& u = m.units;
  out << "<section class=\"bore\" id=\"bore-" << index + 1 << "\" data-bore=\"" << esc(b.id)
      << "\"><h2>Bore " << esc(b.id) << " \u2014 " << verdict_span(b.verdict) << "</h2>";
  characteristic_rows(out, m, m.of_feature(b.id));
  if (!b.evaluated()) {
    out << "<p><strong>Not evaluated:</strong> " << esc(b.not_evaluated) << "</p>";
  } else {
    const RangeSource source = b.depth ? b.depth->range_source : b.depth_source;
    out << "<p class=\"note\">Axis: " << esc(b.axis_method)
        << (b.axis_direction == "nominal" ? " (direction held at nominal)" : "")
        << "; evaluated range from " << esc(range_source_name(source));
    if (b.depth)
      out << ", z " << height_text(u, b.depth->range_top) << " to "
          << height_text(u, b.depth->range_bottom);
    out << "; probed z " << height_text(u, b.probed_top) << " to "
        << height_text(u, b.probed_bottom) << "; tilt " << ReportUnits::fixed(b.tilt_rad * 1e6, 1)
        << " \u00b5rad toward " << signed_text(ReportUnits::fixed(b.tilt_azimuth_deg, 0))
        << "\u00b0";
    if (b.depth)
      out << "; "
          << (b.depth->leaves_zone_at ? "<strong>leaves its zone at z = " +
                                            height_text(u, *b.depth->leaves_zone_at) + "</strong>"
                                      : std::string("stays inside its zone"));
    out << ".</p>";
    if (b.depth_source != RangeSource::plan_depth)
      out << "<p class=\"note\"><strong>Full depth unknown:</strong> the plan gives no depth, so "
             "the zone was checked over the probed extent only.</p>";
    if (!b.mobility.empty())
      out << "<p class=\"note\">Datum mobility: " << esc(b.mobility) << "</p>";
    if (!b.boundary.empty())
      out << "<p class=\"note\">Virtual condition: " << esc(b.boundary) << "</p>";
    prediction_table(out, m, b);
  }
  // One figure set per bore, also when there is nothing to draw (it says why).
  out << "<div class=\"figure-set\" data-bore=\"" << esc(b.id) << "\">";
  if (!b.evaluated()) {
    out << "<p class=\"note\">No figures: the bore was not evaluated.</p>";
  } else {
    if (b.depth && !b.depth->samples.empty()) {
      top_view(out, m, b, *b.depth);
      side_views(out, m, b, *b.depth);
    } else {
      out << "<p class=\"note\">No position tolerance: no zone to draw.</p>";
    }
    if (b.surface && b.surface->points > 0)
      surface_map(out, m, *b.surface);
    else
      out << "<p class=\"note\">No surface map in this report (a report read back from JSON "
             "carries none).</p>";
  }
  out << "</div>";
  if (!b.warnings.empty()) {
    out << "<h3>Warnings</h3><ul>";
    for (const std::string& w : b.warnings) out << "<li>" << esc(w) << "</li>";
    out << "</ul>";
  }
  out << "</section>";
}

void sensitivity_section(std::ostream& out, const ReportModel& m) {
  const auto studied = std::find_if(m.sensitivity.begin(), m.sensitivity.end(),
                                    [](const BoreSensitivity& s) { return !s.rows.empty(); });
  if (studied == m.sensitivity.end()) return;
  const ReportUnits& u = m.units;
  out << "<section id=\"sensitivity\"><h2>Sensitivity to the association of datum A</h2>"
         "<p class=\"note\">Position / perpendicularity with datum A associated by each method, "
         "the plan's first; ! marks a verdict that differs from the plan's association.</p>"
         "<table><thead><tr><th>bore</th>";
  for (const AssociationSensitivity& a : studied->rows)
    out << "<th>" << esc(association_name(a.association)) << "</th>";
  out << "<th>spread</th></tr></thead><tbody>";
  bool any_change = false;
  for (const BoreSensitivity& s : m.sensitivity) {
    out << "<tr><td>" << esc(s.bore_id) << "</td>";
    const bool has_position = m.find(s.bore_id + "/position") != nullptr;
    const bool has_perpendicularity = m.find(s.bore_id + "/perpendicularity") != nullptr;
    for (std::size_t k = 0; k < studied->rows.size(); ++k) {
      if (k >= s.rows.size()) {
        out << "<td>\u2014</td>";
        continue;
      }
      const AssociationSensitivity& planned = s.rows.front();
      const AssociationSensitivity& row = s.rows[k];
      const bool p_changed = has_position && row.position_verdict != planned.position_verdict;
      const bool q_changed =
          has_perpendicularity && row.perpendicularity_verdict != planned.perpendicularity_verdict;
      any_change = any_change || p_changed || q_changed;
      out << "<td class=\"num\">" << (has_position ? u.text(row.position) : "\u2014")
          << (p_changed ? "!" : "") << " / "
          << (has_perpendicularity ? u.text(row.perpendicularity) : "\u2014")
          << (q_changed ? "!" : "") << "</td>";
    }
    if (s.rows.empty())
      out << "<td>skipped: " << esc(s.skipped) << "</td>";
    else
      out << "<td class=\"num\">" << u.text(s.position_spread) << " / "
          << (has_perpendicularity ? u.text(s.perpendicularity_spread) : "\u2014") << "</td>";
    out << "</tr>";
  }
  out << "</tbody></table>";
  if (any_change)
    out << "<p><strong>A verdict that changes with the association of A is decided by the datum "
           "method, not the part:</strong> agree the method with the customer before comparing "
           "results.</p>";
  out << "</section>";
}

void inputs_section(std::ostream& out, const std::vector<InputRecord>& inputs) {
  out << "<section id=\"inputs\"><h2>Inputs</h2><table><thead><tr><th>role</th><th>file</th>"
         "<th>points</th><th>SHA-256 (FIPS 180-4) of the bytes read</th></tr></thead><tbody>";
  for (const InputRecord& in : inputs)
    out << "<tr><td>" << esc(in.role) << "</td><td>" << esc(in.path.string())
        << "</td><td class=\"num\">"
        << (in.role == "plan" || in.role == "summary" ? "" : std::to_string(in.points))
        << "</td><td class=\"hash\">" << esc(in.sha256) << "</td></tr>";
  out << "</tbody></table></section>";
}


void methods_section(std::ostream& out, const ReportModel& m) {
  out << "<section id=\"methods\"><h2>Methods</h2><ul>";
  if (!m.datums.empty() && !m.datums.front().association.empty())
    out << "<li>Datum A associated by " << esc(m.datums.front().association)
        << "; B and C as listed above (ASME Y14.5-2018, ISO 5459:2011).</li>";
  std::vector<std::string> methods;
  for (const BoreSummary& b : m.bores)
    if (std::find(methods.begin(), methods.end(), b.axis_method) == methods.end())
      methods.push_back(b.axis_method);
  std::string list;
  for (const std::string& s : methods) list += (list.empty() ? "" : ", ") + s;
  out << "<li>Toleranced axis: " << esc(list)
      << " (per bore above). Position is the diameter of the smallest cylinder about the "
         "true-position axis that holds the axis over the whole evaluated range (ASME "
         "Y14.5-2018 section 7, ISO 1101:2017 clause 18); perpendicularity the smallest "
         "cylinder perpendicular to A holding it over the bore's depth.</li>"
         "<li>Size: actual mating envelope and two-point sizes (ISO 14405-1); form: "
         "minimum-zone cylindricity (ISO 12180-1).</li>";
  const std::string rules = rules_in_force(m.characteristics);
  if (!rules.empty())
    out << "<li>Decision rule: " << esc(rules)
        << ". 'allowed' is the effective tolerance (after bonus). Simple acceptance: the value "
           "against it alone. ISO 14253-1 (the ISO 14253-1:2017 default): conformance proven "
           "inside the limit reduced by the expanded uncertainty U, non-conformance beyond it "
           "enlarged by U, in between not proven; a guard band g agreed between customer and "
           "supplier narrows and widens the limit by g the same way (JCGM 106:2012). A row "
           "with 'U not evaluated' was decided by simple acceptance: no guarded decision.</li>";
  out << "<li>Figures: deviations magnified by the round factor that fits the wider of the zone "
         "and the axis in the view; the surface map averages the least-squares cylinder "
         "residuals (Forbes 1989) per cell, in round micrometre classes symmetric about zero, "
         "coloured by the cividis map (Nu\u00f1ez, Anderton &amp; Renslow 2018).</li>"
         "</ul></section>";
}

void page_open(std::ostream& out, std::string_view title) {
  out << "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
         "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
         "<title>"
      << esc(title) << "</title><style>" << style << "</style></head><body>\n";
}

void page_close(std::ostream& out) {
  out << "\n<footer><p class=\"caution\">" << esc(safety_caution)
      << "</p><p class=\"note\">Signed off by: ____________________ &nbsp; date: ____________"
      << "</p></footer>\n</body></html>\n";
}

}  // namespace html

using namespace html;

std::string format_html(const ReportModel& m) {
  const ReportUnits& u = m.units;
  std::ostringstream out;
  page_open(out, "cylzone check: " + m.plan_name);
  out << "<header><h1>Bore inspection report</h1><p><strong>" << esc(m.plan_name)
      << "</strong><br>plan " << esc(m.plan_file.filename().string()) << ", values in "
      << esc(u.name()) << ", cylzone " << esc(m.tool_version) << "</p>";
  out << "<table class=\"identity\"><tbody>";
  const auto identity_row = [&](const char* label, const std::string& value) {
    out << "<tr><th>" << label << "</th><td>" << (value.empty() ? "\u2014" : esc(value))
        << "</td></tr>";
  };
  identity_row("part", m.part.id);
  identity_row("serial", m.part.serial);
  identity_row("time", m.part.timestamp);
  for (const auto& [key, value] : m.part.notes) identity_row(esc(key).c_str(), value);
  out << "</tbody></table>";
  std::size_t failing = 0;
  for (const BoreSummary& b : m.bores) failing += b.verdict == Verdict::does_not_conform;
  out << "<p class=\"part-verdict\">Part verdict: " << verdict_span(m.verdict);
  if (m.verdict == Verdict::does_not_conform)
    out << " (" << failing << " of " << m.bores.size() << " bores)";
  out << "</p>";
  // The decision rule beside the verdict it set, when one other than simple acceptance, a U or
  // a fallback is present (decision_details_shown); a plan without [decision] reads as before.
  if (decision_details_shown(m.characteristics))
    out << "<p class=\"decision-rule\">Decision rule in force: <strong>"
        << esc(rules_in_force(m.characteristics)) << "</strong>"
        << (m.uncertainty ? "; U from this part's Monte Carlo study (<a "
                            "href=\"#uncertainty\">Measurement uncertainty</a>)"
                          : "")
        << ". Each row's acceptance and rejection limits are in its bore's table.</p>";
  out << "<p class=\"caution\">" << esc(safety_caution) << "</p></header>\n";

  // Summary: one line per bore, then every characteristic.
  out << "<section id=\"summary\"><h2>Bores</h2><table><thead><tr><th>bore</th><th>verdict</th>"
         "<th>position / allowed</th><th>along the depth</th></tr></thead><tbody>";
  for (const BoreSummary& b : m.bores) {
    out << "<tr><td><a href=\"#bore-" << (&b - m.bores.data()) + 1 << "\">" << esc(b.id)
        << "</a></td><td>" << verdict_span(b.verdict) << "</td><td class=\"num\">";
    const Characteristic* c = b.depth ? m.find(b.depth->characteristic_id) : nullptr;
    if (c && c->not_evaluated.empty())
      out << u.text(c->value) << " / " << u.text(c->allowed);
    else
      out << "\u2014";
    out << "</td><td>";
    if (!b.evaluated())
      out << "not evaluated";
    else if (b.depth)
      out << (b.depth->leaves_zone_at
                  ? "leaves its zone at z = " + height_text(u, *b.depth->leaves_zone_at)
                  : std::string("stays inside"));
    else
      out << "\u2014";
    out << "</td></tr>";
  }
  out << "</tbody></table></section>\n";
  datum_section(out, m);
  out << '\n';
  for (std::size_t k = 0; k < m.bores.size(); ++k) {
    bore_section(out, m, m.bores[k], k);
    out << '\n';
  }
  sensitivity_section(out, m);
  uncertainty_section(out, m);
  inputs_section(out, m.inputs);
  methods_section(out, m);
  if (!m.warnings.empty()) {
    out << "<section id=\"warnings\"><h2>Warnings</h2><ul>";
    for (const std::string& w : m.warnings) out << "<li>" << esc(w) << "</li>";
    out << "</ul></section>";
  }
  page_close(out);
  return out.str();
}

}  // namespace cylzone
