#pragma once
// Private: the one rule that turns a bore's measured distances from its true-position axis into
// the clearance of its virtual condition boundary (docs/evaluation.md, "Virtual condition").
// evaluate_bore applies it in the frame as built, virtual_condition_after_frame_motion and the
// boundary search of the datum mobility (datum_mobility.cpp) after a frame motion, so the
// figure the search maximises is the figure reported.

#include <string>

#include "detail/fit_support.hpp"

namespace cylzone::detail {

/// A bore's distances from the (moved) true-position axis, zone coordinates.
struct BoundaryDistances {
  double nearest = 0.0;   ///< smallest radial distance of a point within the depth
  double farthest = 0.0;  ///< largest
  /// 2 x the largest offset of the envelope's axis (mating envelope at MMC, minimum material
  /// envelope at LMC) from the true-position axis over the evaluated range: a diameter, as
  /// position_over_range gives it.
  double envelope_reach = 0.0;
  double envelope_diameter = 0.0;
  /// The height (zone z) of the range's end where envelope_reach is taken, for the basis text.
  double reach_height = 0.0;
};

struct BoundaryClearance {
  double clearance = 0.0;
  /// True when the figure is the exact one (nearest or farthest point); false when it is the
  /// conservative envelope figure.
  bool exact = true;
};

/// The clearance figure. `projected`: the boundary stands above A, where the bore has no
/// surface; the perfect envelope, extended, is compared with it. `surrounded`: the points
/// surround the mating envelope's axis in every section (VirtualConditionResult).
///  * MMC, in the material: an axis inside the mating envelope (2 max|e| < D) lies inside a
///    bore whose points surround the envelope, and 2 x nearest is then the largest cylinder on
///    it clear of the surface. Otherwise 2 x nearest measures nothing (the nearest point of a
///    surface the axis lies outside of), and D - 2 max|e| is taken: a cylinder of that size on
///    the true-position axis lies inside the envelope, which is clear of every point, so it is
///    a lower bound of the clearance, and it is negative when the axis leaves the envelope.
///  * LMC, in the material: 2 x farthest (a cylinder containing every point contains their
///    convex hull, wherever its axis lies).
///  * Projected: D - 2 max|e| at MMC, D + 2 max|e| at LMC.
inline BoundaryClearance boundary_clearance(bool at_mmc, bool projected, bool surrounded,
                                            const BoundaryDistances& d) {
  if (projected)
    return {at_mmc ? d.envelope_diameter - d.envelope_reach
                   : d.envelope_diameter + d.envelope_reach,
            false};
  if (!at_mmc) return {2.0 * d.farthest, true};
  const double conservative = d.envelope_diameter - d.envelope_reach;
  if (surrounded && d.envelope_reach < d.envelope_diameter) return {2.0 * d.nearest, true};
  return {std::min(2.0 * d.nearest, conservative), false};
}

/// For people: how the clearance of boundary_clearance was found.
inline std::string boundary_basis(bool at_mmc, bool projected, bool surrounded,
                                  const BoundaryDistances& d) {
  if (projected)
    return at_mmc ? "mating envelope extended into the projected zone"
                  : "minimum material envelope extended into the projected zone";
  if (!at_mmc) return "farthest point";
  if (!(d.envelope_reach < d.envelope_diameter))
    return "the true-position axis lies outside the actual mating envelope at z = " +
           format_number(d.reach_height, 4) +
           ": the boundary cannot be clear (clearance = envelope - 2 x offset, negative)";
  if (!surrounded)
    return "the points do not surround the actual mating envelope's axis in every section: "
           "conservative clearance, envelope - 2 x offset of its axis";
  return "nearest point";
}

}  // namespace cylzone::detail
