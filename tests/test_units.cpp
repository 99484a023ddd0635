// Length units (cylzone/core/units.hpp). References: the international inch is 25.4 mm
// exactly, by the 1959 agreement of the national standards laboratories (common practice);
// the unit names are those the header documents.
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <string>

#include "cylzone/core/units.hpp"

using namespace cylzone;

TEST_CASE("millimetres per unit: the inch is 25.4 mm exactly", "[units]") {
  CHECK(millimetres_per(LengthUnit::millimetre) == 1.0);
  // Exactly the double nearest to 25.4, i.e. the same value as 254 / 10 (correctly rounded).
  CHECK(millimetres_per(LengthUnit::inch) == 25.4);
  CHECK(millimetres_per(LengthUnit::inch) == 254.0 / 10.0);
  // 1 inch = 25.4 mm and 0.001 inch = 0.0254 mm, to the rounding of one multiplication.
  CHECK(1.0 * millimetres_per(LengthUnit::inch) == 25.4);
  CHECK(0.001 * millimetres_per(LengthUnit::inch) == Approx(0.0254).epsilon(1e-15));
  // 12 inches = 304.8 mm (the international foot, same agreement).
  CHECK(12.0 * millimetres_per(LengthUnit::inch) == Approx(304.8).epsilon(1e-15));
}

TEST_CASE("unit conversion round trips stay within one rounding", "[units]") {
  const double per_inch = millimetres_per(LengthUnit::inch);
  for (const double inches : {0.0, 1.0, 0.0005, 0.9843, 3.25, 125.125, -2.5, 1e6}) {
    INFO("inches " << inches);
    const double mm = inches * per_inch;
    const double back = mm / per_inch;
    CHECK(std::abs(back - inches) <= 2.0 * std::numeric_limits<double>::epsilon() *
                                          std::abs(inches));
  }
  // Whole inches come back within one rounding too (not always exactly: 3 x 25.4 rounds up).
  for (int k = -40; k <= 40; ++k)
    CHECK(std::abs((k * per_inch) / per_inch - k) <=
          std::numeric_limits<double>::epsilon() * std::abs(k));
}

TEST_CASE("unit names parse case-insensitively and round-trip", "[units]") {
  for (const LengthUnit u : {LengthUnit::millimetre, LengthUnit::inch})
    CHECK(parse_unit(unit_name(u)) == u);
  CHECK(unit_name(LengthUnit::millimetre) == "mm");
  CHECK(unit_name(LengthUnit::inch) == "inch");
  for (const char* text : {"mm", "MM", "millimetre", "Millimeter", "MILLIMETRES", "millimeters"})
    CHECK(parse_unit(text) == LengthUnit::millimetre);
  for (const char* text : {"in", "IN", "inch", "Inch", "inches"})
    CHECK(parse_unit(text) == LengthUnit::inch);
  for (const char* text : {"", "m", "cm", "um", "furlong", " mm", "mm ", "inchs", "milli"}) {
    INFO("'" << text << "'");
    CHECK(!parse_unit(text));
  }
}
