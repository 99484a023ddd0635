#pragma once
/// \file fit_report.hpp
/// Reports of one associated element (`cylzone fit`): text for people and one JSON object
/// (docs/fit-json.md). Lengths in `unit`, the unit the points were read in.

#include <string>

#include "cylzone/core/units.hpp"
#include "cylzone/fit/fit_element.hpp"

namespace cylzone {

/// Lines of "name  values", 6 decimals in mm (1 nm) or 7 in inch (0.1 µin), then the warnings.
/// `source` is the point file as given.
std::string format_fit_text(const ElementFit& fit, const std::string& source, LengthUnit unit);

/// One JSON object, indented by two, ending with a line break.
std::string format_fit_json(const ElementFit& fit, const std::string& source, LengthUnit unit);

}  // namespace cylzone
