// Least-squares plane: through the centroid, normal along the principal direction of least
// spread (eigenvector of the smallest eigenvalue of the centred scatter matrix; Forbes 1989,
// NPL DITC 140/89, section 4; Shakarji 1998, J. Res. NIST 103(6)).
#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "detail/fit_support.hpp"
#include "detail/local_blocks.hpp"

namespace cylzone {

PlaneFit fit_plane_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  const auto n = static_cast<std::size_t>(points.cols());
  detail::require_point_count(n, 3, "plane");
  const Eigen::Vector3d centroid = detail::centroid(points);
  detail::require_distinct_points(points, centroid, "plane");
  const detail::PrincipalAxes axes = detail::principal_axes(points, centroid);
  if (axes.rms(1) <= detail::degenerate_spread_ratio * axes.rms(2))
    throw FitError("the points lie on a straight line (rms " + detail::format_number(axes.rms(1), 9) +
                   " mm off it over " + detail::format_number(2.0 * axes.scale, 6) +
                   " mm); a plane needs 3 points not on one line");

  PlaneFit fit;
  fit.point = centroid;  // the centroid lies on the least-squares plane
  fit.normal = detail::canonical_direction(axes.directions.col(0), options.axis_hint);

  // Local frame (u, v, w = normal) at the point: residual z_w - (offset_w + slope_u x_u +
  // slope_v y_v), so J rows are (1, x_u, y_v) up to sign.
  // The local coordinates are read once each, a block at a time (detail/local_blocks.hpp: the
  // same bits as the whole-cloud copy, which a dense face would allocate at every fit).
  const Eigen::Matrix3d basis = detail::basis_from_direction(fit.normal);
  Eigen::Matrix3Xd buffer;
  Eigen::Matrix3d jtj = Eigen::Matrix3d::Zero();
  Eigen::VectorXd distance(points.cols());
  detail::for_each_local_block<3>(
      points, fit.point, basis, buffer, [&](Eigen::Index start, const auto& local) {
        for (Eigen::Index i = 0; i < local.cols(); ++i) {
          const Eigen::Vector3d j(1.0, local(0, i), local(1, i));
          jtj.noalias() += j * j.transpose();
        }
        distance.segment(start, local.cols()) = local.row(2).transpose();
      });
  const double ssr = distance.squaredNorm();
  fit.covariance.basis = basis;
  fit.covariance.matrix = detail::covariance_from_normal_matrix(jtj, ssr, n);

  fit.residuals = detail::make_residuals(std::move(distance));
  fit.summary.method = FitMethod::least_squares;
  fit.summary.point_count = n;
  fit.summary.message = "closed form (principal direction of the scatter matrix)";
  return fit;
}

FitStart fit_start(const PlaneFit& fit) {
  FitStart start;
  start.axis = Axis{fit.point, fit.normal};
  start.form = fit.residuals.form;
  start.point_count = fit.summary.point_count;
  start.contacts = fit.summary.contacts;
  return start;
}

}  // namespace cylzone
