// The unrolled bore surface (evaluate/surface_map.hpp): least-squares residuals binned by angle
// and height. Values only: no IO, no state.
#include "cylzone/evaluate/surface_map.hpp"

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <vector>

#include "evaluate/detail/angle_column.hpp"

namespace cylzone {

double SurfaceMap::largest_cell_magnitude() const {
  double m = 0.0;
  for (std::size_t i = 0; i < mean.size(); ++i)
    if (count[i] > 0) m = std::max(m, std::abs(mean[i]));
  return m;
}

SurfaceMap radial_deviation_map(const Eigen::Matrix3Xd& points, const Eigen::VectorXd& deviations,
                                const Axis& axis, const ZoneFrame& zone,
                                const SurfaceMapOptions& options) {
  if (options.angle_cells == 0 || options.depth_cells == 0)
    throw std::invalid_argument("radial_deviation_map: a grid dimension is 0");
  if (deviations.size() != points.cols())
    throw std::invalid_argument("radial_deviation_map: one deviation per point is needed");
  if (!points.allFinite() || !deviations.allFinite())
    throw std::invalid_argument("radial_deviation_map: a point or deviation is not finite");
  SurfaceMap map;
  map.angle_cells = options.angle_cells;
  map.depth_cells = options.depth_cells;
  const std::size_t cells = options.angle_cells * options.depth_cells;
  map.mean.assign(cells, 0.0);
  map.count.assign(cells, 0);
  map.points = static_cast<std::size_t>(points.cols());
  if (points.cols() == 0) return map;

  const Eigen::Vector3d d = axis.direction.normalized();
  // The zone's u and v made perpendicular to the cylinder's axis, so that the angle is the one
  // about that axis (for a bore tilted by a few hundred microradians they differ from u, v by
  // as little).
  Eigen::Vector3d u = zone.basis.col(0) - zone.basis.col(0).dot(d) * d;
  u.normalize();
  const Eigen::Vector3d v = d.cross(u).dot(zone.basis.col(1)) >= 0.0 ? d.cross(u) : -d.cross(u);
  const Eigen::Vector3d w = zone.basis.col(2);

  const Eigen::Index n = points.cols();
  Eigen::VectorXd height(n);
  // The angle column (detail::angle_column: atan2's column, from polar_angle off the edges).
  std::vector<std::size_t> column(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) {
    const Eigen::Vector3d q = points.col(i) - axis.point;
    column[static_cast<std::size_t>(i)] =
        detail::angle_column(q.dot(u), q.dot(v), options.angle_cells);
    height[i] = w.dot(points.col(i) - zone.origin);
  }
  map.top = height.maxCoeff();
  map.bottom = height.minCoeff();
  map.smallest = deviations.minCoeff();
  map.largest = deviations.maxCoeff();
  const double span = map.top - map.bottom;
  for (Eigen::Index i = 0; i < n; ++i) {
    // One level (span 0) puts every point in the first row.
    const std::size_t row =
        span > 0.0
            ? detail::clamp_cell(
                  (map.top - height[i]) / span * static_cast<double>(options.depth_cells),
                  options.depth_cells)
            : 0;
    const std::size_t cell = row * options.angle_cells + column[static_cast<std::size_t>(i)];
    map.mean[cell] += deviations[i];
    ++map.count[cell];
  }
  for (std::size_t c = 0; c < cells; ++c)
    if (map.count[c] > 0) map.mean[c] /= static_cast<double>(map.count[c]);
  return map;
}

}  // namespace cylzone
