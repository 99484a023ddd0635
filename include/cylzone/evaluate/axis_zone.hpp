#pragma once
/// \file axis_zone.hpp
/// An axis against a cylindrical tolerance zone, in closed form. The zone frame of a bore has
/// its origin at the true position on datum plane A and its w axis along the nominal direction
/// (perpendicular to A unless the plan says otherwise); heights are w (z for a perpendicular
/// bore), negative inside the material.
///
/// Facts used (they follow from the definitions in ASME Y14.5-2018 section 7 and ISO 1101:2017
/// clause 18 on position with a cylindrical zone):
///  * the deviation of a straight axis is affine in height, so its distance from the zone's axis
///    is convex and its largest value over a range is reached at an end of the range;
///  * position (diameter) = 2 x the largest radial deviation over the range;
///  * perpendicularity (diameter) of a straight axis over a range = the range's length x tan of
///    its tilt from the nominal direction;
///  * with A primary, position over a range is never smaller than perpendicularity over it.

#include <Eigen/Core>
#include <optional>
#include <vector>

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// Rounding allowance, mm, of every comparison of a figure with its zone or limit: a value
/// within it of the limit counts as on the limit. It absorbs floating-point rounding of the fits
/// only (far below any probing resolution). The decide stage's default rule uses it, and so does
/// the height where an axis leaves its zone.
inline constexpr double zone_rounding_slack = 1e-12;

/// Local frame of one bore's zone, inside the datum reference frame.
struct ZoneFrame {
  Eigen::Vector3d origin = Eigen::Vector3d::Zero();  ///< true position on A, datum frame
  Eigen::Matrix3d basis = Eigen::Matrix3d::Identity();  ///< columns u, v, w (w = nominal direction)

  /// Zone frame for a true position (x, y) on A and a nominal direction (datum frame, unit).
  /// u is the datum x axis made perpendicular to w, so for a perpendicular bore u, v = x, y.
  static ZoneFrame at(const Eigen::Vector2d& basic_location, const Eigen::Vector3d& direction);
};

/// Deviation of an axis from the zone's axis at one height.
struct AxisDeviation {
  double height = 0.0;                               ///< along w from A
  Eigen::Vector2d offset = Eigen::Vector2d::Zero();  ///< (du, dv): dx, dy for a perpendicular bore
  double radial() const { return offset.norm(); }
  /// The single-plane ("2D") positional deviation at this height: 2 x radial.
  double diameter() const { return 2.0 * offset.norm(); }
};

/// A straight axis in zone coordinates: offset(h) = at_zero + h * slope.
struct StraightAxis {
  Eigen::Vector2d at_zero = Eigen::Vector2d::Zero();
  Eigen::Vector2d slope = Eigen::Vector2d::Zero();  ///< d(offset)/dh: tan(tilt) in its direction

  AxisDeviation at(double height) const { return {height, at_zero + height * slope}; }
  double tilt_rad() const;      ///< angle from the nominal direction
  double tilt_azimuth_deg() const;  ///< direction of the tilt, from u toward v, in (-180, 180]

  /// Expresses `axis` (datum frame) in `zone`. Throws FitError when the axis is perpendicular to
  /// the nominal direction.
  static StraightAxis from_axis(const Axis& axis, const ZoneFrame& zone);
};

/// 2 x the larger radial deviation at the two ends of [h1, h2].
double position_over_range(const StraightAxis& axis, double h1, double h2);
/// Radial deviations (mm) closer than this are a tie for "the worst" height: the end (or
/// section) nearer the top is named. Where a best fit of the frame (the datum mobility) makes
/// both ends equal, rounding alone would otherwise pick one, differently for every placement of
/// the part on the machine; 1e-9 mm is far above that rounding and far below any reported digit.
inline constexpr double worst_tie_margin = 1e-9;

/// The end of [h1, h2] with the larger radial deviation: h1 unless h2's is larger by more than
/// worst_tie_margin.
AxisDeviation worst_end(const StraightAxis& axis, double h1, double h2);
/// |h2 - h1| x |slope|: the smallest zone perpendicular to A containing the axis over the range.
double perpendicularity_over_range(const StraightAxis& axis, double h1, double h2);

/// Height nearest to `h_start` within [min(h_start,h_end), max(...)] where the axis is outside
/// the zone of diameter `zone_diameter` (radial deviation > zone_diameter / 2), scanning from
/// h_start toward h_end; empty when the axis stays inside over the whole range. When the axis
/// is already outside at h_start, returns h_start.
std::optional<double> first_height_outside(const StraightAxis& axis, double h_start,
                                           double h_end, double zone_diameter);

/// Derived median line (section centres in zone coordinates): position = 2 x largest radial.
double position_of_points(const std::vector<AxisDeviation>& centres);
/// Diameter of the smallest circle containing the centres' offsets: the smallest cylinder
/// parallel to the nominal direction containing them (perpendicularity of a median line).
double perpendicularity_of_points(const std::vector<AxisDeviation>& centres);

}  // namespace cylzone
