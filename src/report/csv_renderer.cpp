// The CSV report: one row per characteristic (RFC 4180 quoting), the model's characteristics in
// order. Columns are documented in docs/report-schema.md; new columns are appended at the end so
// readers that index columns by position keep working.
#include <sstream>

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

}  // namespace

std::string format_csv(const ReportModel& m) {
  const ReportUnits& u = m.units;
  // RFC 4180 has no comment lines, so the safety caution travels as a column of every row: a
  // row copied or filtered on its own still carries it.
  const std::string caution = csv_field(safety_caution);
  std::ostringstream out;
  out << "part,bore,characteristic,reference,value,tolerance,bonus,allowed,comparison,verdict,"
         "decisive,units,id,caution,part_id,serial,timestamp,notes,range_source,status,reason,outliers_removed"
         // Sampling adequacy of the row's bore (sampling_coverage.hpp), then what it took from a
         // whole-part scan; appended last.
         ",probed_span,evaluated_length,extrapolation_top,extrapolation_bottom,tilt_magnification,"
         "sections,section_points_min,section_points_median,coverage_deg,"
         "worst_section_coverage_deg,sampling_warnings,"
         "scan_points,scan_angular_coverage_deg,scan_probed_depth,scan_nominal_depth\n";
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
          << u.text(f->probed_span) << ',' << u.text(f->nominal_span) << '\n';
    else
      out << ",,,\n";
  }
  return out.str();
}

std::string format_csv(const PartCheckResult& result) {
  return format_csv(make_report_model(result));
}

}  // namespace cylzone
