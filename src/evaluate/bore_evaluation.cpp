// Evaluation of one bore in the datum reference frame. docs/evaluation.md defines every figure
// and gives its source; the comments here say which definition a step implements.

#include "cylzone/evaluate/bore_evaluation.hpp"

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <numeric>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_line.hpp"
#include "cylzone/evaluate/material_condition.hpp"
#include "detail/fit_support.hpp"
#include "evaluate/detail/boundary_clearance.hpp"
#include "fit/detail/section_members.hpp"
#include "evaluate/detail/angle_order.hpp"
#include "evaluate/detail/half_turn_gap.hpp"
#include "evaluate/detail/height_order.hpp"
#include "evaluate/detail/nearest_level.hpp"
#include "evaluate/detail/zone_height.hpp"
#include "prepare/detail/stray_point_message.hpp"

namespace cylzone {
namespace {

constexpr double pi = 3.14159265358979323846;
/// "Where the axis leaves the zone" uses the zone the decision uses, rounding slack included.
constexpr double verdict_slack = zone_rounding_slack;
/// More probed levels than this, or levels thicker than the section gap, mean a scanned cloud.
constexpr std::size_t max_probed_levels = 50;
/// Heights within this distance (mm) of the range's ends count as inside it.
constexpr double range_slack = 1e-9;

std::string mm(double value) { return detail::format_number(value, 4); }

/// Runs `f`, prefixing any FitError with the bore's id ("bore P3: ...").
template <class F>
auto for_bore_id(const std::string& id, F&& f) -> decltype(f()) {
  try {
    return f();
  } catch (const FitError& error) {
    throw FitError("bore " + id + ": " + error.what());
  }
}
template <class F>
auto for_bore(const PlanBore& bore, F&& f) -> decltype(f()) {
  return for_bore_id(bore.id, std::forward<F>(f));
}

void take_warnings(std::vector<std::string>& out, const char* what, const FitSummary& summary) {
  for (const std::string& w : summary.warnings) out.push_back(std::string(what) + ": " + w);
  if (summary.status == FitStatus::iteration_limit)
    out.push_back(std::string(what) +
                  ": stopped at the iteration limit; the result is the best found, not proven "
                  "optimal");
}

/// Rotation about z by `angle` (radians).
Eigen::Matrix3d rotation_about_z(double angle) {
  return Eigen::AngleAxisd(angle, Eigen::Vector3d::UnitZ()).toRotationMatrix();
}

/// A point in zone coordinates (offset, height) back in the datum frame.
Eigen::Vector3d zone_to_frame(const ZoneFrame& zone, const AxisDeviation& d) {
  return zone.origin + zone.basis * Eigen::Vector3d(d.offset.x(), d.offset.y(), d.height);
}

AxisDeviation frame_to_zone(const ZoneFrame& zone, const Eigen::Vector3d& p) {
  const Eigen::Vector3d local = zone.basis.transpose() * (p - zone.origin);
  return {local.z(), local.head<2>()};
}

/// The toleranced axis as the position evaluation sees it: a straight line, or the derived
/// median line's points (section centres) within the range.
struct AxisGeometry {
  bool median = false;
  StraightAxis straight;
  std::vector<AxisDeviation> centres;
};

/// Position over [bottom, top] (ASME Y14.5-2018 7.2 / ISO 1101:2017 18.x, from memory for the
/// clause numbers): the whole axis must lie in the cylinder of diameter `allowed` about the
/// true-position axis, so value = 2 x the largest radial deviation over the range. For a
/// straight axis it is reached at an end (convexity); for the median line at a section centre.
PositionResult evaluate_position(const PlanTolerance& spec, double top, double bottom,
                                 bool projected, double bonus, const AxisGeometry& axis) {
  PositionResult r;
  r.spec = spec;
  r.range_top = top;
  r.range_bottom = bottom;
  r.projected = projected;
  r.bonus = bonus;
  r.allowed = spec.tolerance + bonus;
  // The zone used for "where does it leave" is the one the verdict uses, slack included.
  const double zone = r.allowed + verdict_slack;
  if (!axis.median) {
    r.value = position_over_range(axis.straight, top, bottom);
    r.top = axis.straight.at(top);
    r.bottom = axis.straight.at(bottom);
    r.worst = worst_end(axis.straight, top, bottom);
    r.leaves_zone_at = first_height_outside(axis.straight, top, bottom, zone);
  } else {
    std::vector<AxisDeviation> c = axis.centres;
    std::sort(c.begin(), c.end(),
              [](const AxisDeviation& a, const AxisDeviation& b) { return a.height > b.height; });
    r.section_centres = c;
    r.value = position_of_points(c);
    r.top = c.front();
    r.bottom = c.back();
    // The topmost centre within worst_tie_margin of the largest deviation (axis_zone.hpp).
    double largest = 0.0;
    for (const AxisDeviation& d : c) largest = std::max(largest, d.radial());
    r.worst = *std::find_if(c.begin(), c.end(), [&](const AxisDeviation& d) {
      return d.radial() >= largest - worst_tie_margin;
    });
    // The median line is known at the section centres; between two of them it is taken as the
    // straight segment joining them, so the height where it leaves is interpolated.
    const double r2 = 0.25 * zone * zone;
    for (std::size_t k = 0; k < c.size(); ++k) {
      if (c[k].offset.squaredNorm() <= r2) continue;
      if (k == 0 || c[k - 1].height == c[k].height) {
        r.leaves_zone_at = c[k].height;
      } else {
        StraightAxis segment;
        segment.slope = (c[k].offset - c[k - 1].offset) / (c[k].height - c[k - 1].height);
        segment.at_zero = c[k].offset - c[k].height * segment.slope;
        r.leaves_zone_at = first_height_outside(segment, c[k - 1].height, c[k].height, zone);
      }
      break;
    }
  }
  return r;
}

/// Section heights along the least-squares axis. Probed levels (CMM circles, on-machine probe
/// rings) are used as they are; a scanned cloud without distinct levels is cut into slabs.
struct SectionPlan {
  std::vector<double> heights;
  double half_thickness = 0.0;
  bool slabs = false;
};

SectionPlan plan_sections(const Eigen::Matrix3Xd& points, const Axis& axis,
                          const std::vector<detail::HeightKey>& by_height, double gap) {
  SectionPlan plan;
  // find_section_levels sorts the heights along axis.direction / |axis.direction|; when that is
  // axis.direction itself, to the bit, its heights are the ones sorted here (the same
  // expression, evaluate_bore's ls_height), and the sorted keys give the same levels.
  const double norm = axis.direction.norm();
  const Eigen::Vector3d unit = axis.direction / norm;
  std::vector<double> levels =
      norm > 0.0 && std::isfinite(norm) &&
              std::memcmp(unit.data(), axis.direction.data(), sizeof(double) * 3) == 0
          ? detail::levels_of_sorted_heights(
                by_height.size(), [&](std::size_t k) { return by_height[k].height; }, gap)
          : find_section_levels(points, axis, gap);
  std::sort(levels.begin(), levels.end());
  bool scanned = levels.size() > max_probed_levels || levels.empty();
  double largest_deviation = 0.0;
  if (!scanned) {
    // Span of every level: each point belongs to its nearest level.
    std::vector<double> lo(levels.size(), std::numeric_limits<double>::infinity());
    std::vector<double> hi(levels.size(), -std::numeric_limits<double>::infinity());
    // The heights come in increasing order: the nearest level by a cursor moving forward
    // (detail::NearestLevelCursor: nearest_level's index without a binary search per point).
    detail::NearestLevelCursor nearest(levels);
    for (const detail::HeightKey& key : by_height) {
      const double t = key.height;
      const std::size_t k = nearest(t);
      lo[k] = std::min(lo[k], t);
      hi[k] = std::max(hi[k], t);
      largest_deviation = std::max(largest_deviation, std::abs(t - levels[k]));
    }
    for (std::size_t k = 0; k < levels.size(); ++k)
      if (hi[k] - lo[k] > gap) scanned = true;
  }
  if (!scanned) {
    plan.heights = levels;
    // Every level is at most `gap` thick and more than `gap` from the next one, so this
    // thickness takes all points of a level and none of its neighbours.
    plan.half_thickness = 0.5 * (gap + largest_deviation);
    return plan;
  }
  plan.slabs = true;
  const double t0 = by_height.front().height, t1 = by_height.back().height;
  const std::size_t n = std::max<std::size_t>(1, static_cast<std::size_t>(std::ceil((t1 - t0) / gap)));
  const double thickness = (t1 - t0) / static_cast<double>(n);
  for (std::size_t k = 0; k < n; ++k) plan.heights.push_back(t0 + (k + 0.5) * thickness);
  plan.half_thickness = 0.5 * thickness;
  return plan;
}

struct TwoPointSizes {
  double min = 0.0;
  double max = 0.0;
  std::size_t count = 0;
};

/// Two-point (actual local) sizes (ISO 14405-1:2016 two-point size; ASME Y14.5-2018 actual
/// local size, from memory for the clause numbers): in each section every point is paired with
/// the point nearest the opposite direction about the section's least-squares centre, accepted
/// when that direction is matched within half the mean angular spacing; the size is the
/// distance of the two points in the section plane (the plane perpendicular to the section
/// axis, so slabs of a scanned cloud do not add their thickness to the size).
TwoPointSizes two_point_sizes(const Eigen::Matrix3Xd& points,
                              const std::vector<detail::HeightKey>& order,
                              const std::vector<SectionCircle>& sections, const Axis& axis,
                              double half_thickness) {
  TwoPointSizes out;
  out.min = std::numeric_limits<double>::infinity();
  out.max = 0.0;
  const Eigen::Matrix3d basis = detail::basis_from_direction(axis.direction);
  // Buffers shared by the sections (a Monte Carlo trial calls this for every bore).
  Eigen::Matrix2Xd uv;
  std::vector<std::pair<double, std::size_t>> by_angle;  // (angle, point of the section)
  std::vector<double> angle;                              // of the points, in section order
  std::vector<std::size_t> partner;  // the point each one is paired with; n: none
  std::vector<std::pair<double, std::size_t>> sort_scratch;
  std::vector<std::size_t> sort_start;
  for (const SectionCircle& section : sections) {
    // Points of the section: a contiguous run of the height-sorted order.
    const auto by_height = [](const detail::HeightKey& key, double h) { return key.height < h; };
    auto first = std::lower_bound(order.begin(), order.end(), section.height - half_thickness,
                                  by_height);
    auto last = std::lower_bound(first, order.end(),
                                 std::nextafter(section.height + half_thickness,
                                                std::numeric_limits<double>::infinity()),
                                 by_height);
    const std::size_t n = static_cast<std::size_t>(last - first);
    if (n < 2) continue;
    uv.resize(2, static_cast<Eigen::Index>(n));
    by_angle.resize(n);
    angle.resize(n);
    for (std::size_t k = 0; k < n; ++k)
      uv.col(static_cast<Eigen::Index>(k)) =
          basis.leftCols<2>().transpose() * (points.col(first[k].index) - section.circle.centre);
    // detail::polar_angles: polar_angle's bits, two points at a time.
    detail::polar_angles(uv.data(), n, angle.data());
    for (std::size_t k = 0; k < n; ++k) by_angle[k] = {angle[k], k};
    // Equal angles (coincident directions) in the order of the points (detail::sort_by_angle:
    // std::sort's order, by buckets).
    detail::sort_by_angle(by_angle, sort_start, sort_scratch);
    const double acceptance = 0.5 * (2.0 * pi / static_cast<double>(n)) * (1.0 + 1e-9);
    // Each point's opposite direction, in the order of its angle: the targets rise, but for one
    // wrap past 2 pi, so the first angle not below each (the lower bound) is found by a pointer
    // that only moves forward and starts again at the wrap: one pass instead of a binary
    // search per point, the same positions.
    partner.assign(n, n);
    std::size_t at = 0;
    double previous = -std::numeric_limits<double>::infinity();
    for (std::size_t p = 0; p < n; ++p) {
      const std::size_t i = by_angle[p].second;
      double target = by_angle[p].first + pi;
      if (target >= 2.0 * pi) target -= 2.0 * pi;
      if (target < previous) at = 0;
      previous = target;
      while (at < n && by_angle[at].first < target) ++at;
      std::size_t best = n;
      double best_gap = std::numeric_limits<double>::infinity();
      // The lower bound and its predecessor, cyclically (at is in [0, n]; no division).
      for (std::size_t candidate : {at == n ? 0 : at, (at == 0 ? n : at) - 1}) {
        double gap = std::abs(by_angle[candidate].first - target);
        gap = std::min(gap, 2.0 * pi - gap);
        if (gap < best_gap) {
          best_gap = gap;
          best = by_angle[candidate].second;
        }
      }
      if (best == n || best == i || best_gap > acceptance) continue;
      partner[i] = best;
    }
    // Every pair {i, partner[i]} once: a pair both points chose is counted from its lower one.
    for (std::size_t i = 0; i < n; ++i) {
      const std::size_t j = partner[i];
      if (j == n || (j < i && partner[j] == i)) continue;
      const double size =
          (uv.col(static_cast<Eigen::Index>(i)) - uv.col(static_cast<Eigen::Index>(j))).norm();
      out.min = std::min(out.min, size);
      out.max = std::max(out.max, size);
      ++out.count;
    }
  }
  if (out.count == 0) out.min = 0.0;
  return out;
}

/// The nominal direction, unit, pointing out of the material (+z side of A) so that heights
/// inside the material are negative.
Eigen::Vector3d nominal_direction(const PlanBore& bore) {
  const double length = bore.nominal_direction.norm();
  if (!(length > 0.0) || !bore.nominal_direction.allFinite())
    throw FitError("bore " + bore.id + ": the nominal direction has zero length");
  Eigen::Vector3d w = bore.nominal_direction / length;
  if (std::abs(w.z()) < 1e-6)
    throw FitError("bore " + bore.id +
                   ": the nominal direction is parallel to datum plane A; a zone relative to A "
                   "cannot be evaluated along it");
  if (w.z() < 0.0) w = -w;
  return w;
}

void check_limits(const PlanBore& bore, const PlanTolerance& spec) {
  if (spec.condition != MaterialCondition::rfs && !bore.size)
    throw InputError("", bore.where.line,
                     "a tolerance at " + std::string(condition_name(spec.condition)) +
                         " needs the bore's size limits",
                     spec.where.key.empty() ? bore.where.key : spec.where.key);
}

/// The bore's own depth range in heights: the plan's depth (frame z / w_z), else the probed
/// extent. Throws FitError when it is empty.
std::pair<double, double> own_range(const PlanBore& bore, const BoreResult& result) {
  const double wz = result.zone.basis(2, 2);
  const double top = bore.depth_top ? *bore.depth_top / wz : result.probed_top;
  const double bottom = bore.depth_bottom ? *bore.depth_bottom / wz : result.probed_bottom;
  if (!(top > bottom))
    throw FitError("bore " + bore.id + ": the depth range is empty (top " + mm(top) + ", bottom " +
                   mm(bottom) + ")");
  return {top, bottom};
}

/// Where own_range() took its ends from.
RangeSource own_range_source(const PlanBore& bore) {
  const int from_plan = bore.depth_top.has_value() + bore.depth_bottom.has_value();
  return from_plan == 2   ? RangeSource::plan_depth
         : from_plan == 1 ? RangeSource::plan_depth_and_probed
                          : RangeSource::probed_extent;
}

/// Everything that depends on the frame: the toleranced axis (2.) in the zone, tilt (10.),
/// position (5.) and perpendicularity (6.). Needs the fits, the sections, the zone and the
/// probed extent in `result`; used by evaluate_bore and moved_to_frame.
void evaluate_in_zone(BoreResult& result, const PlanBore& bore, const FitOptions& fit) {
  const Eigen::Vector3d w = result.zone.basis.col(2);
  const auto [own_top, own_bottom] = own_range(bore, result);
  AxisGeometry geometry;
  std::vector<AxisDeviation> all_centres;
  switch (bore.axis) {
    case BoreAxisMethod::mating_envelope:
      result.axis = result.mating_envelope.axis;
      break;
    case BoreAxisMethod::least_squares:
      result.axis = result.least_squares.axis;
      break;
    case BoreAxisMethod::median_line: {
      // Derived median line: the section centres (ISO 1101:2017, ISO 17450-3); its
      // least-squares line is reported as the axis and gives the tilt.
      if (result.sections.size() < 2)
        throw FitError("bore " + bore.id + ": the median line needs at least 2 sections, found " +
                       std::to_string(result.sections.size()));
      Eigen::Matrix3Xd centres(3, static_cast<Eigen::Index>(result.sections.size()));
      for (std::size_t k = 0; k < result.sections.size(); ++k) {
        centres.col(static_cast<Eigen::Index>(k)) = result.sections[k].circle.centre;
        all_centres.push_back(frame_to_zone(result.zone, result.sections[k].circle.centre));
      }
      FitOptions line_options = fit;
      line_options.fixed_direction.reset();
      line_options.axis_hint = w;
      result.axis = for_bore(bore, [&] { return fit_line_least_squares(centres, line_options); }).axis;
      geometry.median = true;
      break;
    }
  }
  result.axis_in_zone = for_bore(bore, [&] { return StraightAxis::from_axis(result.axis, result.zone); });
  geometry.straight = result.axis_in_zone;
  result.tilt.angle_rad = result.axis_in_zone.tilt_rad();
  result.tilt.azimuth_deg = result.axis_in_zone.tilt_azimuth_deg();

  const auto centres_in = [&](double top, double bottom) {
    std::vector<AxisDeviation> in;
    for (const AxisDeviation& c : all_centres)
      if (c.height <= top + range_slack && c.height >= bottom - range_slack) in.push_back(c);
    if (geometry.median && in.empty())
      throw FitError("bore " + bore.id + ": no section of the median line lies within the depth "
                     "range " + mm(bottom) + " to " + mm(top));
    return in;
  };

  // Bonus for both position and perpendicularity comes from the UNRELATED actual mating
  // envelope (MMC) or the unrelated minimum material envelope (LMC): ASME Y14.5-2009 and -2018
  // apply position and orientation tolerances at MMC to the unrelated AME's axis and size
  // (from memory for the clause; docs/evaluation.md explains the choice and the surface check
  // of evaluate_bore, which covers the related condition).
  const auto bonus_for = [&](const PlanTolerance& spec) {
    check_limits(bore, spec);
    return bore.size ? bonus_tolerance(spec.condition, FeatureKind::bore, *bore.size,
                                       result.mating_envelope.diameter(),
                                       result.minimum_material.diameter())
                     : 0.0;
  };

  // Position over the full depth, or over a projected zone above A.
  result.position.reset();
  if (bore.position) {
    const PlanTolerance& spec = *bore.position;
    const bool projected = spec.projected_height.has_value();
    if (projected && geometry.median)
      throw FitError("bore " + bore.id + ": a projected tolerance zone needs a straight axis; the "
                     "derived median line has no extension above A");
    if (projected && !(*spec.projected_height > 0.0))
      throw FitError("bore " + bore.id + ": the projected height must be positive");
    // Projected zone (ASME Y14.5-2018 7.4.1; ISO 1101:2017 with ISO 10578 for the projected
    // zone, from memory): the zone lies above A, out of the material, and the straight axis is
    // extended into it.
    // The zone stands on datum plane A (z = 0) or on the face the plan names (a boss, a
    // spot face), whose height is projected_from.
    const double base = spec.projected_from.value_or(0.0);
    const double top = projected ? base + *spec.projected_height : own_top;
    const double bottom = projected ? base : own_bottom;
    if (geometry.median) geometry.centres = centres_in(top, bottom);
    result.position = evaluate_position(spec, top, bottom, projected, bonus_for(spec), geometry);
    result.position->range_source =
        projected ? RangeSource::projected_zone : own_range_source(bore);
  }

  // Perpendicularity to A over the bore's own depth (never projected).
  result.perpendicularity.reset();
  if (bore.perpendicularity) {
    const PlanTolerance& spec = *bore.perpendicularity;
    PerpendicularityResult p;
    p.spec = spec;
    p.range_top = own_top;
    p.range_bottom = own_bottom;
    p.value = geometry.median ? perpendicularity_of_points(centres_in(own_top, own_bottom))
                              : perpendicularity_over_range(result.axis_in_zone, own_top, own_bottom);
    p.bonus = bonus_for(spec);
    p.allowed = spec.tolerance + p.bonus;
    result.perpendicularity = p;
  }
}

/// The plan's section gap for this bore, when it gives one, else the option's.
double section_gap_of(const PlanBore& bore, const BoreEvaluationOptions& options) {
  return bore.section_gap.value_or(options.section_gap);
}

/// Whether the points `kept` surround `axis` in every section of `plan` that holds three or
/// more of them: a point lies inside the convex hull of planar points exactly when no half-plane
/// through it holds them all, that is when the largest angular gap between them, seen from it,
/// is below 180 degrees. A section with fewer points cannot show it and is not counted; with
/// none counted, the answer is no (the clearance is then the conservative envelope figure).
/// Each section is first decided without angles (detail::HalfTurnGap, the same decision
/// wherever it is clear); only a section it leaves undecided has its points' angles sorted.
bool surrounds_axis(const Eigen::Matrix3Xd& points, const std::vector<Eigen::Index>& kept,
                    const Axis& axis, const std::vector<double>& ls_height,
                    const SectionPlan& plan) {
  const Eigen::Matrix3d basis = detail::basis_from_direction(axis.direction);
  const std::size_t none = plan.heights.size();
  // The section of kept point i (`none`: in no section) and its coordinates about the axis.
  // The points come in their order in the data, ring by ring when probed: the nearest level is
  // first tried where the previous point's was (detail::NearestLevelHint: nearest_level's index).
  detail::NearestLevelHint nearest(plan.heights);
  const auto locate = [&](Eigen::Index i, Eigen::Vector3d& q) {
    if (plan.heights.empty()) return none;
    const double t = ls_height[static_cast<std::size_t>(i)];
    const std::size_t k = nearest(t);
    if (std::abs(t - plan.heights[k]) > plan.half_thickness) return none;
    q = basis.transpose() * (points.col(i) - axis.point);
    return k;
  };
  std::vector<detail::HalfTurnGap> gaps(plan.heights.size());
  Eigen::Vector3d q;
  for (Eigen::Index i : kept) {
    const std::size_t k = locate(i, q);
    if (k != none) gaps[k].add(q.x(), q.y());
  }
  std::size_t counted = 0;
  std::vector<char> undecided(plan.heights.size(), 0);
  bool any_undecided = false;
  for (std::size_t k = 0; k < gaps.size(); ++k) {
    if (gaps[k].count() < 3) continue;
    ++counted;
    const detail::HalfTurnGap::Verdict v = gaps[k].verdict();
    if (v == detail::HalfTurnGap::Verdict::not_below) return false;
    if (v == detail::HalfTurnGap::Verdict::undecided) {
      undecided[k] = 1;
      any_undecided = true;
    }
  }
  if (!any_undecided) return counted > 0;
  // The sections left undecided: their points' angles, sorted, and the largest gap.
  std::vector<std::vector<double>> angles(plan.heights.size());
  for (Eigen::Index i : kept) {
    const std::size_t k = locate(i, q);
    // polar_angle: atan2 on [0, 2 pi) to 1e-15 rad at a fraction of its cost (fit_support.hpp).
    if (k != none && undecided[k]) angles[k].push_back(detail::polar_angle(q.x(), q.y()));
  }
  for (std::vector<double>& a : angles) {
    if (a.size() < 3) continue;
    std::sort(a.begin(), a.end());
    double gap = a.front() + 2.0 * pi - a.back();
    for (std::size_t j = 1; j < a.size(); ++j) gap = std::max(gap, a[j] - a[j - 1]);
    if (!(gap < pi)) return false;
  }
  return counted > 0;
}

/// Checks what evaluation needs before any fit; returns the nominal direction.
Eigen::Vector3d checked_bore(const PlanBore& bore, const Eigen::Matrix3Xd& points,
                             const BoreEvaluationOptions& options) {
  if (!(section_gap_of(bore, options) > 0.0))
    throw FitError("bore " + bore.id + ": the section gap must be positive");
  if (!points.allFinite())
    throw FitError("bore " + bore.id + ": the points contain a non-finite coordinate");
  return nominal_direction(bore);
}

/// Whether a least-squares cylinder fitted with options `a` is the one options `b` fit on the
/// same points: every option a fit reads is the same, and neither starts from an earlier fit
/// (threads aside: no fit's result depends on them). A field added to FitOptions must be
/// added here.
bool same_least_squares_options(const FitOptions& a, const FitOptions& b) {
  return a.max_iterations == b.max_iterations && a.step_tolerance == b.step_tolerance &&
         a.axis_hint == b.axis_hint && a.fixed_direction == b.fixed_direction &&
         a.use_point_vectors == b.use_point_vectors &&
         a.coverage_warning_deg == b.coverage_warning_deg &&
         a.result_coverage == b.result_coverage && a.result_messages == b.result_messages &&
         a.assess_ambiguity == b.assess_ambiguity &&
         a.lp_solver == b.lp_solver && !a.start && !b.start;
}

/// Fit options of a bore's associated cylinders: started from and signed by its nominal
/// direction `w`; the direction free, or held at `w` when the plan says `axis_direction =
/// "nominal"` (every cylinder fit and the sections then honour FitOptions::fixed_direction).
FitOptions free_axis_options(const PlanBore& bore, const FitOptions& fit,
                             const Eigen::Vector3d& w) {
  FitOptions free_axis = fit;
  free_axis.fixed_direction.reset();
  free_axis.axis_hint = w;
  if (bore.axis_direction == AxisDirection::nominal) free_axis.fixed_direction = w;
  return free_axis;
}

/// Heights of the points along the zone's w axis (row 2 of basis^T (p - origin)): the bits of
/// the whole product, without its 3 x n copy (detail::zone_heights_into).
Eigen::VectorXd zone_heights(const Eigen::Matrix3Xd& points, const ZoneFrame& zone) {
  Eigen::VectorXd heights;
  detail::zone_heights_into(points, zone.origin, zone.basis, heights);
  return heights;
}

/// Frees the per-point residual values of a bore's fits and section circles
/// (BoreEvaluationOptions::residuals_kept_up_to); rms and form stay.
void release_point_residuals(BoreResult& result) {
  for (CylinderFit* fit : {&result.least_squares, &result.mating_envelope, &result.related_envelope,
                           &result.minimum_material, &result.minimum_zone})
    fit->residuals.values = Eigen::VectorXd();
  for (SectionCircle& s : result.sections) s.circle.residuals.values = Eigen::VectorXd();
}

}  // namespace

PrepareOptions bore_prepare_options(const PlanBore& bore, const BoreEvaluationOptions& options) {
  PrepareOptions prepare;
  prepare.stray_screen = options.stray_screen;
  prepare.stray_points = options.stray_points;
  prepare.fit = free_axis_options(bore, options.fit, nominal_direction(bore));
  return prepare;
}

BoreResult evaluate_bore(const PlanBore& bore, const Eigen::Matrix3Xd& points,
                         const BoreEvaluationOptions& options) {
  checked_bore(bore, points, options);
  PointCloud cloud;
  cloud.points = points;
  const PreparedFeature prepared = for_bore(bore, [&] {
    return prepare_feature(FeatureKind::bore, cloud, bore_prepare_options(bore, options));
  });
  return evaluate_bore(BoreInput{bore, prepared}, options);
}

BoreResult evaluate_bore(const BoreInput& input, const BoreEvaluationOptions& options) {
  const PlanBore& bore = input.plan;
  const Eigen::Matrix3Xd& points = input.prepared.cloud.points;
  BoreResult result;
  result.id = bore.id;
  result.axis_method = bore.axis;
  const Eigen::Vector3d w = checked_bore(bore, points, options);
  const double section_gap = section_gap_of(bore, options);
  std::vector<std::string>& warnings = result.warnings;

  // ---- 1. Associated cylinders (fit_cylinder.hpp; docs/methods.md).
  const FitOptions free_axis = free_axis_options(bore, options.fit, w);
  result.direction_held = bore.axis_direction == AxisDirection::nominal;
  FitOptions related = free_axis;
  related.fixed_direction = w;
  // What the characteristics read (BoreEvaluationOptions::unread_results): the rest is
  // skipped when asked.
  const bool all = options.unread_results;
  const auto at = [](const std::optional<PlanTolerance>& t, MaterialCondition c) {
    return t && t->condition == c;
  };
  const bool lmc = at(bore.position, MaterialCondition::lmc) ||
                   at(bore.perpendicularity, MaterialCondition::lmc);
  const bool want_related = all || (!at(bore.position, MaterialCondition::mmc) &&
                                    at(bore.perpendicularity, MaterialCondition::mmc));
  const bool have_minimum_material = all || lmc || !options.two_point_sizes;
  // With BoreInput::start (FitOptions::start): the least-squares cylinder starts from the
  // earlier one; the Chebyshev cylinders with a free axis from this least-squares cylinder,
  // which is the start they would compute for themselves (so their descent is the same), with
  // their earlier counterparts' contacts to try first.
  const auto from = [&](const FitOptions& fit, const CylinderFit BoreResult::*earlier) {
    if (!input.start || (input.start->*earlier).summary.point_count == 0) return fit;
    FitOptions started = fit;
    if (earlier == &BoreResult::least_squares) {
      started.start = fit_start(input.start->least_squares);
    } else {
      started.start = fit_start(result.least_squares);
      started.start->contacts = (input.start->*earlier).summary.contacts;
      started.start->point_count = (input.start->*earlier).summary.point_count;
    }
    return started;
  };
  // A dense bore's per-point residual values are released as soon as their last reader is done
  // (BoreEvaluationOptions::residuals_kept_up_to), not when the bore is done: each fit's values
  // would otherwise stay alive through the later fits, the sections and the boundary points,
  // which is when two large bores evaluated at once set a scan's peak memory. rms and form
  // stay; every reader below gets the same values as before.
  const bool release_values = static_cast<std::size_t>(points.cols()) > options.residuals_kept_up_to;
  const auto release = [&](CylinderFit& fit) {
    if (release_values) fit.residuals.values = Eigen::VectorXd();
  };
  // The zone frame is the plan's (basic location, nominal direction): known before any fit.
  result.zone = ZoneFrame::at(bore.basic_location, w);
  // ---- Suspect points from the prepare record (prepare.hpp: the stray-point screen on the
  // least-squares residuals). The mating envelopes rest on extreme points, so a suspect point
  // that is one of their contacts is named: the size (and, for this axis method, the axis)
  // then rest on it. Nothing is removed; every figure below uses all points. Each envelope's
  // contacts are found as soon as it is fitted, from its residual values.
  result.stray_points = input.prepared.record.stray_points;
  const bool suspects = !result.stray_points.points.empty();
  const auto contacts_of = [&](const CylinderFit& envelope) {
    return suspect_contacts(result.stray_points, envelope.residuals.values, ContactSide::lowest);
  };
  std::vector<std::size_t> actual;
  std::optional<std::vector<std::size_t>> related_contacts;
  for_bore(bore, [&] {
    const FitOptions ls_options = from(free_axis, &BoreResult::least_squares);
    // The preparation's cylinder when it is this fit: the same points (the prepared cloud)
    // and the same options give the same bits, so it is taken rather than fitted again.
    const std::optional<PreparedLeastSquares>& prepared = input.prepared.least_squares;
    result.least_squares =
        prepared && prepared->fit.summary.point_count == static_cast<std::size_t>(points.cols()) &&
                same_least_squares_options(prepared->options, ls_options)
            ? prepared->fit
            : fit_cylinder_least_squares(points, ls_options);
  });
  // The unrolled surface for the report: the least-squares residuals just computed (one per
  // point, finite: checked_bore), binned; no other step reads them.
  if (all && result.least_squares.residuals.values.size() == points.cols())
    result.surface_map = radial_deviation_map(points, result.least_squares.residuals.values,
                                              result.least_squares.axis, result.zone,
                                              options.surface_map);
  release(result.least_squares);
  for_bore(bore, [&] {
    // Unrelated actual mating envelope of a hole: the largest inscribed cylinder, free axis.
    result.mating_envelope =
        fit_cylinder_maximum_inscribed(points, from(free_axis, &BoreResult::mating_envelope));
  });
  if (suspects) actual = contacts_of(result.mating_envelope);
  release(result.mating_envelope);
  if (want_related) {
    // Related actual mating envelope, constrained in orientation to the nominal direction
    // (from its own start: a circle in the plane across the held direction, found anew).
    for_bore(bore, [&] { result.related_envelope = fit_cylinder_maximum_inscribed(points, related); });
    if (suspects) related_contacts = contacts_of(result.related_envelope);
    release(result.related_envelope);
  }
  for_bore(bore, [&] {
    // Actual minimum material envelope of a hole: the smallest circumscribed cylinder.
    if (have_minimum_material)
      result.minimum_material = fit_cylinder_minimum_circumscribed(
          points, from(free_axis, &BoreResult::minimum_material));
  });
  release(result.minimum_material);
  for_bore(bore, [&] {
    if (all || bore.cylindricity)
      result.minimum_zone =
          fit_cylinder_minimum_zone(points, from(free_axis, &BoreResult::minimum_zone));
  });
  release(result.minimum_zone);
  take_warnings(warnings, "least-squares cylinder", result.least_squares.summary);
  take_warnings(warnings, "actual mating envelope", result.mating_envelope.summary);
  take_warnings(warnings, "related mating envelope", result.related_envelope.summary);
  take_warnings(warnings, "minimum material envelope", result.minimum_material.summary);
  take_warnings(warnings, "minimum-zone cylinder", result.minimum_zone.summary);

  if (suspects) {
    // An envelope not fitted has no residual values: its contacts are asked for here, as
    // suspect_contacts rules for that case.
    if (!related_contacts) related_contacts = contacts_of(result.related_envelope);
    const bool axis_rests = bore.axis == BoreAxisMethod::mating_envelope;
    std::vector<detail::SuspectContact> contacts;
    if (!actual.empty() && actual == *related_contacts) {
      contacts.push_back({actual, "the actual and the related mating envelopes",
                          axis_rests ? "the mating sizes and the axis rest on"
                                     : "the mating sizes rest on"});
    } else {
      contacts.push_back({actual, "the actual mating envelope",
                          axis_rests ? "the mating size and axis rest on" : "the mating size rests on"});
      contacts.push_back({*related_contacts, "the related mating envelope",
                          "the related mating size rests on"});
    }
    warnings.push_back(detail::stray_point_message(result.stray_points, contacts,
                                                   "verdicts use all points: review the data"));
  }

  // ---- Sections along the least-squares axis (ISO 17450-3: sections perpendicular to the
  // associated cylinder's axis, least-squares circles).
  const Axis& ls_axis = result.least_squares.axis;
  const Eigen::Index n = points.cols();
  std::vector<double> ls_height(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i)
    ls_height[static_cast<std::size_t>(i)] = ls_axis.direction.dot(points.col(i) - ls_axis.point);
  // The points by height along it (detail::order_by_height: std::sort's order of the indices).
  std::vector<detail::HeightKey> order = detail::order_by_height(ls_height);
  const SectionPlan section_plan =
      for_bore(bore, [&] { return plan_sections(points, ls_axis, order, section_gap); });
  SectionOptions section_options;
  section_options.half_thickness = section_plan.half_thickness;
  section_options.min_points = std::max<std::size_t>(3, options.min_section_points);
  section_options.fit = options.fit;
  SectionsResult sections = for_bore(bore, [&] {
    return fit_sections_least_squares(points, ls_axis, section_plan.heights, section_options);
  });
  result.sections = std::move(sections.sections);
  // No step reads the circles' residual values (their rms and form stay).
  if (release_values)
    for (SectionCircle& s : result.sections) s.circle.residuals.values = Eigen::VectorXd();
  for (const std::string& warning : sections.summary.warnings)
    warnings.push_back("sections: " + warning);
  if (result.sections.size() < 3)
    warnings.push_back("only " + std::to_string(result.sections.size()) +
                       " sections with enough points: the two-point sizes" +
                       (bore.axis == BoreAxisMethod::median_line ? " and the median line" : "") +
                       " rest on few cross-sections");

  // ---- 3. Zone frame (set above); 4. the probed extent and the bore's own depth range.
  Eigen::VectorXd zone_height = zone_heights(points, result.zone);
  result.probed_top = zone_height.maxCoeff();
  result.probed_bottom = zone_height.minCoeff();
  const auto [own_top, own_bottom] = own_range(bore, result);
  result.depth_source = own_range_source(bore);

  // ---- 2., 5., 6., 10. The toleranced axis, position, perpendicularity, tilt.
  evaluate_in_zone(result, bore, options.fit);

  // ---- Sampling adequacy (sampling_coverage.hpp). The zone applies over the full depth, so a
  // short extrapolation beyond the probed band (a probe cannot reach the very edge) is normal
  // and shown in the report's depth table; beyond the plan's threshold it is warned about with
  // the factor it magnifies a tilt error by. Heights along the nominal direction (those of the
  // range); the sections the evaluation cut and the angles about the least-squares axis.
  if (all) {
    SamplingOptions sampling;
    const SamplingThresholds& given = options.sampling;
    sampling.thresholds.min_section_points =
        bore.sampling.min_section_points.value_or(given.min_section_points);
    sampling.thresholds.min_coverage_deg =
        bore.sampling.min_coverage_deg.value_or(given.min_coverage_deg);
    sampling.thresholds.max_magnification =
        bore.sampling.max_magnification.value_or(given.max_magnification);
    sampling.section_heights = section_plan.heights;
    sampling.section_half_thickness = section_plan.half_thickness;
    sampling.height_axis = Axis{result.zone.origin, w};
    sampling.direction_fitted = !result.direction_held;
    double top = own_top, bottom = own_bottom;
    if (result.position) {  // a projected zone reaches above A
      top = std::max(top, result.position->range_top);
      bottom = std::min(bottom, result.position->range_bottom);
    }
    result.sampling = for_bore(
        bore, [&] { return sampling_coverage(points, ls_axis, top, bottom, sampling); });
    for (const std::string& warning : result.sampling->warnings) warnings.push_back(warning);
  }
  const double mating_size = result.mating_envelope.diameter();

  // ---- 7. Size per Rule #1 (ASME Y14.5-2018 5.8, from memory) with two-point local sizes.
  SizeResult& size = result.size;
  size.limits = bore.size;
  size.least_squares = result.least_squares.diameter();
  size.mating_envelope = mating_size;
  size.related_mating_envelope = result.related_envelope.diameter();
  const TwoPointSizes local_sizes =
      options.two_point_sizes ? two_point_sizes(points, order, result.sections, ls_axis,
                                                section_plan.half_thickness)
                              : TwoPointSizes{};
  std::vector<detail::HeightKey>().swap(order);  // its last reader: freed before the boundary points
  // Without two-point sizes the upper limit rests on the minimum material envelope.
  if (!have_minimum_material && local_sizes.count == 0) {
    result.minimum_material =
        for_bore(bore, [&] { return fit_cylinder_minimum_circumscribed(points, free_axis); });
    take_warnings(warnings, "minimum material envelope", result.minimum_material.summary);
    release(result.minimum_material);
  }
  size.minimum_material_envelope = result.minimum_material.diameter();
  size.two_point_count = local_sizes.count;
  size.two_point_min = local_sizes.min;
  size.two_point_max = local_sizes.max;
  if (!options.two_point_sizes)
    warnings.push_back("two-point sizes not computed (switched off in the evaluation options): "
                       "the upper limit is checked with the minimum material envelope instead");
  else if (local_sizes.count == 0)
    warnings.push_back("no opposed point pairs in any section: no two-point sizes; the upper "
                       "limit is checked with the minimum material envelope instead");

  // ---- 8. Cylindricity: minimum-zone radial separation (ISO 12180-1; ASME Y14.5-2018 5.4.4).
  result.form.cylindricity = result.minimum_zone.residuals.form;
  result.form.tolerance = bore.cylindricity;

  // ---- 9. Virtual condition: the surface interpretation of a tolerance at MMC/LMC.
  const auto material_modified = [](const std::optional<PlanTolerance>& t) {
    return t && t->condition != MaterialCondition::rfs;
  };
  if (material_modified(bore.position) || material_modified(bore.perpendicularity)) {
    VirtualConditionResult vc;
    const bool on_position = material_modified(bore.position);
    const PlanTolerance& spec = on_position ? *bore.position : *bore.perpendicularity;
    const bool at_mmc = spec.condition == MaterialCondition::mmc;
    vc.boundary = virtual_condition(spec.condition, FeatureKind::bore, *bore.size, spec.tolerance);
    vc.on_true_position = on_position;
    vc.condition = spec.condition;
    if (on_position) {
      // On the true-position axis (detail/boundary_clearance.hpp gives the rule): the points
      // within the evaluated depth are kept, so that a moved frame can measure them again, and
      // whether they surround the mating envelope's axis is found once (a rigid motion of the
      // frame does not change it).
      if (!result.position->projected) {
        const double top = own_top + range_slack, bottom = own_bottom - range_slack;
        const auto within = [&](Eigen::Index i) {
          const double h = zone_height(i);
          return !(h > top || h < bottom);
        };
        // Counted first, so that the list is allocated once at its size.
        Eigen::Index count = 0;
        for (Eigen::Index i = 0; i < n; ++i) count += within(i) ? 1 : 0;
        std::vector<Eigen::Index> kept;
        kept.reserve(static_cast<std::size_t>(count));
        for (Eigen::Index i = 0; i < n; ++i)
          if (within(i)) kept.push_back(i);
        zone_height = Eigen::VectorXd();  // its last reader
        if (kept.empty())
          throw FitError("bore " + bore.id + ": no point lies within the depth range " +
                         mm(own_bottom) + " to " + mm(own_top));
        result.boundary_points.resize(3, static_cast<Eigen::Index>(kept.size()));
        for (std::size_t k = 0; k < kept.size(); ++k)
          result.boundary_points.col(static_cast<Eigen::Index>(k)) = points.col(kept[k]);
        if (at_mmc)
          vc.envelope_surrounded = surrounds_axis(points, kept, result.mating_envelope.axis,
                                                  ls_height, section_plan);
      }
      result.virtual_condition = vc;
      vc = virtual_condition_after_frame_motion(result, FrameMotion{});
      vc.motion.reset();
    } else {
      // Perpendicularity only: the boundary is perpendicular to A but free in location, so the
      // related envelope (orientation-constrained) is compared with it.
      if (at_mmc) {
        vc.clearance = result.related_envelope.diameter();
      } else {
        const CylinderFit outer =
            for_bore(bore, [&] { return fit_cylinder_minimum_circumscribed(points, related); });
        take_warnings(warnings, "related minimum material envelope", outer.summary);
        vc.clearance = outer.diameter();
      }
      vc.basis = at_mmc ? "related mating envelope" : "related minimum material envelope";
    }
    result.virtual_condition = vc;
  }
  if (static_cast<std::size_t>(n) > options.residuals_kept_up_to) release_point_residuals(result);
  return result;
}

VirtualConditionResult virtual_condition_after_frame_motion(const BoreResult& bore,
                                                            const FrameMotion& motion) {
  if (!bore.virtual_condition || !bore.virtual_condition->on_true_position || !bore.position)
    throw FitError("bore " + bore.id + ": it has no virtual condition on the true position");
  VirtualConditionResult vc = *bore.virtual_condition;
  const PositionResult& p = *bore.position;
  const bool at_mmc = vc.condition == MaterialCondition::mmc;
  // The moved frame, as position_after_frame_motion: p' = R^T (p - shift).
  const Eigen::Matrix3d r_t = rotation_about_z(motion.rotation_rad).transpose();
  const Eigen::Vector3d shift(motion.shift.x(), motion.shift.y(), 0.0);
  const CylinderFit& envelope = at_mmc ? bore.mating_envelope : bore.minimum_material;
  const Axis moved_axis{r_t * (envelope.axis.point - shift), r_t * envelope.axis.direction};
  const StraightAxis e =
      for_bore_id(bore.id, [&] { return StraightAxis::from_axis(moved_axis, bore.zone); });
  detail::BoundaryDistances d;
  d.envelope_diameter = envelope.diameter();
  d.envelope_reach = position_over_range(e, p.range_top, p.range_bottom);
  d.reach_height = worst_end(e, p.range_top, p.range_bottom).height;
  if (!p.projected) {
    if (bore.boundary_points.cols() == 0)
      throw FitError("bore " + bore.id + ": no point lies within the depth range");
    // Point by point, with no moved or local copy of the points (the same bits per point).
    d.nearest = std::numeric_limits<double>::infinity();
    detail::radial_range_after_motion(bore.boundary_points, r_t, shift, bore.zone.basis,
                                      bore.zone.origin, d.nearest, d.farthest);
  }
  const detail::BoundaryClearance clearance =
      detail::boundary_clearance(at_mmc, p.projected, vc.envelope_surrounded, d);
  vc.clearance = clearance.clearance;
  vc.conservative = !clearance.exact && !p.projected;
  vc.basis = detail::boundary_basis(at_mmc, p.projected, vc.envelope_surrounded, d);
  vc.motion = motion;
  return vc;
}

PositionResult position_after_frame_motion(const BoreResult& bore, const PlanBore& plan,
                                           const FrameMotion& motion) {
  if (!bore.position || !plan.position)
    throw FitError("bore " + bore.id + ": it has no position tolerance to re-evaluate");
  const PositionResult& before = *bore.position;
  // The moved frame: origin at `shift`, axes turned by `rotation_rad` about z (old frame
  // coordinates); a point p of the old frame has coordinates R^T (p - shift) in the new one.
  const Eigen::Matrix3d r_t = rotation_about_z(motion.rotation_rad).transpose();
  const Eigen::Vector3d shift(motion.shift.x(), motion.shift.y(), 0.0);
  const auto moved = [&](const Eigen::Vector3d& p) -> Eigen::Vector3d { return r_t * (p - shift); };
  AxisGeometry geometry;
  geometry.median = bore.axis_method == BoreAxisMethod::median_line;
  if (geometry.median) {
    for (const AxisDeviation& c : before.section_centres)
      geometry.centres.push_back(frame_to_zone(bore.zone, moved(zone_to_frame(bore.zone, c))));
    if (geometry.centres.empty())
      throw FitError("bore " + bore.id + ": the median line has no section centre to re-evaluate");
  } else {
    Axis axis;
    axis.point = moved(bore.axis.point);
    axis.direction = r_t * bore.axis.direction;
    geometry.straight = for_bore(plan, [&] { return StraightAxis::from_axis(axis, bore.zone); });
  }
  PositionResult after = evaluate_position(before.spec, before.range_top, before.range_bottom,
                                           before.projected, before.bonus, geometry);
  after.range_source = before.range_source;
  return after;
}

BoreResult moved_to_frame(const BoreResult& bore, const PlanBore& plan,
                          const Eigen::Matrix3d& rotation, const Eigen::Vector3d& translation) {
  // Least squares, minimum zone and both free mating envelopes are defined by distances
  // between the points and the element, which a rigid motion preserves: the moved element is
  // the element of the moved points. So is each section circle, because the sections are cut
  // perpendicular to the (moved) least-squares axis at the same heights along it.
  const auto move_point = [&](const Eigen::Vector3d& p) -> Eigen::Vector3d {
    return rotation * p + translation;
  };
  const auto move_axis = [&](const Axis& a) {
    return Axis{move_point(a.point), rotation * a.direction};
  };
  const auto move_cylinder = [&](CylinderFit& c) {
    c.axis = move_axis(c.axis);
    c.covariance.basis = rotation * c.covariance.basis;
  };
  BoreResult moved = bore;
  move_cylinder(moved.least_squares);
  move_cylinder(moved.mating_envelope);
  move_cylinder(moved.related_envelope);  // its size is not re-optimised for the new direction
  move_cylinder(moved.minimum_material);
  move_cylinder(moved.minimum_zone);
  for (SectionCircle& s : moved.sections) {
    s.circle.centre = move_point(s.circle.centre);
    s.circle.normal = rotation * s.circle.normal;
    s.circle.covariance.basis = rotation * s.circle.covariance.basis;
  }
  // The probed extent without the points: the heights of the toleranced axis' points at the
  // old extent, moved (exact for points on the axis; off it by the radius times the change of
  // tilt, a micro-radian effect).
  const Eigen::Vector3d w = bore.zone.basis.col(2);
  const auto moved_height = [&](double h) {
    const AxisDeviation d = bore.axis_in_zone.at(h);
    return w.dot(move_point(zone_to_frame(bore.zone, d)) - bore.zone.origin);
  };
  if (moved.boundary_points.cols() > 0)
    moved.boundary_points = (rotation * moved.boundary_points).colwise() + translation;
  moved.probed_top = moved_height(bore.probed_top);
  moved.probed_bottom = moved_height(bore.probed_bottom);
  evaluate_in_zone(moved, plan, FitOptions{});
  return moved;
}

}  // namespace cylzone
