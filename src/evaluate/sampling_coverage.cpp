// Sampling adequacy of a bore (evaluate/sampling_coverage.hpp states the method and sources;
// docs/evaluation.md, "Sampling adequacy", the rules and thresholds).
#include "cylzone/evaluate/sampling_coverage.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/sections.hpp"
#include "detail/fit_support.hpp"
#include "evaluate/detail/nearest_level.hpp"

namespace cylzone {
namespace {

std::string mm(double value) { return detail::format_number(value, 4); }

/// Coverages (degrees) this close count as equal when the worst section is named: far above
/// the rounding of an angle (1e-13 degrees) and far below anything a report prints.
constexpr double worst_tie_deg = 1e-9;

void add_warnings(SamplingCoverage& s, const SamplingOptions& options) {
  const SamplingThresholds& limit = options.thresholds;
  const double beyond = s.extrapolation_top + s.extrapolation_bottom;
  if (beyond > 0.0 && (!s.magnification || *s.magnification > limit.max_magnification)) {
    std::string w = "the depth range extends " + mm(s.extrapolation_top) + " mm above and " +
                    mm(s.extrapolation_bottom) + " mm below the probed band of " + mm(s.span()) +
                    " mm: the axis is extrapolated";
    if (!options.direction_fitted)
      w += " along the nominal direction it is held at: no fitted tilt is magnified";
    else if (!s.magnification)
      w += " from a single level";
    else
      w += ", and an error in its fitted tilt is magnified " +
           detail::format_number(*s.magnification, 2) + " times over the evaluated range (" +
           mm(s.range_top - s.range_bottom) + " mm evaluated, " + mm(s.span()) + " mm probed)";
    s.warnings.push_back(std::move(w));
  }
  if (s.coverage_deg < limit.min_coverage_deg) {
    s.warnings.push_back("the points cover an arc of only " + detail::format_number(s.coverage_deg, 1) +
                         " degrees about the axis (less than " +
                         detail::format_number(limit.min_coverage_deg, 1) +
                         "): the bore's position across the open side is weakly determined");
  } else if (!s.sections.empty() && s.worst_section_coverage_deg < limit.min_coverage_deg) {
    s.warnings.push_back("the section at " + mm(s.worst_section_height) + " mm covers an arc of only " +
                         detail::format_number(s.worst_section_coverage_deg, 1) +
                         " degrees (less than " + detail::format_number(limit.min_coverage_deg, 1) +
                         "): its circle, and the two-point sizes and median-line centre taken "
                         "from it, are weakly determined");
  }
  if (s.sparse_sections > 0) {
    s.warnings.push_back(std::to_string(s.sparse_sections) + " of " +
                         std::to_string(s.sections.size()) + " sections have fewer than " +
                         std::to_string(limit.min_section_points) + " points (fewest " +
                         std::to_string(s.section_points_min) +
                         "): a section circle needs 3, and its centre and form rest on few points");
  }
}

}  // namespace

SamplingCoverage sampling_coverage(const Eigen::Matrix3Xd& points, const Axis& axis,
                                   double range_top, double range_bottom,
                                   const SamplingOptions& options) {
  if (points.cols() == 0) throw FitError("sampling coverage: no points");
  if (!points.allFinite())
    throw FitError("sampling coverage: the points contain a non-finite coordinate");
  if (!(range_top > range_bottom) || !std::isfinite(range_top) || !std::isfinite(range_bottom))
    throw FitError("sampling coverage: the evaluated range is empty (top " + mm(range_top) +
                   " mm, bottom " + mm(range_bottom) + " mm)");
  const Eigen::Vector3d w = detail::checked_direction(axis.direction, "sampling axis direction");
  const Eigen::Matrix3d basis = detail::basis_from_direction(w);
  const Eigen::Matrix3Xd local = detail::local_coordinates(points, axis.point, basis);
  const auto n = static_cast<std::size_t>(points.cols());

  SamplingCoverage s;
  s.thresholds = options.thresholds;
  s.range_top = range_top;
  s.range_bottom = range_bottom;
  if (options.height_axis) {
    const Eigen::Vector3d h =
        detail::checked_direction(options.height_axis->direction, "sampling height direction");
    const Eigen::RowVectorXd along = h.transpose() * (points.colwise() - options.height_axis->point);
    s.span_top = along.maxCoeff();
    s.span_bottom = along.minCoeff();
  } else {
    s.span_top = local.row(2).maxCoeff();
    s.span_bottom = local.row(2).minCoeff();
  }
  s.extrapolation_top = std::max(0.0, range_top - s.span_top);
  s.extrapolation_bottom = std::max(0.0, s.span_bottom - range_bottom);
  if (s.span() > 0.0)
    s.magnification =
        (std::max(range_top, s.span_top) - std::min(range_bottom, s.span_bottom)) / s.span();

  detail::ArcCoverage all(n);
  for (std::size_t i = 0; i < n; ++i)
    all.add(local(0, static_cast<Eigen::Index>(i)), local(1, static_cast<Eigen::Index>(i)));
  s.coverage_deg = all.degrees();

  // Sections: the given ones (each point in the nearest, when within its half thickness), else
  // the probed levels (each point in its nearest level).
  std::vector<double> heights = options.section_heights;
  double half = options.section_half_thickness;
  if (heights.empty()) {
    heights = find_section_levels(points, axis, options.section_gap);
    half = std::numeric_limits<double>::infinity();
  }
  std::sort(heights.begin(), heights.end());
  const std::size_t m = heights.size();
  // Points come ring by ring or line by line in a file: the nearest level is first tried where
  // the previous point's was (detail::NearestLevelHint: nearest_level's index, checked). The
  // section of point i, m when it is in none.
  auto section_of = [&, nearest = detail::NearestLevelHint(heights)](std::size_t i) mutable {
    const double t = local(2, static_cast<Eigen::Index>(i));
    const std::size_t k = nearest(t);
    return std::abs(t - heights[k]) > half ? m : k;
  };
  // Each section's points in increasing order, one list (counted, then filled: a counting
  // sort by section). Each section's coverage is then accumulated from its own points alone,
  // in the order of the data as before, so each ArcCoverage sees the same points in the same
  // order and gives the same degrees; only one is alive at a time (a dense bore's sections
  // together held some 72 bytes a point, and each point touched a random one of them).
  std::vector<std::size_t> counts(m, 0), start(m + 1, 0);
  for (std::size_t i = 0; i < n; ++i) {
    const std::size_t k = section_of(i);
    if (k < m) ++counts[k];
  }
  for (std::size_t k = 0; k < m; ++k) start[k + 1] = start[k] + counts[k];
  std::vector<std::size_t> members(start[m]);
  {
    std::vector<std::size_t> next(start.begin(), start.end() - 1);
    for (std::size_t i = 0; i < n; ++i) {
      const std::size_t k = section_of(i);
      if (k < m) members[next[k]++] = i;
    }
  }
  std::vector<double> section_coverage(m, 0.0);
  for (std::size_t k = 0; k < m; ++k) {
    detail::ArcCoverage arc(counts[k]);
    for (std::size_t j = start[k]; j < start[k + 1]; ++j)
      arc.add(local(0, static_cast<Eigen::Index>(members[j])),
              local(1, static_cast<Eigen::Index>(members[j])));
    section_coverage[k] = arc.degrees();
  }
  std::vector<std::size_t>().swap(members);
  // A section is reported at the height (the span's measure) of the axis point it was cut at.
  const auto reported_height = [&](double t) {
    if (!options.height_axis) return t;
    const Eigen::Vector3d h = options.height_axis->direction.normalized();
    return h.dot(axis.point + t * w - options.height_axis->point);
  };
  for (std::size_t k = 0; k < m; ++k)
    s.sections.push_back({reported_height(heights[k]), counts[k], section_coverage[k]});
  std::stable_sort(s.sections.begin(), s.sections.end(),
                   [](const SectionSampling& a, const SectionSampling& b) {
                     return a.height < b.height;
                   });
  s.worst_section_coverage_deg = 360.0;
  for (const SectionSampling& section : s.sections) {
    s.worst_section_coverage_deg = std::min(s.worst_section_coverage_deg, section.coverage_deg);
    s.sparse_sections += section.points < options.thresholds.min_section_points;
  }
  // The worst section is the lowest within a rounding margin of the smallest coverage, so that
  // sections equal but for rounding (evenly spaced levels) do not swap with the part's
  // placement.
  for (const SectionSampling& section : s.sections)
    if (section.coverage_deg <= s.worst_section_coverage_deg + worst_tie_deg) {
      s.worst_section_height = section.height;
      break;
    }
  if (!counts.empty()) {
    std::vector<std::size_t> sorted = counts;
    std::sort(sorted.begin(), sorted.end());
    const std::size_t m = sorted.size();
    s.section_points_min = sorted.front();
    s.section_points_median = m % 2 == 1 ? static_cast<double>(sorted[m / 2])
                                         : 0.5 * static_cast<double>(sorted[m / 2 - 1] +
                                                                     sorted[m / 2]);
  } else {
    s.worst_section_coverage_deg = 0.0;
  }
  add_warnings(s, options);
  return s;
}

}  // namespace cylzone
