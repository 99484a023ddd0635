// Least-squares lines and planes against null-space reference sets with known solutions
// (Forbes & Minh 2012, the construction of ISO 10360-6 test sets; tests/support/reference_data),
// and their covariances against the closed-form law of propagation (JCGM 100:2008, GUM, 5.1.2).
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <limits>
#include <random>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_line.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "detail/fit_support.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using namespace cylzone::testing;
using Catch::Matchers::Contains;

namespace {

struct LineCase {
  const char* name;
  Eigen::Vector3d point;
  double polar_deg, azimuth_deg;
  double t0, t1;
  int count;
  double amplitude;
};

struct PlaneCase {
  const char* name;
  Eigen::Vector3d point;
  double polar_deg, azimuth_deg;
  double width, height;
  int count;
  double amplitude;
};

}  // namespace

TEST_CASE("least-squares line reproduces null-space reference lines", "[line][least_squares]") {
  const LineCase cases[] = {
      {"tilted, off the origin", {12.5, -7.25, 30.0}, 23.0, 140.0, -40.0, 25.0, 60, 0.005},
      {"far from the origin", {2500.0, -1800.0, 3200.0}, 61.0, -35.0, 0.0, 150.0, 200, 0.002},
      {"short", {-3.0, 8.0, 1.0}, 88.0, 10.0, -1.0, 1.5, 12, 0.0005},
      {"pointing down (sign rule)", {5.0, 5.0, 5.0}, 170.0, 75.0, -10.0, 10.0, 30, 0.01},
  };
  for (const LineCase& c : cases) {
    SECTION(c.name) {
      const Axis truth{c.point, direction_from_angles(c.polar_deg, c.azimuth_deg)};
      const ReferenceSet set = make_line_reference(truth, c.t0, c.t1, c.count, c.amplitude, 17);
      const LineFit fit = fit_line_least_squares(set.points);
      CHECK(angle_between_lines(fit.axis.direction, truth.direction) < 1e-9);
      CHECK(axis_distance_over_extent(fit.axis, truth, fit.extent_min, fit.extent_max) < 1e-9);
      // Canonical form: unit direction toward +z; point = foot of the perpendicular from the
      // centroid (here the centroid itself); extent symmetric about it for evenly spaced feet.
      CHECK(fit.axis.direction.norm() == Approx(1.0).margin(1e-15));
      CHECK(fit.axis.direction.z() > 0.0);
      CHECK((fit.axis.point - set.points.rowwise().mean()).norm() < 1e-9);
      CHECK(fit.extent_min == Approx(-(c.t1 - c.t0) / 2).margin(1e-9));
      CHECK(fit.extent_max == Approx((c.t1 - c.t0) / 2).margin(1e-9));
      // Residuals are the distances |e_i|; form is the zone diameter 2 max |e_i|.
      CHECK((fit.residuals.values - set.deviations.cwiseAbs()).cwiseAbs().maxCoeff() < 1e-9);
      CHECK(fit.residuals.form == Approx(2.0 * c.amplitude).margin(1e-9));
      CHECK(fit.summary.point_count == static_cast<std::size_t>(c.count));
    }
  }
}

TEST_CASE("line direction sign follows axis_hint", "[line][least_squares]") {
  const Axis truth{{1.0, 2.0, 3.0}, direction_from_angles(40.0, 20.0)};
  const ReferenceSet set = make_line_reference(truth, 0.0, 10.0, 20, 0.001, 3);
  FitOptions options;
  options.axis_hint = -truth.direction;
  const LineFit fit = fit_line_least_squares(set.points, options);
  CHECK(fit.axis.direction.dot(truth.direction) < 0.0);
}

TEST_CASE("line covariance equals the closed form of the linearised model",
          "[line][least_squares][covariance]") {
  // In the fitted frame the offsets (x_u, y_v) follow x_u = shift_u + tilt_u z (likewise v),
  // two straight-line regressions with 2n residuals and 4 parameters. With z measured from the
  // centroid (sum z = 0) the closed form is var(shift) = s^2 / n, var(tilt) = s^2 / sum z^2,
  // covariances 0, s^2 = sum(x_u^2 + y_v^2) / (2n - 4) (GUM 5.1.2; common practice for
  // straight-line regression).
  const Axis truth{{-20.0, 4.0, 11.0}, direction_from_angles(35.0, 200.0)};
  const ReferenceSet set = make_line_reference(truth, -30.0, 50.0, 41, 0.01, 23);
  const LineFit fit = fit_line_least_squares(set.points);
  const Eigen::Matrix3d& b = fit.covariance.basis;
  CHECK((b.col(2) - fit.axis.direction).norm() < 1e-15);
  double ssr = 0.0, szz = 0.0;
  for (Eigen::Index i = 0; i < set.points.cols(); ++i) {
    const Eigen::Vector3d q = b.transpose() * (set.points.col(i) - fit.axis.point);
    ssr += q.x() * q.x() + q.y() * q.y();
    szz += q.z() * q.z();
  }
  const double n = 41.0, s2 = ssr / (2 * n - 4);
  REQUIRE(fit.covariance.matrix.rows() == 4);
  const Eigen::MatrixXd& c = fit.covariance.matrix;
  CHECK(c(0, 0) == Approx(s2 / n).epsilon(1e-9));
  CHECK(c(1, 1) == Approx(s2 / n).epsilon(1e-9));
  CHECK(c(2, 2) == Approx(s2 / szz).epsilon(1e-9));
  CHECK(c(3, 3) == Approx(s2 / szz).epsilon(1e-9));
  CHECK(std::abs(c(0, 2)) < 1e-12 * c(0, 0));
  CHECK(std::abs(c(0, 1)) < 1e-12 * c(0, 0));
}

TEST_CASE("degenerate lines are FitErrors", "[line][least_squares][degenerate]") {
  Eigen::Matrix3Xd one(3, 1);
  one << 1, 2, 3;
  CHECK_THROWS_WITH(fit_line_least_squares(one), Contains("needs at least 2 points, got 1"));
  Eigen::Matrix3Xd same(3, 5);
  same.colwise() = Eigen::Vector3d(2500.0, -1800.0, 3200.0);
  CHECK_THROWS_WITH(fit_line_least_squares(same), Contains("all 5 points coincide"));
}

TEST_CASE("least-squares plane reproduces null-space reference planes", "[plane][least_squares]") {
  const PlaneCase cases[] = {
      {"tilted, off the origin", {40.0, -12.0, 7.5}, 30.0, 60.0, 80.0, 50.0, 100, 0.003},
      {"far from the origin", {2500.0, -1800.0, 3200.0}, 75.0, 130.0, 300.0, 120.0, 400, 0.01},
      {"narrow strip", {1.0, 1.0, 1.0}, 10.0, -80.0, 100.0, 2.0, 50, 0.0002},
      {"normal pointing down (sign rule)", {0.0, 3.0, -9.0}, 160.0, 10.0, 20.0, 20.0, 30, 0.001},
  };
  for (const PlaneCase& c : cases) {
    SECTION(c.name) {
      const Eigen::Vector3d normal = direction_from_angles(c.polar_deg, c.azimuth_deg);
      const ReferenceSet set =
          make_plane_reference(c.point, normal, c.width, c.height, c.count, c.amplitude, 5);
      const PlaneFit fit = fit_plane_least_squares(set.points);
      CHECK(angle_between_lines(fit.normal, normal) < 1e-9);
      CHECK(std::abs((fit.point - c.point).dot(normal)) < 1e-9);  // the same plane
      CHECK(fit.normal.z() > 0.0);
      CHECK((fit.point - set.points.rowwise().mean()).norm() < 1e-9);
      // Signed residuals are e_i, with the sign of the reported normal.
      const double sign = fit.normal.dot(normal) > 0 ? 1.0 : -1.0;
      CHECK((fit.residuals.values - sign * set.deviations).cwiseAbs().maxCoeff() < 1e-9);
      CHECK(fit.residuals.form ==
            Approx(set.deviations.maxCoeff() - set.deviations.minCoeff()).margin(1e-9));
    }
  }
}

TEST_CASE("plane covariance equals the closed form of the linearised model",
          "[plane][least_squares][covariance]") {
  // z_w = offset + slope_u x_u + slope_v y_v: J rows (1, x_u, y_v). The inverse of the 3x3
  // normal matrix is written out by cofactors (numpy-free closed form), s^2 = sum z^2 / (n - 3).
  const Eigen::Vector3d normal = direction_from_angles(20.0, 45.0);
  const ReferenceSet set = make_plane_reference({5.0, 6.0, 7.0}, normal, 60.0, 30.0, 80, 0.004, 9);
  const PlaneFit fit = fit_plane_least_squares(set.points);
  const Eigen::Matrix3d& b = fit.covariance.basis;
  CHECK((b.col(2) - fit.normal).norm() < 1e-15);
  double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0, ssr = 0;
  for (Eigen::Index i = 0; i < set.points.cols(); ++i) {
    const Eigen::Vector3d q = b.transpose() * (set.points.col(i) - fit.point);
    n += 1, sx += q.x(), sy += q.y(), sxx += q.x() * q.x(), sxy += q.x() * q.y(),
        syy += q.y() * q.y(), ssr += q.z() * q.z();
  }
  const double a = n, bb = sx, cc = sy, d = sxx, e = sxy, f = syy;
  const double det = a * (d * f - e * e) - bb * (bb * f - e * cc) + cc * (bb * e - d * cc);
  const double s2 = ssr / (n - 3);
  REQUIRE(fit.covariance.matrix.rows() == 3);
  const Eigen::MatrixXd& c = fit.covariance.matrix;
  CHECK(c(0, 0) == Approx(s2 * (d * f - e * e) / det).epsilon(1e-9));
  CHECK(c(1, 1) == Approx(s2 * (a * f - cc * cc) / det).epsilon(1e-9));
  CHECK(c(2, 2) == Approx(s2 * (a * d - bb * bb) / det).epsilon(1e-9));
  CHECK(c(1, 2) == Approx(s2 * -(a * e - bb * cc) / det).epsilon(1e-9));
}

TEST_CASE("degenerate planes are FitErrors", "[plane][least_squares][degenerate]") {
  Eigen::Matrix3Xd line(3, 6);
  for (int i = 0; i < 6; ++i) line.col(i) = Eigen::Vector3d(2500.0, -1800.0, 3200.0) + i * Eigen::Vector3d(1, 2, 3);
  CHECK_THROWS_WITH(fit_plane_least_squares(line), Contains("lie on a straight line"));
  CHECK_THROWS_WITH(fit_plane_least_squares(line.leftCols(2)), Contains("needs at least 3 points"));
}

TEST_CASE("coordinates whose squares overflow are FitErrors, not NaN elements",
          "[line][plane][degenerate][overflow]") {
  // IEEE 754 binary64 (IEEE 754-2019, 3.6): the largest finite value is about 1.8e308, so the
  // squared (and fourth-power) distances of points 1e190 apart overflow. A null-space reference
  // plane scaled by 1e190 (a similarity: the least-squares plane's normal is unchanged) must be
  // refused in words; the same plane scaled by 1e60 is still within double precision, and its
  // normal must equal the unscaled one (common practice: the least-squares plane is invariant
  // under similarities).
  const Eigen::Vector3d normal = direction_from_angles(30.0, 60.0);
  const ReferenceSet set =
      make_plane_reference({40.0, -12.0, 7.5}, normal, 80.0, 50.0, 100, 0.003, 5);
  const Eigen::Matrix3Xd huge = 1e190 * set.points;
  CHECK_THROWS_WITH(fit_plane_least_squares(huge), Contains("coordinates too large"));
  CHECK_THROWS_WITH(fit_plane_least_squares(huge), Contains("a plane cannot be fitted"));
  CHECK_THROWS_WITH(fit_line_least_squares(huge), Contains("coordinates too large"));
  CHECK_THROWS_AS(fit_plane_minimum_zone(huge), FitError);
  CHECK_THROWS_AS(fit_line_minimum_zone(huge), FitError);
  const PlaneFit large = fit_plane_least_squares(1e60 * set.points);
  CHECK(angle_between_lines(large.normal, fit_plane_least_squares(set.points).normal) < 1e-12);
  CHECK(std::isfinite(large.residuals.rms));
  // A coordinate that is not a number reaches the library only through its API (the readers
  // refuse it): it is named, never fitted.
  Eigen::Matrix3Xd with_nan = set.points;
  with_nan(1, 7) = std::numeric_limits<double>::quiet_NaN();
  CHECK_THROWS_WITH(fit_plane_least_squares(with_nan), Contains("not finite"));
  CHECK_THROWS_WITH(fit_line_least_squares(with_nan), Contains("not finite"));
}

TEST_CASE("least-squares plane of a dense face: the bits of the whole-cloud computation",
          "[fit][plane]") {
  // Reference: the computation the blocks replace (detail/local_blocks.hpp): the whole cloud's
  // local coordinates in one product, the normal matrix summed over them in order, the
  // residuals their third row. 10,007 points cross two block edges.
  std::mt19937_64 rng(10007);
  std::uniform_real_distribution<double> x(-60.0, 60.0), y(-45.0, 45.0), z(-0.002, 0.002);
  Eigen::Matrix3Xd local_points(3, 10007);
  for (Eigen::Index k = 0; k < local_points.cols(); ++k)
    local_points.col(k) << x(rng), y(rng), z(rng);
  const Eigen::Matrix3d turn =
      Eigen::AngleAxisd(0.4, Eigen::Vector3d(1.0, 2.0, -0.5).normalized()).toRotationMatrix();
  const Eigen::Matrix3Xd points = (turn * local_points).colwise() + Eigen::Vector3d(-310.0, 45.5, 812.25);
  const PlaneFit fit = fit_plane_least_squares(points);

  const Eigen::Matrix3d basis = detail::basis_from_direction(fit.normal);
  const Eigen::Matrix3Xd local = detail::local_coordinates(points, fit.point, basis);
  Eigen::Matrix3d jtj = Eigen::Matrix3d::Zero();
  for (Eigen::Index i = 0; i < local.cols(); ++i) {
    const Eigen::Vector3d j(1.0, local(0, i), local(1, i));
    jtj.noalias() += j * j.transpose();
  }
  const Eigen::VectorXd distance = local.row(2).transpose();
  const Eigen::MatrixXd covariance = detail::covariance_from_normal_matrix(
      jtj, distance.squaredNorm(), static_cast<std::size_t>(points.cols()));
  CHECK(fit.residuals.values == distance);
  CHECK(fit.covariance.basis == basis);
  CHECK(fit.covariance.matrix == covariance);
  // And the plane is the face's: its normal is the turned z axis (the noise is 2 um in z).
  CHECK(std::abs(fit.normal.dot(turn.col(2))) == Approx(1.0).margin(1e-9));
}

TEST_CASE("minimum-zone plane from the caller's least-squares plane: the bits of the one that "
          "fits it", "[plane][minimum_zone]") {
  // Reference: fit_plane_minimum_zone(points, options), which fits the least-squares plane as
  // its start (the computation the given plane replaces). A tilted, off-origin face of 20,000
  // noisy points; the given plane with and without its residual values; without a start and
  // with an earlier fit's start (FitOptions::start) that converges, and one that does not
  // (the restart from the least-squares plane).
  std::mt19937_64 rng(99);
  std::uniform_real_distribution<double> u(-30.0, 30.0);
  std::normal_distribution<double> noise(0.0, 0.002);
  const Eigen::Matrix3d turn =
      Eigen::AngleAxisd(0.4, Eigen::Vector3d(0.3, -1.0, 0.2).normalized()).toRotationMatrix();
  Eigen::Matrix3Xd face(3, 20000);
  for (Eigen::Index i = 0; i < face.cols(); ++i)
    face.col(i) = turn * Eigen::Vector3d(u(rng), u(rng), noise(rng)) + Eigen::Vector3d(5, -7, 11);
  FitOptions options;
  const PlaneFit least_squares = fit_plane_least_squares(face, options);
  PlaneFit released = least_squares;
  released.residuals.values = Eigen::VectorXd();
  FitOptions converging = options, restarting = options;
  converging.start = fit_start(fit_plane_minimum_zone(face.leftCols(19000), options));
  restarting.start = converging.start;
  restarting.start->axis.direction = turn * Eigen::Vector3d(0.0, 0.3, 1.0).normalized();
  restarting.start->form = 1e-9;
  for (const FitOptions* with : {&options, &converging, &restarting}) {
    const PlaneFit want = fit_plane_minimum_zone(face, *with);
    for (const PlaneFit* given : {&least_squares, static_cast<const PlaneFit*>(&released)}) {
      const PlaneFit got = fit_plane_minimum_zone(face, *given, *with);
      CHECK(got.normal == want.normal);
      CHECK(got.point == want.point);
      CHECK(got.residuals.values == want.residuals.values);
      CHECK(got.residuals.form == want.residuals.form);
      REQUIRE(got.summary.contacts.size() == want.summary.contacts.size());
      for (std::size_t k = 0; k < want.summary.contacts.size(); ++k) {
        CHECK(got.summary.contacts[k].point == want.summary.contacts[k].point);
        CHECK(got.summary.contacts[k].multiplier == want.summary.contacts[k].multiplier);
      }
      CHECK(got.summary.start == want.summary.start);
      CHECK(got.summary.iterations == want.summary.iterations);
    }
  }
}
