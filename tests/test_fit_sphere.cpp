// Least-squares spheres against null-space reference sets with known solutions (Forbes & Minh
// 2012, the construction of ISO 10360-6 test sets), covariance against the law of propagation.
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <cmath>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_sphere.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using namespace cylzone::testing;
using Catch::Matchers::Contains;

namespace {
struct SphereCase {
  const char* name;
  Eigen::Vector3d centre;
  double radius;
  double pole_polar_deg, pole_azimuth_deg, cap_deg;
  int count;
  double amplitude;
};
}  // namespace

TEST_CASE("least-squares sphere reproduces null-space reference spheres", "[sphere][least_squares]") {
  const SphereCase cases[] = {
      {"full sphere off the origin", {14.0, -22.0, 9.5}, 12.7, 0.0, 0.0, 180.0, 200, 0.003},
      {"hemisphere, tilted pole", {-3.0, 5.0, 40.0}, 25.0, 40.0, 120.0, 90.0, 120, 0.002},
      {"60 degree cap", {100.0, 0.5, -7.0}, 8.0, 70.0, -45.0, 60.0, 150, 0.0005},
      {"far from the origin", {2500.0, -1800.0, 3200.0}, 50.0, 30.0, 200.0, 120.0, 300, 0.004},
      {"probe-ball size", {0.25, 0.5, 0.75}, 1.5, 0.0, 0.0, 100.0, 25, 0.0001},
  };
  for (const SphereCase& c : cases) {
    SECTION(c.name) {
      const Eigen::Vector3d pole = direction_from_angles(c.pole_polar_deg, c.pole_azimuth_deg);
      const ReferenceSet set =
          make_sphere_reference(c.centre, c.radius, pole, c.cap_deg, c.count, c.amplitude, 31);
      const SphereFit fit = fit_sphere_least_squares(set.points);
      CHECK((fit.centre - c.centre).norm() < 1e-9);
      CHECK(std::abs(fit.radius - c.radius) < 1e-9);
      CHECK((fit.residuals.values - set.deviations).cwiseAbs().maxCoeff() < 1e-9);
      CHECK(fit.residuals.form == Approx(set.deviations.maxCoeff() - set.deviations.minCoeff()).margin(1e-9));
      CHECK(fit.summary.status == FitStatus::converged);
      CHECK(fit.diameter() == 2.0 * fit.radius);
    }
  }
}

TEST_CASE("sphere covariance equals sigma^2 (J^T J)^-1 formed at the known solution",
          "[sphere][least_squares][covariance]") {
  // The law of propagation (JCGM 100:2008, GUM 5.1.2) for a least-squares estimate: with J rows
  // (-n_i, -1) at the true sphere (n_i the unit normals at the foot points, which are also the
  // directions from the fitted centre, the deviations being radial) and s^2 = sum e^2 / (N - 4),
  // the covariance of (centre, radius) is s^2 (J^T J)^-1. J is formed here from the reference
  // normals, independently of the fit.
  const ReferenceSet set = make_sphere_reference({1.0, 2.0, 3.0}, 10.0, direction_from_angles(20, 50),
                                                 110.0, 80, 0.002, 4);
  const SphereFit fit = fit_sphere_least_squares(set.points);
  Eigen::Matrix4d jtj = Eigen::Matrix4d::Zero();
  for (Eigen::Index i = 0; i < set.normals.cols(); ++i) {
    Eigen::Vector4d j;
    j << -set.normals.col(i), -1.0;
    jtj += j * j.transpose();
  }
  const Eigen::Matrix4d expected =
      set.deviations.squaredNorm() / (80 - 4) * jtj.inverse();
  REQUIRE(fit.covariance.matrix.rows() == 4);
  CHECK((fit.covariance.matrix - expected).norm() < 1e-6 * expected.norm());
  CHECK(fit.covariance.basis == Eigen::Matrix3d::Identity());
}

TEST_CASE("degenerate spheres are FitErrors", "[sphere][least_squares][degenerate]") {
  // Points of one circle: infinitely many spheres pass through it.
  Eigen::Matrix3Xd ring(3, 12);
  for (int i = 0; i < 12; ++i)
    ring.col(i) = Eigen::Vector3d(2500.0 + 5 * std::cos(i * 0.5), -1800.0 + 5 * std::sin(i * 0.5), 3200.0);
  CHECK_THROWS_WITH(fit_sphere_least_squares(ring), Contains("lie in one plane"));
  CHECK_THROWS_WITH(fit_sphere_least_squares(ring.leftCols(3)), Contains("needs at least 4 points, got 3"));
}

TEST_CASE("spheres on coordinates whose powers overflow are FitErrors, not NaN elements",
          "[sphere][degenerate][overflow]") {
  // IEEE 754 binary64 (IEEE 754-2019, 3.6): largest finite value about 1.8e308; the sphere's
  // algebraic start sums fourth powers of centred distances. Scaled by 1e60 the reference
  // sphere's radius scales exactly with it (common practice: similarity invariance).
  const ReferenceSet set =
      make_sphere_reference({12.0, -7.0, 30.0}, 25.0, direction_from_angles(10.0, 80.0), 120.0,
                            200, 0.002, 4);
  CHECK_THROWS_WITH(fit_sphere_least_squares(1e80 * set.points), Contains("coordinates too large"));
  CHECK_THROWS_WITH(fit_sphere_least_squares(1e200 * set.points),
                    Contains("a sphere cannot be fitted"));
  const SphereFit unit = fit_sphere_least_squares(set.points);
  CHECK(fit_sphere_least_squares(1e60 * set.points).radius ==
        Approx(1e60 * unit.radius).epsilon(1e-9));
}
