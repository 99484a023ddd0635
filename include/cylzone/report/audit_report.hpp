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
};

std::string format_audit_table(const AuditReport& report, const TableOptions& options = {});
std::string format_audit_json(const AuditReport& report);
/// One row per audited bore, then one per unmatched row or bore (finding "unmatched").
std::string format_audit_csv(const AuditReport& report);

}  // namespace cylzone
