// Cross-sections perpendicular to an axis and their least-squares circles: the extracted median
// line of ISO 1101 derived as ISO 17450-3 describes (sections perpendicular to the associated
// cylinder's axis, least-squares circle centres).
#include "cylzone/fit/sections.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "cylzone/core/errors.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {

SectionsResult fit_sections_least_squares(const Eigen::Matrix3Xd& points, const Axis& axis,
                                          const std::vector<double>& heights,
                                          const SectionOptions& options) {
  if (!(options.half_thickness > 0.0))
    throw FitError("section half thickness must be positive, got " +
                   detail::format_number(options.half_thickness, 6) + " mm");
  const Eigen::Vector3d w = detail::checked_direction(axis.direction, "section axis direction");
  const Eigen::RowVectorXd t = w.transpose() * (points.colwise() - axis.point);
  FitOptions circle_options = options.fit;
  circle_options.fixed_direction = w;
  if (!circle_options.axis_hint) circle_options.axis_hint = w;  // circle normals follow the axis

  SectionsResult result;
  result.summary.method = FitMethod::least_squares;
  std::vector<Eigen::Index> members;
  for (const double h : heights) {
    members.clear();
    for (Eigen::Index i = 0; i < t.size(); ++i)
      if (std::abs(t(i) - h) <= options.half_thickness) members.push_back(i);
    // Named only in a warning: formatting the height costs more than selecting the points.
    const auto where = [h] { return "section at height " + detail::format_number(h, 4) + " mm"; };
    if (members.size() < std::max<std::size_t>(options.min_points, 3)) {
      result.summary.warnings.push_back(where() + " skipped: " + std::to_string(members.size()) +
                                        " points within +/-" +
                                        detail::format_number(options.half_thickness, 4) +
                                        " mm, at least " +
                                        std::to_string(std::max<std::size_t>(options.min_points, 3)) +
                                        " needed");
      continue;
    }
    Eigen::Matrix3Xd selected(3, static_cast<Eigen::Index>(members.size()));
    for (std::size_t k = 0; k < members.size(); ++k)
      selected.col(static_cast<Eigen::Index>(k)) = points.col(members[k]);
    try {
      SectionCircle section;
      section.height = h;
      section.circle = fit_circle_least_squares(selected, circle_options);
      // The circle was fitted in the plane through its points' centroid; the section plane is
      // the one at height h (the same circle, moved along the axis).
      Eigen::Vector3d& c = section.circle.centre;
      c += (h - (c - axis.point).dot(w)) * w;
      if (section.circle.summary.status == FitStatus::iteration_limit)
        result.summary.status = FitStatus::iteration_limit;
      result.summary.iterations = std::max(result.summary.iterations,
                                           section.circle.summary.iterations);
      result.summary.point_count += members.size();
      for (const std::string& warning : section.circle.summary.warnings)
        result.summary.warnings.push_back(where() + ": " + warning);
      result.sections.push_back(std::move(section));
    } catch (const FitError& e) {
      result.summary.warnings.push_back(where() + " skipped: " + e.what());
    }
  }
  result.summary.message = std::to_string(result.sections.size()) + " of " +
                           std::to_string(heights.size()) + " sections fitted";
  return result;
}

std::vector<double> find_section_levels(const Eigen::Matrix3Xd& points, const Axis& axis,
                                        double gap) {
  if (!(gap > 0.0))
    throw FitError("section gap must be positive, got " + detail::format_number(gap, 6) + " mm");
  const Eigen::Vector3d w = detail::checked_direction(axis.direction, "section axis direction");
  std::vector<double> t(static_cast<std::size_t>(points.cols()));
  for (Eigen::Index i = 0; i < points.cols(); ++i)
    t[static_cast<std::size_t>(i)] = w.dot(points.col(i) - axis.point);
  std::sort(t.begin(), t.end());
  std::vector<double> levels;
  std::size_t first = 0;
  for (std::size_t i = 1; i <= t.size(); ++i) {
    if (i == t.size() || t[i] - t[i - 1] > gap) {
      double sum = 0.0;
      for (std::size_t k = first; k < i; ++k) sum += t[k] - t[first];
      levels.push_back(t[first] + sum / static_cast<double>(i - first));
      first = i;
    }
  }
  return levels;
}

}  // namespace cylzone
