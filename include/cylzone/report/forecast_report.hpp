#pragma once
/// \file forecast_report.hpp
/// Reports of the machine-capability forecast (`cylzone forecast`,
/// forecast/machine_capability.hpp): a table for people and one JSON object (schema
/// cylzone-forecast-1, docs/forecast.md). Both carry the safety caution. Lengths in `unit` (mm: 4 decimals, inch: 5, as ReportUnits),
/// tilts in µm/m, shares as fractions in JSON and percent in the table.

#include <string>
#include <string_view>

#include "cylzone/core/units.hpp"
#include "cylzone/forecast/machine_capability.hpp"

namespace cylzone {

/// The schema identifier of the forecast's JSON object.
inline constexpr std::string_view forecast_schema = "cylzone-forecast-1";

struct ForecastTableOptions {
  LengthUnit unit = LengthUnit::millimetre;
  bool unicode = false;  ///< "µm/m" and "σ" rather than "um/m" and "sigma"
};

std::string format_forecast_table(const CapabilityOptions& options,
                                  const CapabilityForecast& forecast,
                                  const ForecastTableOptions& table = {});

/// One JSON object, indented by two, ending with a line break.
std::string format_forecast_json(const CapabilityOptions& options,
                                 const CapabilityForecast& forecast, LengthUnit unit);

}  // namespace cylzone
