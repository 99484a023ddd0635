#pragma once
// Private: the angle column of a point in the surface map (radial_deviation_map). The map's
// definition is libm's atan2 angle in degrees, [0, 360), binned into `cells` equal columns;
// `angle_column` gives the same column from polar_angle (fit_support.hpp: atan2 to 1e-15 rad
// at a fraction of its cost). The two angles differ by about 1e-13 degrees at most after their
// conversions (a few roundings of values below 360 and polar_angle's 1e-15 rad), a few
// 1e-15 x cells once scaled to columns, so wherever the scaled angle lies farther than
// 1e-9 + 1e-12 x cells from a column edge (an integer, 0 and
// `cells` included, where atan2's side of the +u axis and its 360 -> 0 rule act), both fall in
// the same column; nearer, the atan2 definition itself is evaluated.

#include <algorithm>
#include <cmath>
#include <cstddef>

#include "detail/fit_support.hpp"

namespace cylzone::detail {

inline std::size_t clamp_cell(double x, std::size_t cells) {
  if (!(x > 0.0)) return 0;
  return std::min(static_cast<std::size_t>(x), cells - 1);
}

/// The definition: the column of atan2(along_v, along_u) in degrees on [0, 360).
inline std::size_t angle_column_by_atan2(double along_u, double along_v, std::size_t cells) {
  double a = std::atan2(along_v, along_u) * (180.0 / 3.14159265358979323846);
  if (a < 0.0) a += 360.0;
  a = a >= 360.0 ? 0.0 : a;  // -0 rounding up to 360
  return clamp_cell(a / 360.0 * static_cast<double>(cells), cells);
}

/// The same column, from polar_angle away from the column edges.
inline std::size_t angle_column(double along_u, double along_v, std::size_t cells) {
  const double a = polar_angle(along_u, along_v) * (180.0 / 3.14159265358979323846);
  const double x = a / 360.0 * static_cast<double>(cells);
  if (std::abs(x - std::round(x)) > 1e-9 + 1e-12 * static_cast<double>(cells))
    return clamp_cell(x, cells);
  return angle_column_by_atan2(along_u, along_v, cells);
}

}  // namespace cylzone::detail
