#pragma once
/// \file sections.hpp
/// Cross-sections of a bore perpendicular to a given axis, and their least-squares circles: the
/// points of the derived (extracted) median line of ISO 1101, derived as ISO 17450-3 describes
/// (sections perpendicular to the associated cylinder's axis, least-squares circle centres).

#include <Eigen/Core>
#include <cstddef>
#include <vector>

#include "cylzone/fit/fit_circle.hpp"
#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

struct SectionOptions {
  /// Points with |height - h| <= half_thickness belong to the section at h.
  double half_thickness = 0.5;
  /// Sections with fewer points are skipped (and reported in the summary's warnings).
  std::size_t min_points = 5;
  FitOptions fit;  ///< fixed_direction is overridden by the section axis
};

struct SectionCircle {
  double height = 0.0;  ///< along the axis from axis.point
  CircleFit circle;     ///< circle.centre lies in the section plane at `height`
};

struct SectionsResult {
  std::vector<SectionCircle> sections;
  FitSummary summary;  ///< warnings name skipped sections
};

/// Least-squares circles in planes perpendicular to `axis` at the given heights.
SectionsResult fit_sections_least_squares(const Eigen::Matrix3Xd& points, const Axis& axis,
                                          const std::vector<double>& heights,
                                          const SectionOptions& options = {});

/// Heights of the probed levels: the axial coordinates of the points clustered wherever
/// consecutive sorted values are more than `gap` apart; each level is the cluster mean.
std::vector<double> find_section_levels(const Eigen::Matrix3Xd& points, const Axis& axis,
                                        double gap);

}  // namespace cylzone
