#pragma once
/// \file surface_map.hpp
/// The unrolled bore surface: each point's radial deviation from the least-squares cylinder,
/// placed by its angle about the axis and its height along the zone's nominal direction, and
/// averaged over a grid of modest size so that a report can draw it (angle against depth) and
/// stay small.
///
/// Method. The deviation of a point is its least-squares cylinder residual, distance from the
/// axis minus the radius (ISO 14405-1 / ISO 12180-1 reference cylinder, Gaussian association;
/// Forbes 1989, NPL DITC 140/89): positive where the bore is larger than the cylinder (material
/// missing), negative where material stands proud. The residuals are the fit's own
/// (CylinderFit::residuals), not recomputed. A cell holds the arithmetic mean of the residuals
/// of its points; a cell without points stays empty (count 0), it is never interpolated.
///
/// Coordinates (independent of how the part sat on the machine: all are taken in the datum
/// reference frame through the bore's zone frame, axis_zone.hpp):
///  * angle: about the cylinder's axis, from the zone's u axis (datum +x for a bore
///    perpendicular to A) toward v (+y), in degrees in [0, 360); the u and v axes are taken
///    perpendicular to the cylinder's axis before the angle is measured;
///  * height: along the zone's w axis from A (z in the datum frame for a perpendicular bore),
///    negative inside the material, as every depth in the reports.
/// Angle column k covers [k, k+1) x 360 / angle_cells degrees; depth row r covers the heights
/// from top - r x step down to top - (r+1) x step, step = (top - bottom) / depth_cells, with
/// [bottom, top] the points' height extent (a point exactly at the bottom falls in the last row).
/// A point within rounding of a cell edge may fall on either side of it when the part is placed
/// differently; the map is drawn, never decided on, so this moves a picture by one cell at most.

#include <Eigen/Core>
#include <cstddef>
#include <vector>

#include "cylzone/evaluate/axis_zone.hpp"
#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

struct SurfaceMapOptions {
  std::size_t angle_cells = 72;  ///< 5 degrees each
  std::size_t depth_cells = 40;
};

/// Mean radial deviation (mm) per cell, angle against depth. A plain value type.
struct SurfaceMap {
  std::size_t angle_cells = 0;
  std::size_t depth_cells = 0;
  double top = 0.0;     ///< height of the first row's upper edge (the highest point)
  double bottom = 0.0;  ///< height of the last row's lower edge (the lowest point)
  /// Row-major from the top row: mean[r * angle_cells + k]; 0 where count is 0.
  std::vector<double> mean;
  std::vector<std::size_t> count;  ///< points per cell, same layout
  std::size_t points = 0;          ///< points mapped
  double smallest = 0.0;           ///< smallest point deviation (not cell mean), mm
  double largest = 0.0;            ///< largest point deviation, mm

  bool empty(std::size_t row, std::size_t column) const {
    return count[row * angle_cells + column] == 0;
  }
  double at(std::size_t row, std::size_t column) const { return mean[row * angle_cells + column]; }
  /// Largest |mean| over the cells holding points (0 for an empty map).
  double largest_cell_magnitude() const;
};

/// Bins `deviations` (one per column of `points`, datum frame) by angle about `axis` and height
/// in `zone`. Throws std::invalid_argument when the counts differ, a grid size is 0 or a value
/// is not finite; an empty point set gives an empty grid of the requested size.
SurfaceMap radial_deviation_map(const Eigen::Matrix3Xd& points, const Eigen::VectorXd& deviations,
                                const Axis& axis, const ZoneFrame& zone,
                                const SurfaceMapOptions& options = {});

}  // namespace cylzone
