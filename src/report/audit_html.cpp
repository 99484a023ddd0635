// The audit's HTML page (audit_report.hpp, format_audit_html): built from the check report's
// page frame, style, verdict marks and side view (report/detail/html_page.hpp), so both pages
// read and print alike. No figure is computed here: the audit result and the axes' depth
// profiles hold them all. docs/html-report.md, "The audit page".
#include <algorithm>
#include <sstream>

#include "cylzone/report/audit_report.hpp"
#include "report/detail/html_page.hpp"

namespace cylzone {
namespace {

using html::esc;

/// The finding in words and a symbol, framed like a verdict: an overturned summary verdict as
/// a failure, a consistent one as a pass, an undecided one dashed.
std::string finding_span(const BoreAudit& b) {
  const std::string name(summary_finding_name(b.finding));
  if (b.finding == SummaryFinding::not_decided)
    return "<span class=\"verdict v-open\">? " + esc(name) + "</span>";
  if (b.overturned)
    return "<span class=\"verdict v-fail\">\u2718 " + esc(name) + "</span>";
  return "<span class=\"verdict v-ok\">\u2714 " + esc(name) + "</span>";
}

std::string cell(const std::string& text) { return "<td class=\"num\">" + text + "</td>"; }

}  // namespace

std::string format_audit_html(const AuditReport& r) {
  const ReportUnits& u = r.units;
  const AuditResult& a = r.audit;
  std::ostringstream out;
  html::page_open(out, "cylzone audit: " + r.plan_name);

  // ---- header: what was audited, the part, the outcome, the caution.
  std::size_t overturned = 0;
  for (const BoreAudit& b : a.bores) overturned += b.overturned;
  out << "<header><h1>Audit of an inspection summary</h1><p><strong>" << esc(r.plan_name)
      << "</strong><br>summary " << esc(r.summary_file) << " ("
      << (r.summary_deviations ? "deviations dx, dy" : "coordinates x, y") << " in "
      << esc(r.summary_unit) << "), values in " << esc(u.name()) << ", same-plane tolerance "
      << esc(u.text(a.same_plane_tolerance)) << " (as a diameter), cylzone "
      << esc(r.tool_version) << "</p><table class=\"identity\"><tbody>";
  const auto identity_row = [&](const std::string& label, const std::string& value) {
    out << "<tr><th>" << esc(label) << "</th><td>" << (value.empty() ? "\u2014" : esc(value))
        << "</td></tr>";
  };
  identity_row("part", r.part.id);
  identity_row("serial", r.part.serial);
  identity_row("time", r.part.timestamp);
  for (const auto& [key, value] : r.part.notes) identity_row(key, value);
  out << "</tbody></table><p class=\"part-verdict\">";
  if (overturned)
    out << "<span class=\"verdict v-fail\">\u2718 " << overturned << " of " << a.bores.size()
        << " summary verdicts overturned</span>";
  else
    out << "<span class=\"verdict v-ok\">\u2714 every summary verdict stands</span>";
  if (a.any_not_decided())
    out << " <span class=\"verdict v-open\">? a bore could not be decided</span>";
  out << "</p><p class=\"caution\">" << esc(safety_caution) << "</p></header>\n";
  if (a.explanation != FrameExplanation::none)
    out << "<p class=\"note\"><strong>Likeliest common cause of the differences:</strong> "
        << esc(a.explanation_text) << "</p>";

  // ---- the summary's centre beside cylzone's at the same plane.
  out << "<section id=\"planes\"><h2>At the summary's plane</h2><table class=\"characteristics\">"
         "<thead><tr><th>bore</th><th>plane</th><th>z</th><th>summary dx</th><th>dy</th>"
         "<th>2D</th><th>cylzone dx</th><th>dy</th><th>2D</th><th>apart</th><th>allowed</th>"
         "</tr></thead><tbody>";
  for (const BoreAudit& b : a.bores) {
    if (b.centres.empty()) {
      out << "<tr><td>" << esc(b.id) << "</td><td colspan=\"10\">not evaluated by cylzone</td></tr>";
      continue;
    }
    for (const ReportedCentre& c : b.centres) {
      const PlaneFigures& p = c.cylzone[c.compared];
      const bool apart = c.discrepancy > c.discrepancy_allowed;
      out << "<tr" << (apart ? " class=\"fail\"" : "") << "><td>" << esc(b.id) << "</td><td>"
          << esc(plane_label_name(p.label)) << "</td>" << cell(u.text(p.height))
          << cell(u.text(c.offset.x())) << cell(u.text(c.offset.y())) << cell(u.text(c.position))
          << cell(u.text(p.offset.x())) << cell(u.text(p.offset.y())) << cell(u.text(p.position))
          << cell(u.text(c.discrepancy)) << cell(u.text(c.discrepancy_allowed)) << "</tr>";
    }
  }
  out << "</tbody></table><p class=\"note\">dx, dy from the true position; 2D = 2 \u221a(dx\u00b2 "
         "+ dy\u00b2), the single-plane figure; apart: twice the distance between the two "
         "centres, allowed: the same-plane tolerance plus the summary's printed rounding.</p>"
         "</section>\n";

  // ---- over the full depth: the finding per bore.
  out << "<section id=\"findings\"><h2>Over the full depth</h2><table class=\"characteristics\">"
         "<thead><tr><th>bore</th><th>summary position</th><th>summary verdict</th>"
         "<th>cylzone position / allowed</th><th>cylzone verdict</th><th>perpendicularity / "
         "allowed</th><th>finding</th></tr></thead><tbody>";
  for (const BoreAudit& b : a.bores) {
    out << "<tr" << (b.overturned ? " class=\"fail\"" : "") << "><td><a href=\"#audit-"
        << (&b - a.bores.data()) + 1 << "\">" << esc(b.id) << "</a></td>"
        << cell(b.reported_position ? u.text(*b.reported_position) : "\u2014") << "<td>"
        << (b.reported_conforms ? (*b.reported_conforms ? "pass" : "fail") : "\u2014")
        << (b.verdict_implied ? " (implied)" : "") << "</td>";
    if (b.position_id.empty())
      out << "<td>\u2014</td><td>\u2014</td>";
    else
      out << cell(u.text(b.position) + " / " + u.text(b.allowed)) << "<td>"
          << html::verdict_span(b.position_verdict) << "</td>";
    out << cell(b.perpendicularity ? u.text(*b.perpendicularity) + " / " +
                                         u.text(b.perpendicularity_allowed.value_or(0.0))
                                   : "\u2014")
        << "<td>" << finding_span(b) << "</td></tr>";
  }
  out << "</tbody></table></section>\n";

  // ---- one section per bore: the reason and the side view with the summary's plane marked.
  for (const BoreAudit& b : a.bores) {
    out << "<section class=\"audit-bore\" id=\"audit-" << (&b - a.bores.data()) + 1
        << "\" data-bore=\"" << esc(b.id) << "\" data-finding=\""
        << esc(summary_finding_name(b.finding)) << "\"><h3>Bore " << esc(b.id) << ": " << finding_span(b) << "</h3><p>"
        << esc(b.reason) << "</p>";
    if (b.leaves_zone_at)
      out << "<p class=\"note\">The axis leaves its zone at z = "
          << esc(html::height_text(u, *b.leaves_zone_at)) << ".</p>";
    const auto axis = std::find_if(r.axes.begin(), r.axes.end(),
                                   [&](const AuditAxisView& v) { return v.bore == b.id; });
    if (axis != r.axes.end() && !axis->depth.samples.empty()) {
      std::vector<html::SideViewMark> marks;
      for (const ReportedCentre& c : b.centres) {
        const PlaneFigures& p = c.cylzone[c.compared];
        marks.push_back({{p.height, c.offset}, "summary"});
      }
      out << "<div class=\"figure-set\">";
      // The stated tolerance is not part of the audit: the allowed zone alone is drawn.
      const html::ZoneSizes zone{axis->depth.allowed, axis->depth.allowed};
      html::side_views(out, u, zone, axis->probed_top, axis->probed_bottom, axis->depth, marks);
      out << "</div><p class=\"note\">Open diamond and dashed level: the summary's centre at "
             "the plane compared.</p>";
    }
    out << "</section>\n";
  }

  if (!a.unmatched_rows.empty() || !a.unmatched_bores.empty()) {
    out << "<section id=\"unmatched\"><h2>Not matched</h2><ul>";
    for (const UnmatchedRow& row : a.unmatched_rows)
      out << "<li>summary line " << row.line << ": " << esc(row.id) << " names no bore of the plan</li>";
    for (const std::string& bore : a.unmatched_bores)
      out << "<li>bore " << esc(bore) << ": no row of the summary</li>";
    out << "</ul></section>";
  }
  html::inputs_section(out, r.inputs);
  if (!r.warnings.empty()) {
    out << "<section id=\"warnings\"><h2>Warnings</h2><ul>";
    for (const std::string& w : r.warnings) out << "<li>" << esc(w) << "</li>";
    out << "</ul></section>";
  }
  html::page_close(out);
  return out.str();
}

}  // namespace cylzone
