// Least-squares sphere: Gauss-Newton on the geometric distances d_i = |p_i - c| - r with the
// analytic Jacobian (-(p_i - c)/|p_i - c|, -1), started from the algebraic fit (Forbes 1989,
// NPL DITC 140/89, section 5; Shakarji 1998, J. Res. NIST 103(6)).
#include <Eigen/Cholesky>
#include <cmath>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_sphere.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {

SphereFit fit_sphere_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  const auto n = static_cast<std::size_t>(points.cols());
  detail::require_point_count(n, 4, "sphere");
  const Eigen::Vector3d centroid = detail::centroid(points);
  detail::require_distinct_points(points, centroid, "sphere");
  const detail::PrincipalAxes axes = detail::principal_axes(points, centroid);
  if (axes.rms(0) <= detail::degenerate_spread_ratio * axes.rms(2))
    throw FitError("the points lie in one plane (rms " + detail::format_number(axes.rms(0), 9) +
                   " mm off it over " + detail::format_number(2.0 * axes.scale, 6) +
                   " mm); a sphere needs 4 points not in one plane");

  // Algebraic start on centred points: minimise sum (|q|^2 + D.q + F)^2, linear in (D, F).
  Eigen::Matrix4d ata = Eigen::Matrix4d::Zero();
  Eigen::Vector4d atb = Eigen::Vector4d::Zero();
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const Eigen::Vector3d q = points.col(i) - centroid;
    const Eigen::Vector4d a(q.x(), q.y(), q.z(), 1.0);
    ata.noalias() += a * a.transpose();
    atb -= a * q.squaredNorm();
  }
  const Eigen::Vector4d def = ata.ldlt().solve(atb);
  Eigen::Vector4d state;  // centre (relative to the centroid) and radius
  state.head<3>() = -0.5 * def.head<3>();
  const double r2 = state.head<3>().squaredNorm() - def(3);
  state(3) = r2 > 0.0 ? std::sqrt(r2) : axes.scale;

  auto evaluate = [&](const Eigen::Vector4d& p, Eigen::Matrix4d& jtj, Eigen::Vector4d& jtr) {
    jtj.setZero();
    jtr.setZero();
    double ssr = 0.0;
    for (Eigen::Index i = 0; i < points.cols(); ++i) {
      const Eigen::Vector3d q = points.col(i) - centroid - p.head<3>();
      const double rho = q.norm();
      const double d = rho - p(3);
      const double inv = rho > 0.0 ? 1.0 / rho : 0.0;
      const Eigen::Vector4d j(-q.x() * inv, -q.y() * inv, -q.z() * inv, -1.0);
      jtj.noalias() += j * j.transpose();
      jtr += j * d;
      ssr += d * d;
    }
    return ssr;
  };
  auto apply = [](const Eigen::Vector4d& p, const Eigen::Vector4d& step) {
    return Eigen::Vector4d(p + step);
  };
  const auto outcome = detail::gauss_newton<4>(
      state, evaluate, apply, Eigen::Vector4d::Ones(), axes.scale, options,
      "the sphere is not determined by the points (too few distinct points off one circle)");
  if (!(state(3) > 0.0))
    throw FitError("no least-squares sphere exists for these points (the radius tends to zero)");

  SphereFit fit;
  fit.centre = centroid + state.head<3>();
  fit.radius = state(3);
  fit.residuals = detail::make_residuals(
      ((points.colwise() - fit.centre).colwise().norm().array() - fit.radius).matrix().transpose());
  fit.covariance.basis = Eigen::Matrix3d::Identity();
  fit.covariance.matrix = detail::covariance_from_normal_matrix(outcome.normal_matrix, outcome.ssr, n);
  fit.summary.method = FitMethod::least_squares;
  fit.summary.point_count = n;
  fit.summary.status = outcome.status;
  fit.summary.iterations = outcome.iterations;
  fit.summary.message = detail::iteration_message(outcome.status, outcome.iterations, options);
  return fit;
}

}  // namespace cylzone
