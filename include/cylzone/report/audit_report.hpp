#pragma once
/// \file audit_report.hpp
/// The reports of `cylzone audit` (audit/summary_audit.hpp): the audit result with what a
/// reader needs around it (the part, the inputs, the unit), rendered by one function per
/// format: a terminal table, JSON (schema `cylzone-audit-1`) and CSV (one row per bore).
/// docs/report-schema.md ("The audit report") documents them. Pure functions: no IO.

#include <string>
#include <string_view>
#include <vector>

#include "cylzone/audit/summary_audit.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/report/report_model.hpp"

namespace cylzone {

/// The schema identifier of the audit's JSON report.
inline constexpr std::string_view audit_report_schema = "cylzone-audit-1";

/// A bore's axis along the depth, for the audit's HTML page (its side view). Lengths in mm.
struct AuditAxisView {
  std::string bore;
  DepthProfile depth;  ///< deciding_depth_profile (report_model.hpp)
  double probed_top = 0.0;
  double probed_bottom = 0.0;
};

/// What every audit report says. Lengths in mm; `units` converts them (the plan's unit).
struct AuditReport {
  std::string tool_version;
  ReportUnits units;
  std::string plan_name;
  PartIdentity part;
  std::vector<InputRecord> inputs;  ///< the plan, the datums, the bores, then the summary
  std::string summary_file;
  std::string summary_unit;         ///< "mm" or "inch": the unit the summary was read in
  bool summary_deviations = true;   ///< dx/dy columns (else x/y coordinates)
  std::vector<std::string> warnings;  ///< the evaluation's and the plan's warnings
  AuditResult audit;
  /// The audited bores' axes for the HTML page's side views (any order; a bore without one
  /// has no figure). The table, JSON and CSV do not use them.
  std::vector<AuditAxisView> axes;
};

std::string format_audit_table(const AuditReport& report, const TableOptions& options = {});
std::string format_audit_json(const AuditReport& report);
/// One row per audited bore, then one per unmatched row or bore (finding "unmatched").
std::string format_audit_csv(const AuditReport& report);
/// The audit as one self-contained HTML page in the check report's style (docs/html-report.md,
/// "The audit page"): the summary's figures beside cylzone's at the same plane, the finding per
/// bore, per bore a side view of the axis against its zone over the depth with the summary's
/// plane and centre marked, the inputs with their digests, the caution.
std::string format_audit_html(const AuditReport& report);

}  // namespace cylzone
