#pragma once
/// \file sampling_coverage.hpp
/// Sampling adequacy of a bore: where and how densely its points were taken, compared with the
/// range of heights its axis is judged over. A figure of the axis is only as good as the
/// points it rests on; this says, bore by bore, whether they can carry it. Values and warnings
/// only, no IO, no state; docs/evaluation.md ("Sampling adequacy") gives the rules.
///
/// Every figure is measured relative to the given axis (heights along it from its point, angles
/// about it), so it is invariant under a rigid motion of the points and the axis together: with
/// the bore's fitted axis, it does not depend on how the part sat on the machine.
///
/// Method and sources.
///  * Probed span and extrapolation. The points' heights along the axis give the probed span
///    [bottom, top]; the evaluated range beyond it at either end is extrapolated. A tilt error
///    dθ of the fitted axis changes the axis's lateral offset between two heights a distance Δz
///    apart by dθ·Δz (small-angle geometry). Over the probed span that change is at most dθ·S;
///    over the evaluated range joined with the span (length L) it is dθ·L. The magnification
///    L / S is therefore the factor by which the extrapolation enlarges the lateral error a
///    tilt error causes, relative to its size within the probed span (a bore probed over 5 mm
///    and judged over 40 mm: 8). For a long extrapolation it is optimistic: the variance of a
///    least-squares line's prediction at height z grows with (z - z̄)², the squared distance
///    from the points' centroid (Draper & Smith, Applied Regression Analysis, 3rd ed. 1998,
///    the variance of a predicted value; chapters from memory: 1 and 3), so the standard
///    uncertainty far beyond the span grows with the lever arm from the centroid (13 times
///    that at the span's ends in the example, for evenly spread points).
///  * Sections. The cross-sections the evaluation cut (probed levels, or slabs of a scanned
///    cloud; sections.hpp, find_section_levels), or, when none are given, the probed levels
///    found by find_section_levels with `section_gap`, each point counted in its nearest level.
///    A circle needs 3 points; form and a centre that is not pulled by one point's form error
///    need many more (ISO 12181-2 and ISO 12180-2 ask for a dense sampling for form, from
///    memory; the default of 8 per section is common practice for position and size of a
///    bore, not a figure of those standards).
///  * Angular coverage. 360 degrees minus the largest angular gap between the points' angles
///    about the axis (in the plane perpendicular to it), for all points and for each section:
///    the largest arc covered. Below 180 degrees every point lies in one half-plane through
///    the axis, and the centre across the open side is weakly determined (common practice;
///    docs/chebyshev.md shows the inscribed circle's unboundedness below it).

#include <Eigen/Core>
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// The limits below (or above) which the sampling is warned about. Plan keys of the same names
/// ([sampling] plan-wide, `sampling` in a bore), docs/plan.md.
struct SamplingThresholds {
  /// Fewer points than this in a section: warned (common practice; see the file comment).
  std::size_t min_section_points = 8;
  /// Angular coverage (degrees) below this, overall or in the worst section: warned.
  double min_coverage_deg = 180.0;
  /// Magnification of a tilt error above this: warned. 1.1 lets the evaluated range reach a
  /// tenth of the probed span beyond it (a probe cannot reach the very edges of a bore).
  double max_magnification = 1.1;
};

struct SamplingOptions {
  SamplingThresholds thresholds;
  /// Sections to count the points of, as heights along the axis with a half thickness: a point
  /// belongs to the section at h when |height - h| <= section_half_thickness. Empty: the probed
  /// levels of find_section_levels(points, axis, section_gap), each point in its nearest level.
  std::vector<double> section_heights;
  double section_half_thickness = 0.0;
  double section_gap = 0.5;  ///< mm; used only without section_heights
  /// The heights of the span and of the range along this axis instead of `axis` (e.g. the
  /// bore's nominal direction from datum A, the heights its zone is evaluated over), while the
  /// sections and angles stay relative to `axis` (the fitted axis the sections were cut across).
  std::optional<Axis> height_axis;
  /// False when the axis direction was not fitted but held (plan axis_direction = "nominal"):
  /// no tilt error is extrapolated, and the extrapolation warning says so.
  bool direction_fitted = true;
};

/// One section's sampling.
struct SectionSampling {
  double height = 0.0;        ///< along the axis
  std::size_t points = 0;
  double coverage_deg = 0.0;  ///< 360 minus the largest angular gap; 0 with fewer than 2 points
};

struct SamplingCoverage {
  /// Probed span: the extreme heights of the points along the axis (or the height axis; top >=
  /// bottom).
  double span_top = 0.0;
  double span_bottom = 0.0;
  /// The evaluated range as given (heights along the axis, top > bottom).
  double range_top = 0.0;
  double range_bottom = 0.0;
  /// How far the evaluated range reaches beyond the probed span at each end (>= 0).
  double extrapolation_top = 0.0;
  double extrapolation_bottom = 0.0;
  /// (length of the evaluated range joined with the probed span) / (probed span): the factor a
  /// tilt error's lateral effect grows by over the range (see the file comment). Empty when the
  /// span is zero (one level: no tilt can be fitted).
  std::optional<double> magnification;
  std::vector<SectionSampling> sections;  ///< in increasing height
  std::size_t section_points_min = 0;
  double section_points_median = 0.0;  ///< the mean of the two middle counts for an even number
  /// Sections with fewer points than SamplingThresholds::min_section_points.
  std::size_t sparse_sections = 0;
  double coverage_deg = 0.0;               ///< all points about the axis
  double worst_section_coverage_deg = 0.0; ///< the smallest of the sections' coverages
  double worst_section_height = 0.0;
  /// One line per finding, lengths as "<number> mm" (in_report_unit converts them), without
  /// the bore's name (the reports put it in front).
  std::vector<std::string> warnings;
  /// The thresholds the warnings were found with.
  SamplingThresholds thresholds;

  double span() const noexcept { return span_top - span_bottom; }
};

/// The sampling of `points` about `axis` against the evaluated range [range_bottom, range_top]
/// (heights along axis.direction from axis.point, or along options.height_axis). Throws
/// FitError when there are no points, a coordinate is not finite, an axis direction is zero or
/// the range is empty.
SamplingCoverage sampling_coverage(const Eigen::Matrix3Xd& points, const Axis& axis,
                                   double range_top, double range_bottom,
                                   const SamplingOptions& options = {});

}  // namespace cylzone
