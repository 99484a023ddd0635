// The terminal table: the report model for people. Values in the plan's unit through the
// model's ReportUnits; verdicts as words, never colour alone (docs/report-schema.md).
#include <sstream>

#include "cylzone/report/report.hpp"
#include "cylzone/version.hpp"

namespace cylzone {
namespace {

std::string pad(std::string text, std::size_t width) {
  if (text.size() < width) text.append(width - text.size(), ' ');
  return text;
}

std::string pad_left(std::string text, std::size_t width) {
  if (text.size() < width) text.insert(0, width - text.size(), ' ');
  return text;
}

void datum_lines(std::ostream& out, const ReportModel& m) {
  const ReportUnits& u = m.units;
  out << "Datum reference frame\n";
  for (const DatumSummary& d : m.datums) {
    out << "  " << d.label << "  " << d.feature;
    if (d.flatness) {
      out << ", " << d.association << ", flatness " << u.text(*d.flatness)
          << (d.material_side_inferred ? ", material side inferred" : "") << '\n';
    } else if (d.mating_size && d.boundary) {
      // A datum feature of size: its related mating size (a diameter, or a width), the boundary
      // it is used at and, at MMB, the boundary size and the shift it allows.
      out << ", related mating " << (d.mating_is_width ? "width" : "size") << " "
          << u.text(*d.mating_size) << ", " << boundary_name(*d.boundary);
      // The datum mobility applies MMB only; LMB is left fixed, which is conservative.
      if (*d.boundary == MaterialBoundary::mmb && d.mmb_size)
        out << " " << u.text(*d.mmb_size) << ", shift allowance " << u.text(d.shift_allowance);
      if (*d.boundary == MaterialBoundary::lmb) out << " (shift not applied: conservative)";
      out << '\n';
    } else {
      out << ", tangent least squares perpendicular to A\n";
    }
  }
  for (const std::string& note : m.frame_notes) out << "  note: " << note << '\n';
  out << '\n';
}

}  // namespace

std::string format_table(const ReportModel& m) {
  const ReportUnits& u = m.units;
  const int w = u.decimals() + 5;
  std::ostringstream out;
  out << "cylzone " << m.tool_version << " check: " << m.plan_name << "  ("
      << m.plan_file.filename().string() << ", values in " << u.name() << ")\n\n";
  datum_lines(out, m);

  // One row per bore and characteristic.
  out << pad("bore", 7) << pad("characteristic", 33) << pad("reference", 19)
      << pad_left("value", w) << "    " << pad_left("limit", w) << pad_left("bonus", w)
      << pad_left("allowed", w) << "   verdict\n";
  std::string previous;
  bool footnote = false;
  for (const Characteristic& c : m.characteristics) {
    if (!previous.empty() && c.feature != previous) out << '\n';
    previous = c.feature;
    std::string verdict(verdict_name(c.verdict));
    if (!c.decisive) {
      verdict = "(" + verdict + ")*";
      footnote = true;
    } else if (c.verdict == Verdict::does_not_conform) {
      verdict = "DOES NOT CONFORM";
    }
    out << pad(c.feature, 7) << pad(c.name, 33) << pad(c.reference, 19)
        << pad_left(u.text(c.value), w) << ' ' << comparison_symbol(c.comparison) << ' '
        << pad_left(u.text(c.tolerance), w) << pad_left(u.text(c.bonus), w)
        << pad_left(u.text(c.allowed), w) << "   " << verdict << '\n';
  }
  if (footnote)
    out << "\n* shown for comparison: the datum reference lets the frame move, and the "
           "'datum mobility' row decides.\n";

  // Along the depth: what single-plane summaries hide.
  out << "\nAlong the depth (z from datum A; dx, dy from true position; 2D = single-plane "
         "position)\n";
  out << pad("bore", 8) << pad_left("top z", w) << pad_left("dx", w) << pad_left("dy", w)
      << pad_left("2D", w) << pad_left("bottom z", w + 1) << pad_left("dx", w)
      << pad_left("dy", w) << pad_left("2D", w) << pad_left("probed z", 17)
      << pad_left("tilt urad", 11) << pad_left("toward", 8) << "  leaves zone at\n";
  for (const BoreSummary& b : m.bores) {
    if (!b.depth || b.depth->samples.empty()) continue;
    const AxisDeviation& top = b.depth->samples.front();
    const AxisDeviation& bottom = b.depth->samples.back();
    out << pad(b.id, 8) << pad_left(u.text(top.height), w) << pad_left(u.text(top.offset.x()), w)
        << pad_left(u.text(top.offset.y()), w) << pad_left(u.text(top.diameter()), w)
        << pad_left(u.text(bottom.height), w + 1) << pad_left(u.text(bottom.offset.x()), w)
        << pad_left(u.text(bottom.offset.y()), w) << pad_left(u.text(bottom.diameter()), w)
        << pad_left(ReportUnits::fixed(u.length(b.probed_top), u.decimals() - 2) + " .. " +
                        ReportUnits::fixed(u.length(b.probed_bottom), u.decimals() - 2),
                    17)
        << pad_left(ReportUnits::fixed(b.tilt_rad * 1e6, 1), 11)
        << pad_left(ReportUnits::fixed(b.tilt_azimuth_deg, 0), 7) << "d  "
        << (b.depth->leaves_zone_at ? "z = " + u.text(*b.depth->leaves_zone_at)
                                    : std::string("stays inside"))
        << '\n';
  }

  if (!m.sensitivity.empty() && !m.sensitivity.front().rows.empty()) {
    out << "\nSensitivity to the association of datum A (position / perpendicularity; ! = the "
           "verdict differs from the plan's association)\n";
    out << pad("bore", 8);
    for (const AssociationSensitivity& row : m.sensitivity.front().rows)
      out << pad_left(std::string(association_name(row.association)), 2 * w + 6);
    out << pad_left("spread", 2 * w + 6) << '\n';
    bool any_change = false;
    for (const BoreSensitivity& s : m.sensitivity) {
      out << pad(s.bore_id, 8);
      const AssociationSensitivity& planned = s.rows.front();
      for (const AssociationSensitivity& row : s.rows) {
        const bool p_changed = row.position_verdict != planned.position_verdict;
        const bool q_changed = row.perpendicularity_verdict != planned.perpendicularity_verdict;
        any_change = any_change || p_changed || q_changed;
        out << pad_left(u.text(row.position) + (p_changed ? "!" : " ") + "/ " +
                            u.text(row.perpendicularity) + (q_changed ? "!" : " "),
                        2 * w + 6);
      }
      out << pad_left(u.text(s.position_spread) + " / " + u.text(s.perpendicularity_spread) + " ",
                      2 * w + 6)
          << '\n';
    }
    if (any_change)
      out << "A verdict that changes with the association of A is decided by the datum method, "
             "not the part:\nagree the method with the customer before comparing results.\n";
  }

  for (const BoreSummary& b : m.bores)
    if (!b.mobility.empty()) out << "datum mobility, bore " << b.id << ": " << b.mobility << '\n';
  for (const BoreSummary& b : m.bores)
    for (const std::string& warning : b.warnings)
      out << "warning: bore " << b.id << ": " << warning << '\n';
  for (const std::string& warning : m.warnings) out << "warning: " << warning << '\n';

  std::size_t failing = 0;
  for (const BoreSummary& b : m.bores) failing += b.verdict == Verdict::does_not_conform;
  std::string verdict = "CONFORMS";
  if (m.verdict == Verdict::does_not_conform)
    verdict = "DOES NOT CONFORM (" + std::to_string(failing) + " of " +
              std::to_string(m.bores.size()) + " bores)";
  else if (m.verdict == Verdict::not_proven)
    verdict = "NOT PROVEN (conformance not proven within the measurement uncertainty)";
  out << "\nPart verdict: " << verdict << "\n\n" << safety_caution << '\n';
  return out.str();
}

std::string format_table(const PartCheckResult& result) {
  return format_table(make_report_model(result));
}

}  // namespace cylzone
