#pragma once
/// \file report.hpp
/// Reports of a part check: a terminal table for people, JSON (docs/report-schema.md) and CSV
/// (one row per characteristic) for machines, written atomically.

#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/check/part_check.hpp"

namespace cylzone {

/// Printed in every report: verdicts support, and do not replace, the approved procedure.
inline constexpr std::string_view safety_caution =
    "Caution: cylzone's verdicts support, and do not replace, the approved inspection "
    "procedure, the governing standard named on the drawing and sign-off by qualified "
    "personnel. Parts may go into safety-critical assemblies.";

/// One reported characteristic of one bore (a row of the table and of the CSV).
struct CharacteristicRow {
  std::string bore_id;
  std::string characteristic;  ///< "position", "position (datum mobility)", "perpendicularity", ...
  std::string reference;       ///< e.g. "A|B(M)|C MMC" or "limits 12.000/12.027"
  double value = 0.0;          ///< mm
  double tolerance = 0.0;      ///< stated tolerance (or limit), mm
  double bonus = 0.0;
  double allowed = 0.0;
  std::string comparison = "<=";  ///< how value is compared with allowed: "<=" or ">="
  Verdict verdict = Verdict::conforms;
  /// False for a fixed-frame position when the datum reference lets the frame move: the row of
  /// the moved frame then decides, this one is shown for comparison with other software.
  bool decisive = true;
};

/// Every characteristic of every bore, in plan order.
std::vector<CharacteristicRow> characteristic_rows(const PartCheckResult& result);

/// Values in the plan's unit, micrometre resolution (0.00001 inch for inch plans).
std::string format_table(const PartCheckResult& result);
std::string format_json(const PartCheckResult& result);
std::string format_csv(const PartCheckResult& result);

/// Writes `content` to a temporary file beside `target` and renames it into place, so a reader
/// never sees a half-written report. Refuses (InputError) when `target` is one of `inputs` (the
/// same file, by filesystem identity) or its directory does not exist.
void write_file_atomically(const std::filesystem::path& target, std::string_view content,
                           const std::vector<std::filesystem::path>& inputs);

}  // namespace cylzone
