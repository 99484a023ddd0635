// The CSV report: one row per characteristic (RFC 4180 quoting), the model's characteristics in
// order. Columns are documented in docs/report-schema.md; new columns are appended at the end so
// readers that index columns by position keep working.
#include <algorithm>
#include <sstream>

#include "cylzone/report/audit_report.hpp"
#include "cylzone/report/batch_report.hpp"
#include "cylzone/report/report.hpp"

namespace cylzone {
namespace {

/// RFC 4180 (Common Format for CSV Files): a field with a comma, quote or line break is quoted
/// and its quotes doubled.
std::string csv_field(std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos) return std::string(text);
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  return quoted + "\"";
}

/// The sampling columns of a bore's rows, each preceded by its comma; empty fields for a bore
/// not evaluated (no figures), never a number that was not measured.
std::string sampling_fields(const BoreSummary* bore, const ReportUnits& u) {
  constexpr int columns = 11;
  if (!bore || !bore->sampling) return std::string(columns, ',');
  const SamplingCoverage& s = *bore->sampling;
  std::string warnings;
  for (const std::string& w : s.warnings) warnings += (warnings.empty() ? "" : " | ") + w;
  return ',' + u.text(s.span()) + ',' + u.text(s.range_top - s.range_bottom) + ',' +
         u.text(s.extrapolation_top) + ',' + u.text(s.extrapolation_bottom) + ',' +
         (s.magnification ? ReportUnits::fixed(*s.magnification, 3) : std::string()) + ',' +
         std::to_string(s.sections.size()) + ',' + std::to_string(s.section_points_min) + ',' +
         ReportUnits::fixed(s.section_points_median, 1) + ',' +
         ReportUnits::fixed(s.coverage_deg, 1) + ',' +
         ReportUnits::fixed(s.worst_section_coverage_deg, 1) + ',' + csv_field(warnings);
}

/// An uncertainty figure: two decimals more than the report's lengths (u is often below their
/// last digit).
std::string uncertainty_text(double mm, const ReportUnits& u) {
  return ReportUnits::fixed(u.length(mm), u.decimals() + 2);
}

/// The probing prediction's key figures for a row's bore (forecast/probing_advice.hpp): status,
/// pattern, sigma, the predicted U of position and perpendicularity with their shares of the
/// tolerance, and whether every figure meets the target; empty fields without a prediction.
std::string prediction_fields(const BoreSummary* bore, const ReportUnits& u) {
  constexpr std::size_t columns = 10;
  if (!bore || !bore->probing_prediction) return std::string(columns, ',');
  const ProbingPrediction& p = *bore->probing_prediction;
  const bool known = p.status == PredictionStatus::predicted;
  const auto share = [](double s) { return ReportUnits::fixed(100.0 * s, 1); };
  const std::optional<FigureUncertainty>& q = p.perpendicularity_uncertainty;
  return std::string(",") + (known ? "predicted" : "undetermined") + ',' +
         std::to_string(p.pattern.section_heights.size()) + ',' +
         std::to_string(p.pattern.points_per_section) + ',' +
         ReportUnits::fixed(p.pattern.arc_deg, 1) + ',' + uncertainty_text(p.probing_sigma, u) +
         ',' + (known ? u.text(p.position.expanded) : "") + ',' +
         (known ? share(p.position.share) : "") + ',' +
         (known && q ? u.text(q->expanded) : "") + ',' + (known && q ? share(q->share) : "") +
         ',' + (known ? (p.meets_target ? "yes" : "no") : "");
}

}  // namespace

std::string format_csv(const ReportModel& m) {
  const ReportUnits& u = m.units;
  // RFC 4180 has no comment lines, so the safety caution travels as a column of every row: a
  // row copied or filtered on its own still carries it.
  const std::string caution = csv_field(safety_caution);
  const bool predicted =
      std::any_of(m.bores.begin(), m.bores.end(),
                  [](const BoreSummary& b) { return b.probing_prediction.has_value(); });
  std::ostringstream out;
  out << "part,bore,characteristic,reference,value,tolerance,bonus,allowed,comparison,verdict,"
         "decisive,units,id,caution,part_id,serial,timestamp,notes,range_source,status,reason,outliers_removed"
         // Sampling adequacy of the row's bore (sampling_coverage.hpp), then what it took from a
         // whole-part scan; appended last.
         ",probed_span,evaluated_length,extrapolation_top,extrapolation_bottom,tilt_magnification,"
         "sections,section_points_min,section_points_median,coverage_deg,"
         "worst_section_coverage_deg,sampling_warnings,"
         "scan_points,scan_angular_coverage_deg,scan_probed_depth,scan_nominal_depth"
         // The decision rule (decide/characteristic.hpp): `allowed` is the effective tolerance
         // (after bonus); U and k empty when U was not evaluated.
         ",rule,expanded_uncertainty,coverage_factor,acceptance_limit,rejection_limit,"
         "uncertainty_source,rule_note"
         // The Monte Carlo study's u and reported interval, only when one was run (the report
         // without it keeps its columns exactly); empty for a characteristic it has no figure of.
      << (m.uncertainty ? ",u,interval_low,interval_high" : "")
      // The probing prediction of the row's bore, only when one was asked for (`check
      // --predict-probing`); empty for a bore without one.
      << (predicted ? ",prediction_status,prediction_sections,prediction_points_per_section,"
                      "prediction_arc_deg,prediction_sigma,prediction_position_expanded,"
                      "prediction_position_share,prediction_perpendicularity_expanded,"
                      "prediction_perpendicularity_share,prediction_meets_target"
                    : "")
      << '\n';
  // Identity columns, the same on every row: rows of many parts can be told apart.
  const std::string identity = csv_field(m.part.id) + ',' + csv_field(m.part.serial) + ',' +
                               csv_field(m.part.timestamp) + ',' +
                               csv_field(m.part.notes_text());
  for (const Characteristic& c : m.characteristics) {
    const std::optional<RangeSource> source = m.range_source(c);
    out << csv_field(m.plan_name) << ',' << csv_field(c.feature) << ',' << csv_field(c.name) << ','
        << csv_field(c.reference) << ','
        // A characteristic not evaluated has no value: the field stays empty, never a number.
        << (c.not_evaluated.empty() ? u.text(c.value) : std::string()) << ','
        << u.text(c.tolerance) << ','
        << u.text(c.bonus) << ',' << u.text(c.allowed) << ',' << comparison_symbol(c.comparison)
        << ',' << verdict_name(c.verdict) << ',' << (c.decisive ? "yes" : "no") << ','
        << u.name() << ',' << csv_field(c.id) << ',' << caution << ',' << identity << ','
        << (source ? range_source_name(*source) : "") << ','
        << (c.not_evaluated.empty() ? "evaluated" : "not evaluated") << ','
        << csv_field(c.not_evaluated) << ',';
    // Points the outlier stages removed from the bore's cloud (listed in the JSON report).
    const FeaturePreparation* prepared = m.preparation_of("bore " + c.feature);
    out << (prepared ? prepared->record.outliers.removed_count() : 0);
    out << sampling_fields(m.bore(c.feature), u) << ',';
    // What the bore took from a whole-part scan; empty when it has a point file of its own.
    if (const FeatureSegmentation* f = m.segmentation_of("bore " + c.feature))
      out << f->points << ',' << ReportUnits::fixed(*f->angular_coverage_deg, 1) << ','
          << u.text(f->probed_span) << ',' << u.text(f->nominal_span);
    else
      out << ",,,";
    const std::optional<ExpandedUncertainty>& un = c.uncertainty;
    out << ',' << csv_field(decision_rule_name(c.rule)) << ','
        << (un ? u.text(un->expanded) : std::string()) << ','
        << (un ? ReportUnits::fixed(un->coverage_factor, 2) : std::string()) << ','
        << u.text(c.acceptance_limit) << ',' << u.text(c.rejection_limit) << ','
        << (un ? csv_field(un->source) : std::string()) << ',' << csv_field(c.rule_note);
    if (m.uncertainty) {
      const CharacteristicUncertainty* mc = find_uncertainty(*m.uncertainty, c.id);
      if (mc && mc->statistics.trials >= 2)
        out << ',' << uncertainty_text(mc->statistics.standard_uncertainty, u) << ','
            << uncertainty_text(mc->interval.low, u) << ','
            << uncertainty_text(mc->interval.high, u);
      else
        out << ",,,";
    }
    if (predicted) out << prediction_fields(m.bore(c.feature), u);
    out << '\n';
  }
  return out.str();
}

std::string format_csv(const PartCheckResult& result) {
  return format_csv(make_report_model(result));
}

// The audit's CSV: one row per audited bore, then one per unmatched summary row and plan bore.
// A second depth fills the *2 columns; every figure in the plan's unit, empty when absent.
std::string format_audit_csv(const AuditReport& r) {
  const ReportUnits& u = r.units;
  const std::string caution = csv_field(safety_caution);
  const auto opt = [&](const std::optional<double>& v) { return v ? u.text(*v) : std::string(); };
  std::ostringstream out;
  out << "part,bore,finding,overturned,summary_line,summary_z,summary_dx,summary_dy,summary_2d,"
         "summary_position,summary_verdict,verdict_implied,compared_plane,compared_z,cylzone_dx,"
         "cylzone_dy,cylzone_2d,apart,apart_allowed,summary_z2,summary_dx2,summary_dy2,"
         "cylzone_dx2,cylzone_dy2,apart2,two_depth_position,position,allowed,position_verdict,"
         "perpendicularity,perpendicularity_allowed,perpendicularity_verdict,reason,units,"
         "caution,part_id,serial,timestamp,notes,summary_diameter,mating_envelope,"
         "least_squares_diameter\n";
  const std::string identity = csv_field(r.part.id) + ',' + csv_field(r.part.serial) + ',' +
                               csv_field(r.part.timestamp) + ',' + csv_field(r.part.notes_text());
  const auto centre = [&](const BoreAudit& b, std::size_t k, bool with_plane) {
    if (k >= b.centres.size()) return std::string(with_plane ? ",,,,,,,," : ",,,,,");
    const ReportedCentre& c = b.centres[k];
    const PlaneFigures& p = c.cylzone[c.compared];
    std::string text = std::to_string(c.line) + ',';
    if (!with_plane) text.clear();
    text += opt(c.height) + ',' + u.text(c.offset.x()) + ',' + u.text(c.offset.y()) + ',';
    if (with_plane) text += u.text(c.position) + ',';
    if (!with_plane) return text + u.text(p.offset.x()) + ',' + u.text(p.offset.y()) + ',' +
                            u.text(c.discrepancy);
    return text;
  };
  for (const BoreAudit& b : r.audit.bores) {
    out << csv_field(r.plan_name) << ',' << csv_field(b.id) << ','
        << summary_finding_name(b.finding) << ',' << (b.overturned ? "yes" : "no") << ',';
    if (b.centres.empty()) {
      out << ",,,,,";
    } else {
      out << centre(b, 0, true);
    }
    out << opt(b.reported_position) << ','
        << (b.reported_conforms ? (*b.reported_conforms ? "pass" : "fail") : "") << ','
        << (b.verdict_implied ? "yes" : "no") << ',';
    if (b.centres.empty()) {
      out << ",,,,,,,";
    } else {
      const ReportedCentre& c = b.centres[0];
      const PlaneFigures& p = c.cylzone[c.compared];
      out << plane_label_name(p.label) << ',' << u.text(p.height) << ',' << u.text(p.offset.x())
          << ',' << u.text(p.offset.y()) << ',' << u.text(p.position) << ','
          << u.text(c.discrepancy) << ',' << u.text(c.discrepancy_allowed) << ',';
    }
    out << (b.centres.size() > 1 ? centre(b, 1, false) : std::string(",,,,,")) << ','
        << opt(b.two_depth_position) << ',';
    if (b.position_id.empty())
      out << ",,,";
    else
      out << u.text(b.position) << ',' << u.text(b.allowed) << ','
          << verdict_name(b.position_verdict) << ',';
    out << opt(b.perpendicularity) << ',' << opt(b.perpendicularity_allowed) << ','
        << (b.perpendicularity_verdict ? verdict_name(*b.perpendicularity_verdict) : "") << ','
        << csv_field(b.reason) << ',' << u.name() << ',' << caution << ',' << identity << ','
        << opt(b.reported_diameter) << ','
        << (b.position_id.empty() ? "," : u.text(b.mating_envelope) + ',' +
                                              u.text(b.least_squares_diameter))
        << '\n';
  }
  for (const UnmatchedRow& row : r.audit.unmatched_rows)
    out << csv_field(r.plan_name) << ',' << csv_field(row.id) << ",unmatched row,no,"
        << row.line << std::string(28, ',') << csv_field("no bore of the plan has this id") << ','
        << u.name() << ',' << caution << ',' << identity << ",,,\n";
  for (const std::string& id : r.audit.unmatched_bores)
    out << csv_field(r.plan_name) << ',' << csv_field(id) << ",unmatched bore,no,"
        << std::string(28, ',') << csv_field("the summary does not give this bore") << ','
        << u.name() << ',' << caution << ',' << identity << ",,,\n";
  return out.str();
}

// The batch's CSV (batch_report.hpp): the per-part CSV's header and rows as format_csv wrote
// them, with the part's folder, decision and input digests appended, so one renderer defines
// the characteristic columns for a part alone and for a batch alike.
std::string format_batch_csv(const BatchIdentity& identity,
                             const std::vector<BatchPartRecord>& records,
                             const std::vector<std::string>& part_csv) {
  // The header of the per-part CSV: from a model without characteristics when no part ran.
  const ReportModel no_part;
  std::string header = format_csv(no_part);
  for (const std::string& text : part_csv)
    if (!text.empty()) header = text;
  header = header.substr(0, header.find('\n'));
  std::vector<std::string> columns;
  for (std::size_t start = 0;;) {  // the header's names hold no comma or quote
    const std::size_t comma = header.find(',', start);
    columns.push_back(header.substr(start, comma - start));
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  const auto column = [&](std::string_view name) {
    return static_cast<std::size_t>(std::find(columns.begin(), columns.end(), name) -
                                    columns.begin());
  };
  std::ostringstream out;
  out << header << ",folder,part_verdict,plan_sha256,points_sha256,inputs_sha256\n";
  for (std::size_t k = 0; k < records.size(); ++k) {
    const BatchPartRecord& r = records[k];
    std::string inputs;
    for (const InputRecord& in : r.inputs)
      inputs += (inputs.empty() ? "" : "; ") + in.role + '=' + in.sha256;
    const std::string part_fields = csv_field(r.part.folder.string()) + ',' +
                                    (r.evaluated() ? std::string(verdict_name(r.verdict))
                                                   : std::string("failed")) +
                                    ',' + identity.plan_sha256 + ',';
    if (!r.evaluated()) {
      std::vector<std::string> fields(columns.size());
      const auto set = [&](std::string_view name, std::string value) {
        if (const std::size_t c = column(name); c < fields.size()) fields[c] = std::move(value);
      };
      set("part", csv_field(identity.plan_name));
      set("caution", csv_field(safety_caution));
      set("part_id", csv_field(identity.part.id));
      set("serial", csv_field(r.part.serial));
      set("timestamp", csv_field(identity.part.timestamp));
      set("notes", csv_field(identity.part.notes_text()));
      set("units", std::string(unit_name(identity.unit)));
      set("status", "not evaluated");
      set("reason", csv_field(r.error));
      for (std::size_t c = 0; c < fields.size(); ++c) out << (c ? "," : "") << fields[c];
      out << ',' << part_fields << ',' << csv_field(inputs) << '\n';
      continue;
    }
    // Rows in the model's order: one per characteristic (format_csv).
    const std::string& text = part_csv[k];
    std::size_t start = text.find('\n') + 1;
    for (const Characteristic& c : r.characteristics) {
      const std::size_t end = text.find('\n', start);
      if (end == std::string::npos) break;
      const InputRecord* points = nullptr;
      for (const InputRecord& in : r.inputs)
        if (in.role == "bore " + c.feature) points = &in;
      out << text.substr(start, end - start) << ',' << part_fields
          << (points ? points->sha256 : std::string()) << ',' << csv_field(inputs) << '\n';
      start = end + 1;
    }
  }
  return out.str();
}

}  // namespace cylzone
