// Least-squares line in space: the line through the centroid along the principal direction of
// largest spread minimises the sum of squared orthogonal distances (Forbes 1989, NPL DITC 140/89,
// section 4; Shakarji 1998, J. Res. NIST 103(6)).
#include <cmath>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_line.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {

LineFit fit_line_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  const auto n = static_cast<std::size_t>(points.cols());
  detail::require_point_count(n, 2, "line");
  const Eigen::Vector3d centroid = detail::centroid(points);
  detail::require_distinct_points(points, centroid, "line");
  const detail::PrincipalAxes axes = detail::principal_axes(points, centroid);

  LineFit fit;
  fit.axis = detail::canonical_axis(centroid, axes.directions.col(2), centroid, options.axis_hint);
  const auto [low, high] = detail::axial_extent(points, fit.axis);
  fit.extent_min = low;
  fit.extent_max = high;

  // Local frame (u, v, w = direction) at axis.point: each point's offset (x_u, y_v) from the line
  // is the residual pair; to first order x_u = shift_u + tilt_u z_w, likewise v, so J^T J of the
  // 2n scalar residuals is block-structured in [shift_u, shift_v, tilt_u, tilt_v].
  const Eigen::Matrix3d basis = detail::basis_from_direction(fit.axis.direction);
  const Eigen::Matrix3Xd local = detail::local_coordinates(points, fit.axis.point, basis);
  Eigen::VectorXd distance(points.cols());
  double ssr = 0.0, sz = 0.0, szz = 0.0;
  for (Eigen::Index i = 0; i < local.cols(); ++i) {
    const double x = local(0, i), y = local(1, i), z = local(2, i);
    const double d2 = x * x + y * y;
    distance(i) = std::sqrt(d2);
    ssr += d2;
    sz += z;
    szz += z * z;
  }
  Eigen::Matrix4d jtj;
  jtj << double(n), 0, sz, 0,  //
      0, double(n), 0, sz,      //
      sz, 0, szz, 0,            //
      0, sz, 0, szz;
  fit.covariance.basis = basis;
  fit.covariance.matrix = detail::covariance_from_normal_matrix(jtj, ssr, 2 * n);

  fit.residuals = detail::make_residuals(std::move(distance));
  fit.residuals.form = 2.0 * fit.residuals.values.maxCoeff();  // zone diameter, see fit_types.hpp
  fit.summary.method = FitMethod::least_squares;
  fit.summary.point_count = n;
  fit.summary.message = "closed form (principal direction of the scatter matrix)";
  return fit;
}

}  // namespace cylzone
