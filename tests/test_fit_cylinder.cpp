// Least-squares cylinders against null-space reference sets with known solutions (Forbes & Minh
// 2012, the construction of ISO 10360-6 test sets; tests/support/reference_data), degenerate
// sets, and the reported covariance against a Monte Carlo experiment (the law of propagation,
// JCGM 100:2008 GUM 5.1.2, checked by repetition as in JCGM 101:2008).
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <string>
#include <vector>
#include <random>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_circle.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using namespace cylzone::testing;
using Catch::Matchers::Contains;

namespace {

struct CylinderCase {
  const char* name;
  Eigen::Vector3d point;
  double polar_deg, azimuth_deg;
  double radius, t0, t1;
  int levels, per_level;
  double arc_deg, amplitude;
};

// Agreement with the known cylinder: axis position over the points' extent, direction, radius.
void check_against(const CylinderFit& fit, const Axis& truth, double radius, double tolerance) {
  CHECK(angle_between_lines(fit.axis.direction, truth.direction) < tolerance);
  CHECK(axis_distance_over_extent(fit.axis, truth, fit.extent_min, fit.extent_max) < tolerance);
  CHECK(std::abs(fit.radius - radius) < tolerance);
}

// Reference angular coverage: libm angles about the true axis, sorted; 360 minus the largest gap.
double coverage_about(const Eigen::Matrix3Xd& points, const Axis& axis) {
  const Eigen::Vector3d w = axis.direction.normalized();
  const Eigen::Vector3d u = w.unitOrthogonal(), v = w.cross(u);
  std::vector<double> a;
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const Eigen::Vector3d d = points.col(i) - axis.point;
    a.push_back(std::atan2(d.dot(v), d.dot(u)));
  }
  std::sort(a.begin(), a.end());
  const double two_pi = 2 * 3.14159265358979323846;
  double gap = a.front() + two_pi - a.back();
  for (std::size_t i = 1; i < a.size(); ++i) gap = std::max(gap, a[i] - a[i - 1]);
  return (two_pi - gap) * 360.0 / two_pi;
}

}  // namespace

TEST_CASE("least-squares cylinder reproduces null-space reference cylinders",
          "[cylinder][least_squares]") {
  const CylinderCase cases[] = {
      {"tilted bore off the origin", {35.0, -20.0, 12.0}, 18.0, 40.0, 10.0, -15.0, 25.0, 8, 36, 360.0, 0.004},
      {"short and wide", {-60.0, 10.0, 5.0}, 7.0, 250.0, 50.0, 0.0, 5.0, 3, 60, 360.0, 0.002},
      {"long and thin", {4.0, 4.0, -100.0}, 75.0, 15.0, 2.0, -100.0, 100.0, 20, 12, 360.0, 0.0005},
      {"half bore (180 degrees)", {10.0, 20.0, 30.0}, 30.0, -60.0, 15.0, 0.0, 40.0, 6, 30, 180.0, 0.002},
      {"120 degrees", {-5.0, 0.0, 8.0}, 50.0, 100.0, 12.0, 0.0, 30.0, 6, 30, 120.0, 0.001},
      {"90 degrees", {1.0, -2.0, 3.0}, 12.0, 300.0, 20.0, -10.0, 30.0, 8, 30, 90.0, 0.001},
      {"far from the origin", {2500.0, -1800.0, 3200.0}, 35.0, 160.0, 20.0, 0.0, 60.0, 10, 36, 360.0, 0.003},
      {"axis nearly along x", {0.0, 50.0, 50.0}, 89.5, 1.0, 6.0, 0.0, 30.0, 5, 24, 360.0, 0.001},
      {"axis pointing down (sign rule)", {7.0, 8.0, 9.0}, 165.0, 20.0, 9.0, 0.0, 20.0, 5, 24, 360.0, 0.002},
  };
  for (const CylinderCase& c : cases) {
    SECTION(c.name) {
      const Axis truth{c.point, direction_from_angles(c.polar_deg, c.azimuth_deg)};
      const ReferenceSet set = make_cylinder_reference(truth, c.radius, c.t0, c.t1, c.levels,
                                                       c.per_level, c.arc_deg, c.amplitude, 99);
      const CylinderFit fit = fit_cylinder_least_squares(set.points);
      check_against(fit, truth, c.radius, 1e-9);
      INFO(fit.summary.message);
      CHECK(fit.summary.status == FitStatus::converged);
      // Canonical form: unit direction toward +z, point = foot of the perpendicular from the
      // centroid, extent symmetric about it (equal point counts on evenly spaced levels).
      const Eigen::Vector3d centroid = set.points.rowwise().mean();
      CHECK(fit.axis.direction.norm() == Approx(1.0).margin(1e-15));
      CHECK(fit.axis.direction.z() > 0.0);
      CHECK(std::abs((centroid - fit.axis.point).dot(fit.axis.direction)) < 1e-9);
      CHECK(fit.extent_min == Approx(-(c.t1 - c.t0) / 2).margin(1e-9));
      CHECK(fit.extent_max == Approx((c.t1 - c.t0) / 2).margin(1e-9));
      // Residuals are the radial deviations, signed outward.
      CHECK((fit.residuals.values - set.deviations).cwiseAbs().maxCoeff() < 1e-9);
      CHECK(fit.residuals.form == Approx(set.deviations.maxCoeff() - set.deviations.minCoeff()).margin(1e-9));
      CHECK(fit.angular_coverage_deg == Approx(coverage_about(set.points, truth)).margin(1e-9));
      if (c.arc_deg < 179.0) CHECK(fit.summary.warnings.size() == 1);
      if (c.arc_deg > 181.0) CHECK(fit.summary.warnings.empty());
      REQUIRE(fit.covariance.matrix.rows() == 5);
      CHECK((fit.covariance.basis.col(2) - fit.axis.direction).norm() < 1e-15);
    }
  }
}

TEST_CASE("large clouds: screened starts, threaded passes, same answer",
          "[cylinder][least_squares]") {
  const Axis truth{{412.5, -237.25, 88.0}, direction_from_angles(6.9, 34.4)};
  SECTION("20,000 points (screened on a subsample)") {
    const ReferenceSet set = make_cylinder_reference(truth, 12.5, 0.0, 40.0, 40, 500, 360.0, 0.002, 5);
    const CylinderFit fit = fit_cylinder_least_squares(set.points);
    check_against(fit, truth, 12.5, 1e-9);
    CHECK_THAT(fit.summary.message, Contains("screened"));
  }
  SECTION("240,000 points (passes split over threads)") {
    const ReferenceSet set = make_cylinder_reference(truth, 12.5, 0.0, 40.0, 60, 4000, 360.0, 0.002, 6);
    const CylinderFit fit = fit_cylinder_least_squares(set.points);
    check_against(fit, truth, 12.5, 1e-9);
    CHECK((fit.residuals.values - set.deviations).cwiseAbs().maxCoeff() < 1e-9);
  }
}

TEST_CASE("cylinder options: hint, point vectors, fixed direction, iteration limit",
          "[cylinder][least_squares]") {
  const Axis truth{{-12.0, 30.0, 4.0}, direction_from_angles(25.0, 210.0)};
  const ReferenceSet set = make_cylinder_reference(truth, 8.0, 0.0, 24.0, 6, 30, 360.0, 0.002, 21);
  const CylinderFit plain = fit_cylinder_least_squares(set.points);

  SECTION("axis_hint sets the sign, not the answer") {
    FitOptions options;
    options.axis_hint = -truth.direction;
    const CylinderFit fit = fit_cylinder_least_squares(set.points, options);
    CHECK(fit.axis.direction.dot(truth.direction) < 0.0);
    check_against(fit, truth, 8.0, 1e-9);
    CHECK(fit.extent_min == Approx(-plain.extent_max).margin(1e-9));
  }
  SECTION("point vectors propose a start; the answer is the same") {
    const CylinderFit fit = fit_cylinder_least_squares(set.points, set.normals);
    check_against(fit, truth, 8.0, 1e-9);
    CHECK_THAT(fit.summary.message, Contains("of 4"));
    CHECK_THROWS_WITH(fit_cylinder_least_squares(set.points, set.normals.leftCols(5)),
                      Contains("5 point vectors for 180 points"));
  }
  SECTION("fixed direction: only location and radius are fitted") {
    FitOptions options;
    options.fixed_direction = truth.direction;
    const CylinderFit fit = fit_cylinder_least_squares(set.points, options);
    check_against(fit, truth, 8.0, 1e-9);
    REQUIRE(fit.covariance.matrix.rows() == 3);
    CHECK_THAT(fit.summary.message, Contains("fixed"));
    // A direction 1 mrad off: the axis is held there (not re-fitted).
    const Eigen::Vector3d off =
        (truth.direction + 1e-3 * truth.direction.unitOrthogonal()).normalized();
    options.fixed_direction = off;
    CHECK(angle_between_lines(fit_cylinder_least_squares(set.points, options).axis.direction, off) <
          1e-15);
  }
  SECTION("the iteration limit is a status, not an exception") {
    FitOptions options;
    options.max_iterations = 1;
    const CylinderFit fit = fit_cylinder_least_squares(set.points, options);
    CHECK(fit.summary.status == FitStatus::iteration_limit);
    CHECK_THAT(fit.summary.message, Contains("iteration limit"));
  }
}

TEST_CASE("degenerate cylinders are FitErrors naming the problem",
          "[cylinder][least_squares][degenerate]") {
  const Eigen::Vector3d w = direction_from_angles(20.0, 30.0);
  SECTION("all points in one cross-section, exactly") {
    const ReferenceSet ring = make_circle_reference({100.0, 200.0, 300.0}, w, 10.0, 0.0, 360.0, 36, 0.0, 1);
    CHECK_THROWS_WITH(fit_cylinder_least_squares(ring.points),
                      Contains("cross-section") && Contains("axial span 0.000000 mm") &&
                          Contains("radius 10.000000 mm") && Contains("cannot be determined"));
  }
  SECTION("one probed level with 1 um probing noise") {
    std::mt19937_64 rng(3);
    std::normal_distribution<double> noise(0.0, 0.001);
    ReferenceSet ring = make_circle_reference({2500.0, -1800.0, 3200.0}, w, 10.0, 0.0, 360.0, 72, 0.0, 1);
    for (Eigen::Index i = 0; i < ring.points.cols(); ++i)
      ring.points.col(i) += Eigen::Vector3d(noise(rng), noise(rng), noise(rng));
    CHECK_THROWS_WITH(fit_cylinder_least_squares(ring.points),
                      Contains("cross-section") && Contains("axial span"));
  }
  SECTION("one level probed in a plane tilted to the bore (an ellipse: two mirror solutions)") {
    Eigen::Matrix3Xd p(3, 40);
    const double tilt = 10.0 * 3.14159265358979 / 180;
    for (int i = 0; i < 40; ++i) {
      const double a = 2 * 3.14159265358979 * i / 40;
      const double x = 10 * std::cos(a), y = 10 * std::sin(a);
      p.col(i) = Eigen::Vector3d(x + 50.0, y - 20.0, std::tan(tilt) * x + 5.0);
    }
    CHECK_THROWS_WITH(fit_cylinder_least_squares(p), Contains("cross-section"));
  }
  SECTION("too few or coincident points") {
    Eigen::Matrix3Xd four(3, 4);
    four << 5, 0, -5, 0, 0, 5, 0, -5, 0, 3, 6, 9;
    CHECK_THROWS_WITH(fit_cylinder_least_squares(four), Contains("needs at least 5 points, got 4"));
    Eigen::Matrix3Xd same(3, 6);
    same.colwise() = Eigen::Vector3d(1, 2, 3);
    CHECK_THROWS_WITH(fit_cylinder_least_squares(same), Contains("coincide"));
  }
}

TEST_CASE("cylinder covariance agrees with a Monte Carlo repetition",
          "[cylinder][least_squares][covariance]") {
  // The reported covariance is the law of propagation sigma^2 (J^T J)^-1 (JCGM 100:2008, GUM
  // 5.1.2). Repeating the fit on fresh noise (JCGM 101:2008, Monte Carlo) must reproduce it:
  // each sample variance within 4 standard errors sqrt(2 / (K - 1)) of the prediction, each
  // correlation within 0.2 (about 4 standard errors of a correlation for K = 500).
  // Two geometries: a full bore (parameters nearly uncorrelated) and a 150 degree arc (shift
  // and radius strongly correlated), so both variances and correlations are put to the test.
  const double arc_deg = GENERATE(360.0, 150.0);
  INFO("arc " << arc_deg << " degrees");
  const Axis truth{{30.0, -20.0, 15.0}, direction_from_angles(15.0, 60.0)};
  const ReferenceSet feet = make_cylinder_reference(truth, 10.0, 0.0, 30.0, 6, 24, arc_deg, 0.0, 2);
  const CylinderFit exact = fit_cylinder_least_squares(feet.points);
  const Eigen::Matrix3d b = exact.covariance.basis;
  const Eigen::Vector3d origin = exact.axis.point;
  const double sigma = 0.002;
  const int repeats = 500;
  std::mt19937_64 rng(20240611);
  std::normal_distribution<double> noise(0.0, sigma);
  Eigen::MatrixXd samples(repeats, 5);
  Eigen::MatrixXd predicted = Eigen::MatrixXd::Zero(5, 5);
  for (int k = 0; k < repeats; ++k) {
    Eigen::Matrix3Xd p = feet.points;
    for (Eigen::Index i = 0; i < p.cols(); ++i) p.col(i) += noise(rng) * feet.normals.col(i);
    const CylinderFit fit = fit_cylinder_least_squares(p);
    Eigen::Vector3d d = fit.axis.direction;
    if (d.dot(b.col(2)) < 0) d = -d;
    // Parameters in the fixed frame (b, origin): the axis's crossing of the plane through the
    // origin perpendicular to w, its tilt, and the radius.
    const Eigen::Vector3d s = fit.axis.point + ((origin - fit.axis.point).dot(b.col(2)) / d.dot(b.col(2))) * d;
    samples.row(k) << (s - origin).dot(b.col(0)), (s - origin).dot(b.col(1)),
        d.dot(b.col(0)) / d.dot(b.col(2)), d.dot(b.col(1)) / d.dot(b.col(2)), fit.radius;
    predicted += fit.covariance.matrix / repeats;
  }
  const Eigen::MatrixXd centred = samples.rowwise() - samples.colwise().mean();
  const Eigen::MatrixXd sample_cov = centred.transpose() * centred / (repeats - 1);
  const double bound = 4.0 * std::sqrt(2.0 / (repeats - 1));
  for (int i = 0; i < 5; ++i) {
    INFO("parameter " << i << ": sample " << sample_cov(i, i) << " predicted " << predicted(i, i));
    CHECK(std::abs(sample_cov(i, i) / predicted(i, i) - 1.0) < bound);
  }
  for (int i = 0; i < 5; ++i)
    for (int j = i + 1; j < 5; ++j) {
      const double rs = sample_cov(i, j) / std::sqrt(sample_cov(i, i) * sample_cov(j, j));
      const double rp = predicted(i, j) / std::sqrt(predicted(i, i) * predicted(j, j));
      INFO("correlation " << i << "," << j << ": sample " << rs << " predicted " << rp);
      CHECK(std::abs(rs - rp) < 0.2);
    }
  // The prediction itself is sigma^2 (J^T J)^-1 with the true sigma, on average.
  Eigen::MatrixXd jtj = Eigen::MatrixXd::Zero(5, 5);
  for (Eigen::Index i = 0; i < feet.points.cols(); ++i) {
    const Eigen::Vector3d q = b.transpose() * (feet.points.col(i) - origin);
    const double rho = std::hypot(q.x(), q.y());
    Eigen::Matrix<double, 5, 1> j;
    j << -q.x() / rho, -q.y() / rho, -q.x() * q.z() / rho, -q.y() * q.z() / rho, -1.0;
    jtj += j * j.transpose();
  }
  const Eigen::MatrixXd gum = sigma * sigma * jtj.inverse();
  for (int i = 0; i < 5; ++i) CHECK(predicted(i, i) == Approx(gum(i, i)).epsilon(0.05));
}

TEST_CASE("cylinders on coordinates whose powers overflow are FitErrors, not NaN elements",
          "[cylinder][degenerate][overflow]") {
  // IEEE 754 binary64 (IEEE 754-2019, 3.6): largest finite value about 1.8e308. Without the
  // check the cylinder's normal equations overflow and the fit reported a singular system; the
  // refusal names the cause. Scaled by 1e60 the reference cylinder's radius scales exactly
  // with it (common practice: similarity invariance).
  const Axis axis{{15.0, -4.0, 2.0}, direction_from_angles(25.0, 110.0)};
  const ReferenceSet set = make_cylinder_reference(axis, 8.0, -20.0, 20.0, 5, 24, 360.0, 0.002, 6);
  for (const double factor : {1e80, 1e200}) {
    INFO("scale " << factor);
    const Eigen::Matrix3Xd huge = factor * set.points;
    CHECK_THROWS_WITH(fit_cylinder_least_squares(huge), Contains("coordinates too large"));
    CHECK_THROWS_WITH(fit_cylinder_least_squares(huge, set.normals),
                      Contains("coordinates too large"));
    CHECK_THROWS_WITH(fit_cylinder_minimum_zone(huge), Contains("coordinates too large"));
    CHECK_THROWS_WITH(fit_cylinder_maximum_inscribed(huge), Contains("coordinates too large"));
    CHECK_THROWS_WITH(fit_cylinder_minimum_circumscribed(huge), Contains("coordinates too large"));
  }
  const CylinderFit unit = fit_cylinder_least_squares(set.points);
  const CylinderFit large = fit_cylinder_least_squares(1e60 * set.points);
  CHECK(large.radius == Approx(1e60 * unit.radius).epsilon(1e-9));
  CHECK(angle_between_lines(large.axis.direction, unit.axis.direction) < 1e-9);
}

TEST_CASE("a least-squares cylinder started from an earlier fit converges to the reference",
          "[cylinder][least_squares][start]") {
  // FitOptions::start: the earlier fit is of a null-space reference set (Forbes & Minh 2012) of
  // one bore; the later set is the same bore moved by a few micrometres and tilted by a few
  // microradians (a Monte Carlo trial's perturbation of the frame), with other deviations. The
  // started fit must reach that set's known least-squares cylinder, like the fit from its own
  // starts, in fewer iterations.
  const Axis first{{35.0, -20.0, 12.0}, direction_from_angles(18.0, 40.0)};
  const ReferenceSet earlier_set =
      make_cylinder_reference(first, 10.0, -15.0, 25.0, 8, 36, 360.0, 0.004, 99);
  const CylinderFit earlier = fit_cylinder_least_squares(earlier_set.points);
  const Axis moved{first.point + Eigen::Vector3d(0.003, -0.002, 0.001),
                   direction_from_angles(18.0003, 40.0004)};
  const ReferenceSet set = make_cylinder_reference(moved, 10.002, -15.0, 25.0, 8, 36, 360.0,
                                                   0.004, 7);
  FitOptions options;
  options.start = fit_start(earlier);
  const CylinderFit fit = fit_cylinder_least_squares(set.points, options);
  CHECK(fit.summary.start == StartOutcome::held);
  CHECK(fit.summary.status == FitStatus::converged);
  check_against(fit, moved, 10.002, 1e-9);
  CHECK((fit.residuals.values - set.deviations).cwiseAbs().maxCoeff() < 1e-9);
  const CylinderFit own = fit_cylinder_least_squares(set.points);
  CHECK(own.summary.start == StartOutcome::none);
  CHECK(fit.summary.iterations <= own.summary.iterations);
  CHECK(fit.covariance.matrix.isApprox(own.covariance.matrix, 1e-6));

  SECTION("a start that does not converge is abandoned for the fit's own starts") {
    // One Gauss-Newton iteration cannot bring an axis across the bore to the optimum: the
    // iteration limit is reached, and the screening of starting axes decides.
    FitOptions limited;
    limited.max_iterations = 4;
    limited.start = fit_start(earlier);
    limited.start->axis.direction = direction_from_angles(90.0 + 18.0, 40.0);
    const CylinderFit again = fit_cylinder_least_squares(set.points, limited);
    CHECK(again.summary.start == StartOutcome::restarted);
    check_against(again, moved, 10.002, 1e-9);
  }
}

namespace {

bool same_bits(const double* a, const double* b, std::size_t n) {
  return std::memcmp(a, b, n * sizeof(double)) == 0;
}

// Everything a fit reports but its message, bit for bit (what FitOptions::result_messages must
// leave alone).
void check_same_but_message(const FitSummary& a, const FitSummary& b) {
  CHECK(a.method == b.method);
  CHECK(a.status == b.status);
  CHECK(a.iterations == b.iterations);
  CHECK(a.point_count == b.point_count);
  CHECK(a.warnings == b.warnings);
  CHECK(a.lp_fallbacks == b.lp_fallbacks);
  CHECK(a.start == b.start);
  REQUIRE(a.contacts.size() == b.contacts.size());
  for (std::size_t k = 0; k < a.contacts.size(); ++k) {
    CHECK(a.contacts[k].point == b.contacts[k].point);
    CHECK(a.contacts[k].outer == b.contacts[k].outer);
    CHECK(same_bits(&a.contacts[k].multiplier, &b.contacts[k].multiplier, 1));
  }
}

void check_same_but_message(const CylinderFit& a, const CylinderFit& b) {
  CHECK(same_bits(a.axis.point.data(), b.axis.point.data(), 3));
  CHECK(same_bits(a.axis.direction.data(), b.axis.direction.data(), 3));
  const double fa[] = {a.radius, a.extent_min, a.extent_max, a.angular_coverage_deg,
                       a.ambiguity, a.residuals.rms, a.residuals.form};
  const double fb[] = {b.radius, b.extent_min, b.extent_max, b.angular_coverage_deg,
                       b.ambiguity, b.residuals.rms, b.residuals.form};
  CHECK(same_bits(fa, fb, 7));
  REQUIRE(a.residuals.values.size() == b.residuals.values.size());
  CHECK(same_bits(a.residuals.values.data(), b.residuals.values.data(),
                  static_cast<std::size_t>(a.residuals.values.size())));
  check_same_but_message(a.summary, b.summary);
}

void check_same_but_message(const CircleFit& a, const CircleFit& b) {
  CHECK(same_bits(a.centre.data(), b.centre.data(), 3));
  CHECK(same_bits(a.normal.data(), b.normal.data(), 3));
  const double fa[] = {a.radius, a.angular_coverage_deg, a.ambiguity, a.residuals.rms,
                       a.residuals.form};
  const double fb[] = {b.radius, b.angular_coverage_deg, b.ambiguity, b.residuals.rms,
                       b.residuals.form};
  CHECK(same_bits(fa, fb, 5));
  REQUIRE(a.residuals.values.size() == b.residuals.values.size());
  CHECK(same_bits(a.residuals.values.data(), b.residuals.values.data(),
                  static_cast<std::size_t>(a.residuals.values.size())));
  check_same_but_message(a.summary, b.summary);
}

// The least-squares message as iteration_message and the cylinder fits composed it before the
// option (the reports' text): the status and counts, then the fit's own note.
std::string iteration_text(const FitSummary& s, int max_iterations) {
  if (s.status == FitStatus::converged)
    return "converged in " + std::to_string(s.iterations) +
           (s.iterations == 1 ? " iteration" : " iterations");
  return "stopped at the iteration limit (" + std::to_string(max_iterations) +
         "); the element is the best found, not proven optimal";
}

}  // namespace

TEST_CASE("FitOptions::result_messages off leaves the message empty and every figure the same",
          "[cylinder][summary]") {
  // Reference: the same fit with the messages on (the default), bit for bit; with them on, the
  // text is the one the reports have always shown (iteration_text above; Chebyshev fits: the
  // wording of solve_zone's summary, checked by its opening words and the LP count).
  const Axis truth{{1.0, -2.0, 0.5}, Eigen::Vector3d(0.1, 0.05, 1.0).normalized()};
  const ReferenceSet set = make_cylinder_reference(truth, 8.0, 0.0, 24.0, 6, 30, 360.0, 0.002, 21);
  for (const int limit : {100, 1}) {  // converged, and stopped at the iteration limit
    FitOptions on;
    on.max_iterations = limit;
    FitOptions off = on;
    off.result_messages = false;
    INFO("iteration limit " << limit);
    {
      const CylinderFit a = fit_cylinder_least_squares(set.points, on);
      const CylinderFit b = fit_cylinder_least_squares(set.points, off);
      check_same_but_message(a, b);
      CHECK(b.summary.message.empty());
      CHECK_THAT(a.summary.message,
                 Catch::StartsWith(iteration_text(a.summary, limit) + " (start "));
      // Started from the fit itself: the started path's message.
      FitOptions started_on = on, started_off = off;
      started_on.start = started_off.start = fit_start(a);
      const CylinderFit c = fit_cylinder_least_squares(set.points, started_on);
      const CylinderFit d = fit_cylinder_least_squares(set.points, started_off);
      check_same_but_message(c, d);
      CHECK(d.summary.message.empty());
      if (c.summary.start == StartOutcome::held)
        CHECK(c.summary.message == iteration_text(c.summary, limit) + " (started from an earlier fit)");
      // The axis direction fixed: the circle-in-a-plane path.
      FitOptions fixed_on = on, fixed_off = off;
      fixed_on.fixed_direction = fixed_off.fixed_direction = truth.direction;
      const CylinderFit e = fit_cylinder_least_squares(set.points, fixed_on);
      const CylinderFit f = fit_cylinder_least_squares(set.points, fixed_off);
      check_same_but_message(e, f);
      CHECK(f.summary.message.empty());
      CHECK(e.summary.message == iteration_text(e.summary, limit) + " (axis direction fixed)");
    }
    for (const auto fit : {&fit_cylinder_minimum_zone, &fit_cylinder_maximum_inscribed,
                           &fit_cylinder_minimum_circumscribed}) {
      const CylinderFit a = fit(set.points, on);
      const CylinderFit b = fit(set.points, off);
      check_same_but_message(a, b);
      CHECK(b.summary.message.empty());
      const std::string opening =
          a.summary.status == FitStatus::converged
              ? "converged in " + std::to_string(a.summary.iterations) + " linear programmes"
              : "stopped at the iteration limit of " + std::to_string(limit) +
                    "; the element is the best found, not proven optimal";
      CHECK_THAT(a.summary.message, Catch::StartsWith(opening));
    }
    // A circle from one level of the set.
    const Eigen::Matrix3Xd ring = set.points.leftCols(30);
    const CircleFit a = fit_circle_least_squares(ring, on);
    const CircleFit b = fit_circle_least_squares(ring, off);
    check_same_but_message(a, b);
    CHECK(b.summary.message.empty());
    CHECK(a.summary.message == iteration_text(a.summary, limit));
    const CircleFit c = fit_circle_minimum_zone(ring, on);
    const CircleFit d = fit_circle_minimum_zone(ring, off);
    check_same_but_message(c, d);
    CHECK(d.summary.message.empty());
    CHECK_FALSE(c.summary.message.empty());
  }
}

TEST_CASE("fit_cylinder_least_squares_axis is the full fit's axis, bit for bit, and its errors",
          "[cylinder][least_squares]") {
  // Reference: fit_cylinder_least_squares itself (the axis-only entry skips only the pass at the
  // solution: residuals, extent, coverage). Null-space reference sets (Forbes & Minh 2012) of
  // varied arcs, depths, point counts and noise, with and without point vectors, a hint, a
  // start, an iteration limit and a fixed direction; and the degenerate sets that throw.
  const auto same_axis = [](const Axis& a, const Axis& b) {
    return same_bits(a.point.data(), b.point.data(), 3) &&
           same_bits(a.direction.data(), b.direction.data(), 3);
  };
  int compared = 0;
  std::uint64_t seed = 5;
  for (const double arc : {360.0, 200.0, 120.0}) {
    for (const int levels : {2, 3, 7}) {
      for (const int per_level : {3, 11, 40}) {
        const Axis truth{{-12.0 + levels, 30.0, 4.0 * per_level},
                         direction_from_angles(5.0 * levels, 30.0 + arc)};
        const ReferenceSet set = make_cylinder_reference(truth, 6.0, -10.0, 20.0, levels,
                                                         per_level, arc, 0.003, ++seed);
        if (set.points.cols() < 5) continue;
        FitOptions options;
        FitOptions hinted;
        hinted.axis_hint = -truth.direction;
        FitOptions limited;
        limited.max_iterations = 1;
        FitOptions fixed;
        fixed.fixed_direction = truth.direction;
        for (const FitOptions* o : {&options, &hinted, &limited, &fixed}) {
          for (const bool with_vectors : {false, true}) {
            std::string full_error, axis_error;
            Axis full_axis, axis;
            try {
              full_axis = with_vectors ? fit_cylinder_least_squares(set.points, set.normals, *o).axis
                                       : fit_cylinder_least_squares(set.points, *o).axis;
            } catch (const FitError& e) {
              full_error = e.what();
            }
            try {
              axis = with_vectors ? fit_cylinder_least_squares_axis(set.points, set.normals, *o)
                                  : fit_cylinder_least_squares_axis(set.points, *o);
            } catch (const FitError& e) {
              axis_error = e.what();
            }
            REQUIRE(axis_error == full_error);
            if (full_error.empty()) {
              REQUIRE(same_axis(axis, full_axis));
              ++compared;
            }
          }
        }
        // Started from the full fit of a slightly moved copy (the started path, held).
        try {
          FitOptions started;
          started.start = fit_start(fit_cylinder_least_squares(
              (set.points.colwise() + Eigen::Vector3d(0.002, -0.001, 0.0)).eval()));
          REQUIRE(same_axis(fit_cylinder_least_squares_axis(set.points, started),
                            fit_cylinder_least_squares(set.points, started).axis));
          ++compared;
        } catch (const FitError&) {
          CHECK_THROWS_AS(fit_cylinder_least_squares(set.points), FitError);
        }
      }
    }
  }
  CHECK(compared > 200);

  // The errors: one cross-section, coincident points, too few, vectors of another count,
  // coordinates whose powers overflow.
  const Eigen::Vector3d w = direction_from_angles(20.0, 30.0);
  const ReferenceSet ring =
      make_circle_reference({100.0, 200.0, 300.0}, w, 10.0, 0.0, 360.0, 36, 0.0, 1);
  Eigen::Matrix3Xd same(3, 6);
  same.colwise() = Eigen::Vector3d(1, 2, 3);
  const Axis axis{{15.0, -4.0, 2.0}, direction_from_angles(25.0, 110.0)};
  const ReferenceSet set = make_cylinder_reference(axis, 8.0, -20.0, 20.0, 5, 24, 360.0, 0.002, 6);
  for (const Eigen::Matrix3Xd& bad :
       {ring.points, same, Eigen::Matrix3Xd(set.points.leftCols(4)), Eigen::Matrix3Xd(1e200 * set.points)}) {
    std::string full_error, axis_error;
    try {
      fit_cylinder_least_squares(bad);
    } catch (const FitError& e) {
      full_error = e.what();
    }
    try {
      fit_cylinder_least_squares_axis(bad);
    } catch (const FitError& e) {
      axis_error = e.what();
    }
    CHECK(!full_error.empty());
    CHECK(axis_error == full_error);
  }
  CHECK_THROWS_WITH(fit_cylinder_least_squares_axis(set.points, set.normals.leftCols(5)),
                    Contains("5 point vectors for 120 points"));
}
