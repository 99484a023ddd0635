// Probe-tip compensation (probe_compensation.hpp states the method, the vectors' sense and
// where it is exact).
#include "cylzone/prepare/probe_compensation.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {
namespace {

constexpr double pi = 3.14159265358979323846;

/// The unit normal out of the material (into the free space, toward the ball centre) of the
/// element fitted to the ball centres, at each point. Empty for a slot or tab (no element).
Eigen::Matrix3Xd fitted_outward_normals(FeatureKind kind, const PointCloud& cloud,
                                        const ProbeTipOptions& options) {
  const Eigen::Matrix3Xd& p = cloud.points;
  Eigen::Matrix3Xd normals(3, p.cols());
  switch (kind) {
    case FeatureKind::bore:
    case FeatureKind::pin: {
      // A hole's ball centres lie inside it: the free space is toward the axis; a pin's outside.
      const CylinderFit c = fit_cylinder_least_squares(p, options.fit);
      const Eigen::Vector3d w = c.axis.direction.normalized();
      const double sense = kind == FeatureKind::bore ? -1.0 : 1.0;
      for (Eigen::Index i = 0; i < p.cols(); ++i) {
        const Eigen::Vector3d d = p.col(i) - c.axis.point;
        const Eigen::Vector3d radial = d - w * w.dot(d);
        const double length = radial.norm();
        if (!(length > 0.0))
          throw FitError("a ball centre lies on the fitted axis: no radial direction to "
                         "compensate along");
        normals.col(i) = sense * radial / length;
      }
      return normals;
    }
    case FeatureKind::plane: {
      if (!options.outward) return {};
      const PlaneFit plane = fit_plane_least_squares(p, options.fit);
      const Eigen::Vector3d n =
          plane.normal.dot(*options.outward) < 0.0 ? Eigen::Vector3d(-plane.normal) : plane.normal;
      normals.colwise() = n.normalized();
      return normals;
    }
    case FeatureKind::slot:
    case FeatureKind::tab:
      break;
  }
  return {};
}

/// "line N" of point i when the cloud records lines, else "point #i+1".
std::string point_name(const PointCloud& cloud, Eigen::Index i) {
  const auto k = static_cast<std::size_t>(i);
  if (k < cloud.lines.size()) return "line " + std::to_string(cloud.lines[k]);
  return "point #" + std::to_string(k + 1);
}

std::size_t line_of(const PointCloud& cloud, Eigen::Index i) {
  const auto k = static_cast<std::size_t>(i);
  return k < cloud.lines.size() ? cloud.lines[k] : 0;
}

}  // namespace

std::string_view compensation_mode_name(CompensationMode mode) noexcept {
  switch (mode) {
    case CompensationMode::none: return "none";
    case CompensationMode::along_vectors: return "along-vectors";
    case CompensationMode::along_fitted_normal: return "along-fitted-normal";
  }
  return "none";
}

CompensatedPoints compensate_probe_tip(FeatureKind kind, const PointCloud& ball_centres,
                                       const ProbeTipOptions& options) {
  if (!(options.tip_diameter > 0.0) || !std::isfinite(options.tip_diameter))
    throw std::invalid_argument("compensate_probe_tip: the tip diameter must be positive and "
                                "finite, got " + std::to_string(options.tip_diameter));
  if (!(options.max_vector_angle_deg > 0.0 && options.max_vector_angle_deg < 90.0))
    throw std::invalid_argument("compensate_probe_tip: max_vector_angle_deg must be in (0, 90)");
  const double r = 0.5 * options.tip_diameter;
  const std::string& file = ball_centres.source;
  const bool vectors = options.use_vectors && ball_centres.has_vectors();
  if (!vectors && (kind == FeatureKind::slot || kind == FeatureKind::tab))
    throw InputError(file, 0,
                     "ball-centre points of a " + std::string(feature_kind_name(kind)) +
                         " need per-point vectors: its two faces' outward normals are not "
                         "known otherwise");
  if (!vectors && kind == FeatureKind::plane && !options.outward)
    throw InputError(file, 0,
                     "ball-centre points of a plane need per-point vectors or the plane's "
                     "material side");

  CompensatedPoints out;
  out.cloud = ball_centres;
  out.record.tip_diameter = options.tip_diameter;
  out.record.points = ball_centres.size();
  const Eigen::Index n = ball_centres.points.cols();
  if (n == 0) return out;
  const Eigen::Matrix3Xd fitted = fitted_outward_normals(kind, ball_centres, options);

  if (!vectors) {
    out.record.mode = CompensationMode::along_fitted_normal;
    out.cloud.points -= r * fitted;
    return out;
  }

  // Unit vectors (the readers give unit vectors; normalising again costs nothing and makes the
  // offset exactly r).
  Eigen::Matrix3Xd v(3, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double length = ball_centres.vectors.col(i).norm();
    if (!(length > 0.0) || !std::isfinite(length))
      throw InputError(file, line_of(ball_centres, i),
                       point_name(ball_centres, i) + ": the point's vector has no direction");
    v.col(i) = ball_centres.vectors.col(i) / length;
  }

  // Reference normals: the fitted element's, or for a slot, a tab or a plane of unknown side,
  // the vectors' own majority (their sense cannot be checked, only their agreement).
  Eigen::Matrix3Xd reference = fitted;
  if (reference.cols() == 0) {
    if (kind == FeatureKind::plane) {
      const PlaneFit plane = fit_plane_least_squares(ball_centres.points, options.fit);
      const double total = (plane.normal.transpose() * v).sum();
      reference.resize(3, n);
      reference.colwise() = total < 0.0 ? Eigen::Vector3d(-plane.normal) : plane.normal;
    } else {
      reference = v;  // slot, tab: no element to compare with (documented)
    }
  }

  std::size_t outward = 0, inward = 0;
  Eigen::Index first_inward = -1, first_outward = -1;
  for (Eigen::Index i = 0; i < n; ++i) {
    const double c = v.col(i).dot(reference.col(i));
    if (c > 0.0) {
      ++outward;
      if (first_outward < 0) first_outward = i;
    } else {
      ++inward;
      if (first_inward < 0) first_inward = i;
    }
  }
  if (outward > 0 && inward > 0) {
    const Eigen::Index minority = outward >= inward ? first_inward : first_outward;
    throw InputError(file, line_of(ball_centres, minority),
                     "the point vectors' sense is ambiguous: " + std::to_string(outward) +
                         " out of the material and " + std::to_string(inward) +
                         " into it (e.g. " + point_name(ball_centres, minority) +
                         "); compensation needs one sense for the whole file");
  }
  if (inward > 0) {
    // The approach sense (into the material): used reversed, and recorded.
    v = -v;
    out.record.vectors_reversed = true;
  }

  const double limit = std::cos(options.max_vector_angle_deg * pi / 180.0);
  double worst = 1.0;
  for (Eigen::Index i = 0; i < n; ++i) {
    const double c = std::clamp(v.col(i).dot(reference.col(i)), -1.0, 1.0);
    if (c < limit)
      throw InputError(file, line_of(ball_centres, i),
                       point_name(ball_centres, i) + ": the point's vector is " +
                           detail::format_number(std::acos(c) * 180.0 / pi, 3) +
                           " degrees from the fitted surface normal (limit " +
                           detail::format_number(options.max_vector_angle_deg, 3) +
                           "): compensating along it would misplace the point");
    worst = std::min(worst, c);
  }
  out.record.mode = CompensationMode::along_vectors;
  out.record.largest_vector_angle_deg = std::acos(worst) * 180.0 / pi;
  out.cloud.points -= r * v;
  return out;
}

}  // namespace cylzone
