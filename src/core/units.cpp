#include "cylzone/core/units.hpp"

#include <algorithm>
#include <cctype>
#include <string>

namespace cylzone {

double millimetres_per(LengthUnit unit) noexcept {
  return unit == LengthUnit::inch ? 25.4 : 1.0;  // the inch is 25.4 mm exactly (1959 agreement)
}

std::string_view unit_name(LengthUnit unit) noexcept {
  return unit == LengthUnit::inch ? "inch" : "mm";
}

std::optional<LengthUnit> parse_unit(std::string_view text) noexcept {
  std::string lower(text);
  std::transform(lower.begin(), lower.end(), lower.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  if (lower == "mm" || lower == "millimetre" || lower == "millimeter" || lower == "millimetres" ||
      lower == "millimeters")
    return LengthUnit::millimetre;
  if (lower == "in" || lower == "inch" || lower == "inches") return LengthUnit::inch;
  return std::nullopt;
}

}  // namespace cylzone
