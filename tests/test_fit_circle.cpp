// Least-squares circles in space (least-squares plane, then the geometric circle of the
// projections) against null-space reference sets with known solutions (Forbes & Minh 2012, the
// construction of ISO 10360-6 test sets), and the 2D circle used by cylinders and sections.
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>
#include <cstdio>
#include <cstring>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_circle.hpp"
#include "fit/detail/circle_2d.hpp"
#include "detail/fit_support.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using namespace cylzone::testing;
using Catch::Matchers::Contains;

namespace {
struct CircleCase {
  const char* name;
  Eigen::Vector3d centre;
  double polar_deg, azimuth_deg;
  double radius, start_deg, arc_deg;
  int count;
  double amplitude;
};
}  // namespace

TEST_CASE("least-squares circle reproduces null-space reference circles", "[circle][least_squares]") {
  const CircleCase cases[] = {
      {"full, tilted, off the origin", {35.0, -12.0, 8.0}, 28.0, 115.0, 12.5, 0.0, 360.0, 72, 0.004},
      {"half circle", {-4.0, 9.0, 2.0}, 60.0, -20.0, 30.0, 40.0, 180.0, 50, 0.002},
      {"120 degrees", {1.0, 2.0, 3.0}, 15.0, 70.0, 8.0, 200.0, 120.0, 40, 0.001},
      {"90 degrees", {7.0, 7.0, -7.0}, 45.0, 45.0, 20.0, -30.0, 90.0, 40, 0.001},
      {"far from the origin", {2500.0, -1800.0, 3200.0}, 80.0, 200.0, 45.0, 0.0, 360.0, 90, 0.005},
      {"small hole", {0.5, -0.5, 0.25}, 5.0, 0.0, 0.75, 0.0, 360.0, 24, 0.0002},
      {"large radius", {120.0, 300.0, -50.0}, 89.0, 10.0, 750.0, 10.0, 300.0, 120, 0.01},
  };
  for (const CircleCase& c : cases) {
    SECTION(c.name) {
      const Eigen::Vector3d normal = direction_from_angles(c.polar_deg, c.azimuth_deg);
      const ReferenceSet set = make_circle_reference(c.centre, normal, c.radius, c.start_deg,
                                                     c.arc_deg, c.count, c.amplitude, 41);
      const CircleFit fit = fit_circle_least_squares(set.points);
      CHECK((fit.centre - c.centre).norm() < 1e-9);
      CHECK(std::abs(fit.radius - c.radius) < 1e-9);
      CHECK(angle_between_lines(fit.normal, normal) < 1e-9);
      CHECK(fit.normal.z() > 0.0);  // canonical sign
      CHECK(fit.diameter() == 2.0 * fit.radius);
      // Radial residuals are the deviations e_i (they do not depend on the normal's sign).
      CHECK((fit.residuals.values - set.deviations).cwiseAbs().maxCoeff() < 1e-9);
      CHECK(fit.summary.status == FitStatus::converged);
      CHECK(fit.summary.iterations >= 1);
      CHECK_THAT(fit.summary.message, Contains("converged"));
      const double expected_coverage = c.arc_deg >= 360.0 ? 360.0 - 360.0 / c.count : c.arc_deg;
      CHECK(fit.angular_coverage_deg == Approx(expected_coverage).margin(1e-6));
      // Coverage below the default 180 degrees is a warning naming the coverage.
      // (An arc of exactly 180 degrees sits on the threshold and is not checked.)
      if (c.arc_deg < 179.0) {
        REQUIRE(fit.summary.warnings.size() == 1);
        char expected[32];
        std::snprintf(expected, sizeof expected, "%.1f degrees", c.arc_deg);
        CHECK_THAT(fit.summary.warnings[0], Contains(expected));
      } else if (c.arc_deg > 181.0) {
        CHECK(fit.summary.warnings.empty());
      }
    }
  }
}

TEST_CASE("circle with a fixed direction fits in the plane perpendicular to it",
          "[circle][least_squares]") {
  const Eigen::Vector3d normal = direction_from_angles(12.0, 33.0);
  const ReferenceSet set =
      make_circle_reference({100.0, 50.0, -20.0}, normal, 15.0, 0.0, 360.0, 36, 0.003, 8);
  FitOptions options;
  options.fixed_direction = -normal;
  const CircleFit fixed = fit_circle_least_squares(set.points, options);
  CHECK(angle_between_lines(fixed.normal, normal) < 1e-15);
  CHECK((fixed.centre - Eigen::Vector3d(100.0, 50.0, -20.0)).norm() < 1e-9);
  CHECK(std::abs(fixed.radius - 15.0) < 1e-9);
  // The hint decides the sign of the reported normal.
  options.axis_hint = -normal;
  CHECK(fit_circle_least_squares(set.points, options).normal.dot(normal) < 0.0);
  options.fixed_direction = Eigen::Vector3d::Zero();
  CHECK_THROWS_WITH(fit_circle_least_squares(set.points, options), Contains("fixed direction"));
}

TEST_CASE("circle covariance equals sigma^2 (J^T J)^-1 at the known solution",
          "[circle][least_squares][covariance]") {
  // For N equally spaced points on a full circle, J rows (cos a, sin a, 1) give
  // J^T J = diag(N/2, N/2, N) exactly, so the law of propagation (JCGM 100:2008, GUM 5.1.2)
  // predicts var(centre_u) = var(centre_v) = 2 s^2 / N, var(r) = s^2 / N, all covariances zero,
  // with s^2 = sum e^2 / (N - 3) (common practice for least-squares circles).
  const int n = 48;
  const ReferenceSet set = make_circle_reference({3.0, 4.0, 5.0}, direction_from_angles(30.0, 10.0),
                                                 25.0, 7.0, 360.0, n, 0.005, 12);
  const CircleFit fit = fit_circle_least_squares(set.points);
  const double s2 = set.deviations.squaredNorm() / (n - 3);
  REQUIRE(fit.covariance.matrix.rows() == 3);
  const Eigen::MatrixXd& c = fit.covariance.matrix;
  CHECK(c(0, 0) == Approx(2 * s2 / n).epsilon(1e-6));
  CHECK(c(1, 1) == Approx(2 * s2 / n).epsilon(1e-6));
  CHECK(c(2, 2) == Approx(s2 / n).epsilon(1e-6));
  CHECK(std::abs(c(0, 1)) < 1e-6 * c(0, 0));
  CHECK(std::abs(c(0, 2)) < 1e-6 * c(0, 0));
  CHECK((fit.covariance.basis.col(2) - fit.normal).norm() < 1e-15);
}

TEST_CASE("2D least-squares circle and its algebraic start", "[circle][least_squares]") {
  // Points of the circle centre (2000.5, -300.25), r = 4 with the null-space deviations of a
  // 150 degree arc, in plane coordinates.
  const ReferenceSet set = make_circle_reference({2000.5, -300.25, 0.0}, Eigen::Vector3d::UnitZ(),
                                                 4.0, 10.0, 150.0, 30, 0.0005, 77);
  const Eigen::Matrix2Xd uv = set.points.topRows<2>();
  const detail::Circle2dFit algebraic = detail::fit_circle_2d_algebraic(uv);
  CHECK((algebraic.centre - Eigen::Vector2d(2000.5, -300.25)).norm() < 0.01);  // a start only
  const detail::Circle2dFit fit = detail::fit_circle_2d_least_squares(uv, FitOptions{});
  CHECK((fit.centre - Eigen::Vector2d(2000.5, -300.25)).norm() < 1e-9);
  CHECK(std::abs(fit.radius - 4.0) < 1e-9);
  CHECK(fit.ssr == Approx(set.deviations.squaredNorm()).epsilon(1e-9));
  CHECK(fit.status == FitStatus::converged);
  FitOptions one;
  one.max_iterations = 1;
  CHECK(detail::fit_circle_2d_least_squares(uv, one).status == FitStatus::iteration_limit);
}

namespace {

/// The algebraic (Kasa) start as it was computed before its sums were taken two lanes at a
/// time and before the collinearity test's eigenvalues were skipped where a bound decides it:
/// a scalar pass of the centred sums, the 2 x 2 eigenvalues always, the normal equations
/// solved by LDLT. fit_circle_2d_algebraic must reproduce it bit for bit, and its error.
detail::Circle2dFit previous_algebraic(const Eigen::Matrix2Xd& uv) {
  detail::require_point_count(static_cast<std::size_t>(uv.cols()), 3, "circle");
  const double n = static_cast<double>(uv.cols());
  const Eigen::Vector2d centroid = uv.rowwise().mean();
  double xx = 0, xy = 0, yy = 0, sx = 0, sy = 0, bx = 0, by = 0, b = 0, largest2 = 0;
  for (Eigen::Index i = 0; i < uv.cols(); ++i) {
    const double x = uv(0, i) - centroid.x(), y = uv(1, i) - centroid.y();
    const double r2 = x * x + y * y;
    xx += x * x;
    xy += x * y;
    yy += y * y;
    sx += x;
    sy += y;
    const double minus_r2 = -r2;
    bx += x * minus_r2;
    by += y * minus_r2;
    b += minus_r2;
    largest2 = std::max(largest2, r2);
  }
  Eigen::Matrix2d m;
  m << xx, xy, xy, yy;
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(m, Eigen::EigenvaluesOnly);
  const double across = std::sqrt(std::max(0.0, eigen.eigenvalues()(0)) / n);
  const double along = std::sqrt(std::max(0.0, eigen.eigenvalues()(1)) / n);
  if (across <= detail::degenerate_spread_ratio * along)
    throw FitError("the points lie on a straight line (rms " + detail::format_number(across, 9) +
                   " mm off it over " + detail::format_number(2.0 * std::sqrt(largest2), 6) +
                   " mm); a circle needs points not on one line");
  Eigen::Matrix3d ata;
  ata << xx, xy, sx, xy, yy, sy, sx, sy, n;
  const Eigen::Vector3d def = ata.ldlt().solve(Eigen::Vector3d(bx, by, b));
  detail::Circle2dFit fit;
  const Eigen::Vector2d c(-0.5 * def(0), -0.5 * def(1));
  const double r2 = c.squaredNorm() - def(2);
  fit.centre = centroid + c;
  fit.radius = r2 > 0.0 ? std::sqrt(r2) : (uv.colwise() - fit.centre).colwise().norm().mean();
  return fit;
}

/// The 2D least-squares circle as it was computed before its normal equations were summed
/// entry by entry (and two lanes at a time) and its centroid and scale taken from the
/// algebraic start's pass: the reference fit_circle_2d_least_squares must reproduce bit for
/// bit.
detail::Circle2dFit previous_least_squares(const Eigen::Matrix2Xd& uv, const FitOptions& options) {
  const detail::Circle2dFit start = previous_algebraic(uv);
  const Eigen::Vector2d origin = uv.rowwise().mean();
  const double scale = (uv.colwise() - origin).colwise().norm().maxCoeff();
  Eigen::Vector3d state(start.centre.x() - origin.x(), start.centre.y() - origin.y(),
                        start.radius);
  auto evaluate = [&](const Eigen::Vector3d& p, Eigen::Matrix3d& jtj, Eigen::Vector3d& jtr) {
    jtj.setZero();
    jtr.setZero();
    double ssr = 0.0;
    for (Eigen::Index i = 0; i < uv.cols(); ++i) {
      const double dx = uv(0, i) - origin.x() - p(0), dy = uv(1, i) - origin.y() - p(1);
      const double rho = std::sqrt(dx * dx + dy * dy);
      const double d = rho - p(2);
      const double inv = rho > 0.0 ? 1.0 / rho : 0.0;
      const Eigen::Vector3d j(-dx * inv, -dy * inv, -1.0);
      jtj.noalias() += j * j.transpose();
      jtr += j * d;
      ssr += d * d;
    }
    return ssr;
  };
  auto apply = [](const Eigen::Vector3d& p, const Eigen::Vector3d& step) {
    return Eigen::Vector3d(p + step);
  };
  const auto outcome = detail::gauss_newton<3>(state, evaluate, apply, Eigen::Vector3d::Ones(),
                                               scale, options, "not determined");
  detail::Circle2dFit fit;
  fit.centre = origin + state.head<2>();
  fit.radius = state(2);
  fit.ssr = outcome.ssr;
  fit.normal_matrix = outcome.normal_matrix;
  fit.status = outcome.status;
  fit.iterations = outcome.iterations;
  return fit;
}

bool same_bits(const double* a, const double* b, std::size_t count) {
  return std::memcmp(a, b, count * sizeof(double)) == 0;
}

}  // namespace

TEST_CASE("2D least-squares circle: the same bits as the full outer-product accumulation",
          "[circle][least_squares]") {
  // Null-space reference arcs (as above) of several spans, radii and distances from the origin,
  // one with a point repeated and one with a point on the start centre's neighbourhood, and
  // short iteration limits: every figure of the fit compared with the previous computation by
  // memcmp (signed zeros count).
  struct Arc {
    Eigen::Vector2d centre;
    double radius, start_deg, span_deg;
    int count;
    double amplitude;
  };
  // Also: three points, an arc so short that the collinearity bound leaves the test to the
  // eigenvalues, a circle far from the origin, one of 2,000 points.
  const Arc arcs[] = {{{2000.5, -300.25}, 4.0, 10.0, 150.0, 30, 0.0005},
                      {{0.0, 0.0}, 6.0, 0.0, 360.0, 48, 0.002},
                      {{-12.0, 7.5}, 0.8, 200.0, 60.0, 9, 0.0001},
                      {{150.0, 150.0}, 40.0, -45.0, 300.0, 200, 0.01},
                      {{3.0, -4.0}, 12.0, 90.0, 20.0, 12, 0.0},
                      {{1.0, 2.0}, 5.0, 30.0, 90.0, 3, 0.0},
                      {{-7.0, 11.0}, 25.0, 60.0, 0.5, 20, 0.0},
                      {{-84000.0, 61000.0}, 9.5, 0.0, 350.0, 40, 0.001},
                      {{0.25, -0.5}, 18.0, 0.0, 360.0, 2000, 0.003}};
  int seed = 11;
  for (const Arc& arc : arcs)
    for (const int limit : {1, 2, 50}) {
      const ReferenceSet set = make_circle_reference(
          {arc.centre.x(), arc.centre.y(), 0.0}, Eigen::Vector3d::UnitZ(), arc.radius,
          arc.start_deg, arc.span_deg, arc.count, arc.amplitude, seed++);
      Eigen::Matrix2Xd uv = set.points.topRows<2>();
      if (limit == 2) uv.col(1) = uv.col(0);  // a repeated point
      FitOptions options;
      options.max_iterations = limit;
      INFO("radius " << arc.radius << ", span " << arc.span_deg << ", limit " << limit);
      if (limit == 2 && arc.count == 3) continue;  // two distinct points: no circle
      const detail::Circle2dFit mine = detail::fit_circle_2d_least_squares(uv, options);
      const detail::Circle2dFit previous = previous_least_squares(uv, options);
      const detail::Circle2dFit start = detail::fit_circle_2d_algebraic(uv);
      const detail::Circle2dFit previous_start = previous_algebraic(uv);
      CHECK(same_bits(start.centre.data(), previous_start.centre.data(), 2));
      CHECK(same_bits(&start.radius, &previous_start.radius, 1));
      CHECK(same_bits(mine.centre.data(), previous.centre.data(), 2));
      CHECK(same_bits(&mine.radius, &previous.radius, 1));
      CHECK(same_bits(&mine.ssr, &previous.ssr, 1));
      CHECK(same_bits(mine.normal_matrix.data(), previous.normal_matrix.data(), 9));
      CHECK(mine.status == previous.status);
      CHECK(mine.iterations == previous.iterations);
    }
}

TEST_CASE("degenerate circles are FitErrors", "[circle][least_squares][degenerate]") {
  Eigen::Matrix3Xd line(3, 5);
  for (int i = 0; i < 5; ++i) line.col(i) = Eigen::Vector3d(10.0, 20.0, 30.0) + i * Eigen::Vector3d(1, -1, 2);
  CHECK_THROWS_WITH(fit_circle_least_squares(line), Contains("lie on a straight line"));
  CHECK_THROWS_WITH(fit_circle_least_squares(line.leftCols(2)), Contains("needs at least 3 points, got 2"));
  Eigen::Matrix3Xd same(3, 4);
  same.colwise() = Eigen::Vector3d(1.0, 2.0, 3.0);
  CHECK_THROWS_WITH(fit_circle_least_squares(same), Contains("coincide"));
  // Collinear in the plane perpendicular to a fixed direction.
  FitOptions options;
  options.fixed_direction = Eigen::Vector3d::UnitZ();
  Eigen::Matrix3Xd wall(3, 4);
  wall << 0, 1, 2, 3, 0, 1, 2, 3, 0, 5, 1, 7;
  CHECK_THROWS_WITH(fit_circle_least_squares(wall, options), Contains("straight line"));
}

TEST_CASE("circles on coordinates whose powers overflow are FitErrors, not NaN elements",
          "[circle][degenerate][overflow]") {
  // IEEE 754 binary64 (IEEE 754-2019, 3.6): largest finite value about 1.8e308. The circle fits
  // sum fourth powers of centred distances (algebraic start), so a reference circle scaled by
  // 1e80 is refused in words, not reported as "not determined"; scaled by 1e60 its radius
  // scales exactly with it (common practice: least-squares elements follow similarities).
  const ReferenceSet set = make_circle_reference({3.0, -2.0, 5.0}, direction_from_angles(20.0, 40.0),
                                                 10.0, 0.0, 360.0, 36, 0.002, 3);
  for (const double factor : {1e80, 1e200}) {
    INFO("scale " << factor);
    const Eigen::Matrix3Xd huge = factor * set.points;
    CHECK_THROWS_WITH(fit_circle_least_squares(huge), Contains("coordinates too large"));
    CHECK_THROWS_WITH(fit_circle_minimum_zone(huge), Contains("coordinates too large"));
    CHECK_THROWS_WITH(fit_circle_maximum_inscribed(huge), Contains("coordinates too large"));
    CHECK_THROWS_WITH(fit_circle_minimum_circumscribed(huge), Contains("coordinates too large"));
  }
  const CircleFit unit = fit_circle_least_squares(set.points);
  const CircleFit large = fit_circle_least_squares(1e60 * set.points);
  CHECK(large.radius == Approx(1e60 * unit.radius).epsilon(1e-9));
}

TEST_CASE("2D algebraic start: the collinearity test decides as the eigenvalues always did",
          "[circle][least_squares][degenerate]") {
  // Sets on a line, and off it by a relative 1e-15 .. 1e-3 (around the test's threshold and the
  // bound that skips the eigenvalues): the same outcome as the reference copy, the same bits or
  // the same message (which quotes the rms across and the extent).
  const auto outcome = [](auto&& fit, const Eigen::Matrix2Xd& uv) -> std::string {
    try {
      const detail::Circle2dFit f = fit(uv);
      char text[80];
      std::snprintf(text, sizeof text, "%a %a %a", f.centre.x(), f.centre.y(), f.radius);
      return text;
    } catch (const FitError& e) {
      return e.what();
    }
  };
  int tested_lines = 0, tested_circles = 0;
  for (const double bump : {0.0, 1e-15, 1e-12, 1e-9, 1e-7, 1e-6, 1e-5, 1e-3}) {
    for (const int count : {3, 4, 11, 60}) {
      Eigen::Matrix2Xd uv(2, count);
      for (int i = 0; i < count; ++i) {
        const double s = static_cast<double>(i) / (count - 1);
        // A line through (3, -2) at 30 degrees, 40 mm long, its middle point moved across it.
        const double across = (i == count / 2) ? bump * 40.0 : 0.0;
        uv.col(i) = Eigen::Vector2d(3.0, -2.0) + 40.0 * s * Eigen::Vector2d(0.8660254037844386, 0.5) +
                    across * Eigen::Vector2d(-0.5, 0.8660254037844386);
      }
      const std::string mine = outcome(&detail::fit_circle_2d_algebraic, uv);
      const std::string previous = outcome(&previous_algebraic, uv);
      INFO("bump " << bump << ", " << count << " points");
      CHECK(mine == previous);
      (mine.find("straight line") != std::string::npos ? tested_lines : tested_circles)++;
    }
  }
  // Both outcomes occur (the cases straddle the threshold).
  CHECK(tested_lines > 0);
  CHECK(tested_circles > 0);
}
