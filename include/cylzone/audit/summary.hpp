#pragma once
/// \file summary.hpp
/// Another system's summary of a part, read for an audit (summary_audit.hpp): delimited text
/// (comma, semicolon, tab or blanks; `#` comments) whose first content line is a header row.
/// The plan's `[audit]` mapping (plan/audit_plan.hpp) names the column of each figure by its
/// header; the figures are converted from the summary's unit to millimetres on reading.
///
/// Rounding. A printed figure is a rounded figure: `0.0072` stands for any value within half a
/// unit of its last decimal, 0.00005. The reader keeps that half unit for every number, so the
/// audit judges the summary's own arithmetic within its own rounding (summary_audit.hpp).
///
/// Errors are InputError naming the summary file, the 1-based line and the column (or the
/// mapping key): a mapped column missing from the header, a cell that is not a number, a verdict
/// word not understood, an empty file, a row without an id, a figure beyond 1e6 or printed so
/// coarsely that its last digit stands for more than 1e6. Bounded, printable, one line.

#include <cstddef>
#include <filesystem>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/core/units.hpp"
#include "cylzone/plan/audit_plan.hpp"

namespace cylzone {

/// One printed number: its value in mm and half a unit of its last printed decimal, in mm (the
/// largest rounding error of the figure as printed, "0.04" -> 0.005 of the summary's unit).
struct SummaryNumber {
  double value = 0.0;
  double rounding = 0.0;
};

/// The axis centre a summary gives at one plane. `deviations`: `offset` is (dx, dy) from the
/// true position; otherwise it holds the coordinates (x, y) in the datum frame.
struct SummaryCentre {
  std::optional<SummaryNumber> z;  ///< height of the plane from A; empty: not stated
  SummaryNumber u;                 ///< dx or x
  SummaryNumber v;                 ///< dy or y
};

/// One row of the summary (one bore at one plane, or at two planes with the `2` column set).
struct SummaryRow {
  std::size_t line = 0;                 ///< 1-based line in the file
  std::string id;
  std::vector<SummaryCentre> centres;   ///< one, or two with the `2` column set
  std::optional<SummaryNumber> position;
  std::optional<SummaryNumber> diameter;
  std::optional<bool> conforms;         ///< the summary's verdict; empty: no verdict column
  std::string verdict_text;             ///< as printed
};

struct SummaryTable {
  std::filesystem::path file;
  std::string sha256;            ///< of the bytes parsed (FIPS 180-4)
  LengthUnit unit = LengthUnit::millimetre;
  bool deviations = true;        ///< dx/dy columns (else x/y coordinates)
  std::vector<SummaryRow> rows;  ///< file order
};

/// The mapping actually used: `[audit]` columns (or the fields' own keys), the summary's unit.
struct SummaryReadOptions {
  PlanAudit mapping;
  LengthUnit default_unit = LengthUnit::millimetre;  ///< when the mapping states none
};

/// Parses a summary held in memory; `source` names it in messages. Throws InputError.
SummaryTable parse_summary(std::string_view bytes, const std::string& source,
                           const SummaryReadOptions& options);

/// Reads `file` once (io/load.hpp), hashes and parses those bytes. Throws InputError.
SummaryTable read_summary(const std::filesystem::path& file, const SummaryReadOptions& options);

/// The single-plane ("2D") position a summary derives from its deviations: 2 sqrt(dx^2 + dy^2),
/// the diameter of the cylindrical zone centred on the true position that just holds the
/// centre (common practice; ASME Y14.5-2018 section 7, from memory for the clause).
double single_plane_position(double dx, double dy) noexcept;

/// How far a printed position may lie from 2 sqrt(dx^2 + dy^2) of the printed deviations and
/// still be their rounded value: the position's own half unit plus the largest change of
/// 2 sqrt(dx^2 + dy^2) when dx and dy move within their half units, 2 sqrt(ex^2 + ey^2) (the
/// gradient of 2|d| has length 2). Inputs and result in the same unit.
double consistency_allowance(double position_rounding, double dx_rounding,
                             double dy_rounding) noexcept;

/// Half a unit of the last decimal printed in `number` ("0.0072" -> 0.00005, "12" -> 0.5,
/// "1.5e-3" -> 0.00005); 0 when it is not a plain decimal number; infinite when the printed
/// exponent puts it beyond a double ("0e400").
double half_unit_of_last_decimal(std::string_view number) noexcept;

}  // namespace cylzone
