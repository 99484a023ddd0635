#pragma once
/// \file report.hpp
/// Renderers of the report model (report_model.hpp), one per format: a terminal table and an
/// HTML report for people, JSON (schema `cylzone-report-1`) and CSV (one row per
/// characteristic) for machines.
/// docs/report-schema.md documents each. All are pure functions of the model: no IO.
/// Files are written with io/atomic_write.hpp.

#include <string>

#include "cylzone/io/atomic_write.hpp"
#include "cylzone/report/report_model.hpp"

namespace cylzone {

/// How the table is written for its terminal.
struct TableOptions {
  /// UTF-8 symbols ("°", "µrad", "—", "…"); false: ASCII only ("deg", "urad", "-", "~"). The
  /// library does not look at the locale: the caller decides (the CLI from LC_ALL / LC_CTYPE /
  /// LANG).
  bool unicode = false;
  /// Lines are kept within this many columns where the content allows: long bore ids and
  /// references are shortened with a marker and listed in full below the table, notes and the
  /// caution are wrapped.
  std::size_t width = 120;
};

/// The terminal table. Values in the plan's unit, micrometre resolution (0.00001 inch for inch
/// plans). Column widths follow the content.
std::string format_table(const ReportModel& model, const TableOptions& options = {});
/// The JSON report. Needs `model.evaluation` (a model built by make_report_model) for the
/// detailed blocks; throws std::invalid_argument for a model read back from JSON.
std::string format_json(const ReportModel& model);
/// The CSV report: header line, then one row per characteristic.
std::string format_csv(const ReportModel& model);
/// The HTML report for people to read, print and sign: one self-contained HTML5 document
/// (inline CSS and SVG, no script, nothing fetched). Per bore a figure set: the top view of the
/// position zone with the axis from mouth to bottom, magnified; side views of the zone's walls
/// and the axis in two orthogonal planes and radially, with where the axis leaves the zone; the
/// unrolled surface coloured by the deviation from the least-squares cylinder (cividis scale).
/// Verdicts as words and symbols; legible in black and white (docs/html-report.md). Works on a
/// model read back from JSON too (without surface maps or sensitivity).
std::string format_html(const ReportModel& model);

/// Convenience: the same, for a model built on the spot from `result`.
std::string format_table(const PartCheckResult& result);
std::string format_json(const PartCheckResult& result);
std::string format_csv(const PartCheckResult& result);

}  // namespace cylzone
