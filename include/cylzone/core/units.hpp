#pragma once
/// \file units.hpp
/// Length units. Points are converted to millimetres when read; every result is computed in
/// millimetres and converted back to the user's unit only when reported.

#include <optional>
#include <string>
#include <string_view>

namespace cylzone {

enum class LengthUnit { millimetre, inch };

/// Millimetres per unit: 1 for mm, 25.4 for inch (exact by definition of the inch).
double millimetres_per(LengthUnit unit) noexcept;

/// The unit's short name as written in reports: "mm" or "inch".
std::string_view unit_name(LengthUnit unit) noexcept;

/// Parses "mm", "millimetre", "millimeter", "in", "inch" (case-insensitive); empty when unknown.
std::optional<LengthUnit> parse_unit(std::string_view text) noexcept;

}  // namespace cylzone
