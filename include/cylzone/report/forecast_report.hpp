#pragma once
/// \file forecast_report.hpp
/// Reports of the machine-capability forecast (`cylzone forecast`,
/// forecast/machine_capability.hpp): a table for people and one JSON object (schema
/// cylzone-forecast-1, docs/forecast.md). Both carry the safety caution. Lengths in `unit` (mm: 4 decimals, inch: 5, as ReportUnits),
/// tilts in µm/m, shares as fractions in JSON and percent in the table.

#include <string>
#include <string_view>

#include "cylzone/core/units.hpp"
#include "cylzone/forecast/forecast_comparison.hpp"
#include "cylzone/forecast/machine_capability.hpp"

namespace cylzone {

/// The schema identifier of the forecast's JSON object.
inline constexpr std::string_view forecast_schema = "cylzone-forecast-1";

struct ForecastTableOptions {
  LengthUnit unit = LengthUnit::millimetre;
  bool unicode = false;  ///< "µm/m" and "σ" rather than "um/m" and "sigma"
};

/// `comparison`, when given, adds the section comparing the forecast with measured parts
/// (forecast_comparison.hpp) and the JSON's `comparison` object.
std::string format_forecast_table(const CapabilityOptions& options,
                                  const CapabilityForecast& forecast,
                                  const ForecastTableOptions& table = {},
                                  const ForecastComparison* comparison = nullptr);

/// One JSON object, indented by two, ending with a line break.
std::string format_forecast_json(const CapabilityOptions& options,
                                 const CapabilityForecast& forecast, LengthUnit unit,
                                 const ForecastComparison* comparison = nullptr);

}  // namespace cylzone
