#pragma once
/// \file probing_report.hpp
/// Reports of the probing advice (`cylzone advise`, forecast/probing_advice.hpp): a table for
/// people and one JSON object (schema cylzone-probing-advice-1, docs/probing-advice.md). Both
/// carry the safety caution. Lengths in `unit` (mm: 4 decimals, inch: 5, as ReportUnits), tilts
/// in µrad, shares as fractions in JSON and percent in the table.

#include <string>
#include <string_view>

#include "cylzone/core/units.hpp"
#include "cylzone/forecast/probing_advice.hpp"
#include "cylzone/report/report_model.hpp"

namespace cylzone {

/// The schema identifier of the probing advice's JSON object.
inline constexpr std::string_view probing_advice_schema = "cylzone-probing-advice-1";

struct ProbingTableOptions {
  LengthUnit unit = LengthUnit::millimetre;
  bool unicode = false;  ///< "µrad", "°" rather than "urad", "deg"
};

std::string format_probing_table(const ProbingAdviceOptions& options, const ProbingAdvice& advice,
                                 const ProbingTableOptions& table = {});

/// The `check` table's section for `check --probing-sigma`: per bore the pattern probed, the
/// predicted expanded uncertainties beside the measured position and perpendicularity
/// (ReportModel's BoreSummary::probing_prediction). Empty when no bore has a prediction.
std::string format_probing_predictions(const ReportModel& model, bool unicode);

/// One JSON object, indented by two, ending with a line break.
std::string format_probing_json(const ProbingAdviceOptions& options, const ProbingAdvice& advice,
                                LengthUnit unit);

}  // namespace cylzone
