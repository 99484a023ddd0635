// Tangent datum planes (cylzone/datum/tangent_plane.hpp) and the tangent line in a plane
// (datum/detail/tangent_line.hpp): least-squares and minimax planes constrained to lie on the
// outside of the material.
//
// References outside the code under test:
//  * the Karush-Kuhn-Tucker conditions (Nocedal & Wright, Numerical Optimization, 2nd ed.,
//    Theorem 12.1), checked on the orthogonal-distance formulation itself with multipliers
//    solved for independently of the solver's own;
//  * the constrained L2 and minimax datum planes (Shakarji & Srinivasan, J. Computing and
//    Information Science in Engineering 15(4), 2015; from memory): the minimax tangent plane is
//    the outer plane of the minimum zone, and points exactly on a plane give that plane;
//  * null-space reference data (Forbes & Minh, Int. J. Metrol. Qual. Eng. 3(3), 2012) for the
//    exactly planar sets;
//  * scipy.optimize SLSQP and linprog, in tests/reference/crosscheck_datum.py, on cases and
//    answers written by the hidden test case "[crosscheck]" below.
#include <Eigen/Geometry>
#include <Eigen/QR>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <random>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/datum/tangent_plane.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "datum/detail/tangent_line.hpp"
#include "case_file.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

// ---------------------------------------------------------------- surfaces for tangent planes

struct Surface {
  std::string name;
  Eigen::Matrix3Xd points;
  Eigen::Vector3d material_side;  // into the material
};

// Heights along the outward normal `n` of a patch through `centre`: shape(s, t) on a
// width x height rectangle plus uniform noise of +-noise.
template <class Shape>
Surface make_surface(const std::string& name, const Eigen::Vector3d& centre,
                     const Eigen::Vector3d& n, double width, double height, int count,
                     double noise, Shape shape, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(-0.5, 0.5);
  const Eigen::Vector3d w = n.normalized();
  const Eigen::Vector3d u = w.unitOrthogonal();
  const Eigen::Vector3d v = w.cross(u);
  Surface s;
  s.name = name;
  s.material_side = -w;
  s.points.resize(3, count);
  for (int i = 0; i < count; ++i) {
    const double x = width * unit(rng), y = height * unit(rng);
    const double h = shape(x / (0.5 * width), y / (0.5 * height)) + 2.0 * noise * unit(rng);
    s.points.col(i) = centre + x * u + y * v + h * w;
  }
  return s;
}

std::vector<Surface> tangent_plane_cases(int count) {
  const Eigen::Vector3d off(412.5, -187.25, 233.125);
  const Eigen::Vector3d tilted = testing::direction_from_angles(23.0, 71.0);
  std::vector<Surface> cases;
  cases.push_back(make_surface(
      "convex", off, tilted, 80.0, 60.0, count, 0.002,
      [](double s, double t) { return -0.010 * (s * s + t * t); }, 11));
  cases.push_back(make_surface(
      "concave", off, testing::direction_from_angles(97.0, -33.0), 120.0, 40.0, count, 0.002,
      [](double s, double t) { return 0.012 * (s * s + 0.5 * t * t); }, 12));
  cases.push_back(make_surface(
      "saddle", Eigen::Vector3d(-35.0, 640.0, -90.0), testing::direction_from_angles(141.0, 200.0),
      70.0, 70.0, count, 0.001, [](double s, double t) { return 0.008 * (s * s - t * t); }, 13));
  cases.push_back(make_surface(
      "noise-only", off, testing::direction_from_angles(2.0, 10.0), 100.0, 100.0, count, 0.003,
      [](double, double) { return 0.0; }, 14));
  cases.push_back(make_surface(
      "wavy", Eigen::Vector3d(1200.0, 15.0, 8.0), testing::direction_from_angles(88.0, 5.0), 150.0,
      30.0, count, 0.0005,
      [](double s, double t) { return 0.004 * std::sin(3.0 * s) * std::cos(2.0 * t); }, 15));
  cases.push_back(make_surface(
      "twisted-convex", Eigen::Vector3d::Zero(), Eigen::Vector3d(0.0, 0.0, 1.0), 50.0, 50.0,
      count, 0.001, [](double s, double t) { return -0.02 * (s * s + 0.3 * s * t); }, 16));
  return cases;
}

// KKT conditions of the ORTHOGONAL formulation at a fitted tangent plane: with signed distances
// r_i = (p_i - q).n <= 0, local coordinates (x_i, y_i) in the plane and v_i = (1, x_i, y_i), the
// gradients with respect to (offset, tilt_u, tilt_v) at the solution are dr_i = -v_i, so
// stationarity of sum r_i^2 + sum lambda_i r_i reads sum_contacts lambda_i v_i = -2 sum r_i v_i
// with lambda_i >= 0 (Nocedal & Wright, Theorem 12.1). The multipliers are solved for here,
// independently of the solver's own.
void check_orthogonal_kkt(const Eigen::Matrix3Xd& points, const PlaneFit& fit) {
  const Eigen::Vector3d n = fit.normal;
  const Eigen::Vector3d u = n.unitOrthogonal(), v = n.cross(u);
  const Eigen::Index count = points.cols();
  const double extent = (points.colwise() - fit.point).colwise().norm().maxCoeff();
  Eigen::Vector3d balance = Eigen::Vector3d::Zero();
  std::vector<Eigen::Vector3d> contact;
  for (Eigen::Index i = 0; i < count; ++i) {
    const Eigen::Vector3d d = points.col(i) - fit.point;
    const Eigen::Vector3d vi(1.0, d.dot(u) / extent, d.dot(v) / extent);
    const double r = d.dot(n);
    REQUIRE(r <= 1e-12);
    balance -= 2.0 * r * vi;
    if (r >= -1e-10) contact.push_back(vi);
  }
  REQUIRE(!contact.empty());
  REQUIRE(contact.size() <= 3);  // generic random data touches at 1 to 3 points
  Eigen::MatrixXd v_matrix(3, static_cast<Eigen::Index>(contact.size()));
  for (std::size_t k = 0; k < contact.size(); ++k)
    v_matrix.col(static_cast<Eigen::Index>(k)) = contact[k];
  const Eigen::VectorXd lambda = v_matrix.colPivHouseholderQr().solve(balance);
  const double scale = balance.norm();
  CHECK((v_matrix * lambda - balance).norm() <= 1e-9 * scale);
  CHECK(lambda.minCoeff() >= -1e-9 * scale);
}

// ---------------------------------------------------------------- JSON for the cross-check

std::string number(double v) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.17g", v);
  return buffer;
}

template <class Vector>
std::string json_vector(const Vector& v) {
  std::string s = "[";
  for (Eigen::Index i = 0; i < v.size(); ++i) s += (i ? ", " : "") + number(v(i));
  return s + "]";
}

template <class Matrix>
std::string json_points(const Matrix& p) {
  std::string s = "[";
  for (Eigen::Index i = 0; i < p.cols(); ++i)
    s += (i ? ",\n  " : "") + json_vector(Eigen::VectorXd(p.col(i)));
  return s + "]";
}

}  // namespace

// ================================================================ tangent planes

TEST_CASE("tangent least-squares plane satisfies the KKT conditions of the orthogonal problem",
          "[datum][tangent]") {
  for (const Surface& s : tangent_plane_cases(300)) {
    INFO(s.name);
    const PlaneFit fit = fit_plane_tangent_least_squares(s.points, s.material_side);
    CHECK(fit.normal.dot(s.material_side) < 0.0);  // out of the material
    CHECK(fit.residuals.values.maxCoeff() == 0.0);
    CHECK(fit.residuals.form == Approx(-fit.residuals.values.minCoeff()));
    CHECK(fit.summary.status == FitStatus::converged);
    CHECK_THAT(fit.summary.message, Contains("tangent least-squares plane"));
    // The plane point is the centroid projected onto the plane (fit_types.hpp convention).
    const Eigen::Vector3d c = s.points.rowwise().mean();
    CHECK((fit.point - (c - (c - fit.point).dot(fit.normal) * fit.normal)).norm() <= 1e-9);
    check_orthogonal_kkt(s.points, fit);
  }
}

TEST_CASE("tangent least-squares plane with constraint screening on a large cloud",
          "[datum][tangent]") {
  // 20000 points: above the full-set limit, so the candidate subset and violator checks are
  // exercised; the KKT conditions over ALL points show the screened answer is the full one.
  for (const Surface& s : tangent_plane_cases(20000)) {
    INFO(s.name);
    const PlaneFit fit = fit_plane_tangent_least_squares(s.points, s.material_side);
    check_orthogonal_kkt(s.points, fit);
  }
}

TEST_CASE("tangent least-squares plane started from the caller's least-squares plane: the same "
          "bits",
          "[datum][tangent]") {
  // Reference: the call that fits its own start (fit_plane_least_squares, the computation the
  // caller's plane replaces when it fitted that plane already), on clouds below and above the
  // screening limit and across the 4096-column blocks of the local coordinates.
  for (const std::size_t n : {300u, 20000u}) {
    for (const Surface& s : tangent_plane_cases(n)) {
      INFO(s.name << ", " << n << " points");
      const PlaneFit own = fit_plane_tangent_least_squares(s.points, s.material_side);
      const PlaneFit given = fit_plane_tangent_least_squares(
          s.points, s.material_side, fit_plane_least_squares(s.points), FitOptions{});
      CHECK(given.normal == own.normal);
      CHECK(given.point == own.point);
      CHECK(given.residuals.values == own.residuals.values);
      CHECK(given.residuals.form == own.residuals.form);
      CHECK(given.residuals.rms == own.residuals.rms);
      CHECK(given.summary.iterations == own.summary.iterations);
      CHECK(given.summary.message == own.summary.message);
    }
  }
  // A start of other points is refused.
  const Surface s = tangent_plane_cases(300).front();
  CHECK_THROWS_AS(fit_plane_tangent_least_squares(s.points, s.material_side,
                                                  fit_plane_least_squares(s.points.leftCols(100)),
                                                  FitOptions{}),
                  std::invalid_argument);
}

TEST_CASE("tangent planes of exactly planar points are the plane", "[datum][tangent]") {
  const Eigen::Vector3d n = testing::direction_from_angles(37.0, 122.0);
  const Eigen::Vector3d q(-250.0, 75.5, 910.25);
  const Eigen::Matrix3Xd p = testing::make_plane_reference(q, n, 90.0, 60.0, 400, 0.0, 5).points;
  for (const PlaneFit& fit : {fit_plane_tangent_least_squares(p, n),
                              fit_plane_tangent_minimax(p, n)}) {
    // Material on the +n side: the outward normal is -n.
    CHECK((fit.normal + n).norm() <= 1e-12);
    CHECK(std::abs((fit.point - q).dot(n)) <= 1e-11);
    CHECK(fit.residuals.values.cwiseAbs().maxCoeff() <= 1e-11);
  }
}

TEST_CASE("the material side chooses which side the tangent plane touches", "[datum][tangent]") {
  const Surface s = tangent_plane_cases(300)[0];  // convex: touches at one point from outside
  const PlaneFit outside = fit_plane_tangent_least_squares(s.points, s.material_side);
  const PlaneFit inside = fit_plane_tangent_least_squares(s.points, -s.material_side);
  CHECK(outside.normal.dot(inside.normal) < -0.999);
  CHECK(inside.residuals.values.maxCoeff() == 0.0);
  // The inner plane lies below the outer one by about the dome's sag (0.010 at the rim).
  CHECK((inside.point - outside.point).dot(outside.normal) < -0.005);
}

TEST_CASE("tangent minimax plane is the outer minimum-zone plane", "[datum][tangent]") {
  for (const Surface& s : tangent_plane_cases(300)) {
    INFO(s.name);
    const PlaneFit zone = fit_plane_minimum_zone(s.points);
    const PlaneFit fit = fit_plane_tangent_minimax(s.points, s.material_side);
    CHECK(fit.normal.dot(s.material_side) < 0.0);
    CHECK(std::abs(std::abs(fit.normal.dot(zone.normal)) - 1.0) <= 1e-15);
    CHECK(fit.residuals.values.maxCoeff() == 0.0);
    CHECK(fit.residuals.form == Approx(zone.residuals.form).epsilon(1e-12));
    // The outer plane lies half the flatness from the mid-plane, on the outward side.
    CHECK((fit.point - zone.point).dot(fit.normal) == Approx(0.5 * zone.residuals.form).epsilon(1e-9));
  }
}

TEST_CASE("tangent planes reject a bad material side and too few points", "[datum][tangent][errors]") {
  const Surface s = tangent_plane_cases(100)[1];
  const Eigen::Vector3d in_plane = s.points.col(1) - s.points.col(0);
  CHECK_THROWS_WITH(fit_plane_tangent_least_squares(s.points, in_plane),
                    Contains("lies almost in the plane"));
  CHECK_THROWS_WITH(fit_plane_tangent_minimax(s.points, in_plane), Contains("lies almost in the plane"));
  CHECK_THROWS_WITH(fit_plane_tangent_least_squares(s.points, Eigen::Vector3d::Zero()),
                    Contains("non-zero"));
  CHECK_THROWS_AS(fit_plane_tangent_least_squares(s.points.leftCols(2), s.material_side), FitError);
}

TEST_CASE("tangent line in a plane satisfies its KKT conditions", "[datum][tangent]") {
  // The 2D counterpart of check_orthogonal_kkt: v_i = (1, t_i).
  std::mt19937_64 rng(31);
  std::uniform_real_distribution<double> unit(-0.5, 0.5);
  const double angle = 0.6;
  const Eigen::Vector2d n(std::cos(angle), std::sin(angle)), t(-n.y(), n.x());
  Eigen::Matrix2Xd p(2, 200);
  for (int i = 0; i < 200; ++i) {
    const double s = 80.0 * unit(rng);
    p.col(i) = Eigen::Vector2d(35.0, -12.0) + s * t +
               (0.003 * std::cos(4.0 * s / 80.0) + 0.002 * unit(rng)) * n;
  }
  const detail::TangentLine2d line = detail::fit_line_2d_tangent_least_squares(p, -n, {});
  CHECK(line.normal.dot(n) > 0.99);
  CHECK(line.residuals.maxCoeff() == 0.0);
  const Eigen::Vector2d tangent(-line.normal.y(), line.normal.x());
  Eigen::Vector2d balance = Eigen::Vector2d::Zero();
  std::vector<Eigen::Vector2d> contact;
  for (int i = 0; i < 200; ++i) {
    const Eigen::Vector2d d = p.col(i) - line.point;
    const Eigen::Vector2d vi(1.0, d.dot(tangent) / 40.0);
    const double r = d.dot(line.normal);
    balance -= 2.0 * r * vi;
    if (r >= -1e-10) contact.push_back(vi);
  }
  REQUIRE((contact.size() == 1 || contact.size() == 2));
  Eigen::MatrixXd v(2, static_cast<Eigen::Index>(contact.size()));
  for (std::size_t k = 0; k < contact.size(); ++k) v.col(static_cast<Eigen::Index>(k)) = contact[k];
  const Eigen::VectorXd lambda = v.colPivHouseholderQr().solve(balance);
  CHECK((v * lambda - balance).norm() <= 1e-9 * balance.norm());
  CHECK(lambda.minCoeff() >= 0.0);
  CHECK_THROWS_WITH(detail::fit_line_2d_tangent_least_squares(
                        Eigen::Matrix2Xd::Constant(2, 5, 3.0), n, {}),
                    Contains("coincide"));
}

// ================================================================ known supports

namespace {

// A face with a known support, in its own frame (u, v in the plane, w out of the material):
// three contacts on w = 0 at the corners of a triangle, and interior points receding into the
// material by depth h_i, each at least 1 mm (far more than its depth) from every edge. For
// the orthogonal distances: any plane on the material side is non-negative at the corners, so
// its zero line misses the triangle's interior, and at an interior point at distance d from
// the nearest edge, tilted by theta, the orthogonal distance is at least
// d sin(theta) + h cos(theta) >= h whenever d >= h tan(theta / 2). So w = 0 makes every term of
// the sum of squares least: it is the tangent least-squares plane (the constrained L2 datum
// plane of Shakarji & Srinivasan, J. Computing and Information Science in Engineering 15(4),
// 2015; from memory). With `lower` > 0 three further points at depth exactly `lower`, whose
// triangle contains the first triangle's centroid, also fix the minimum zone: upper and lower
// contacts whose projections' hulls intersect hold the two parallel planes w = 0 and
// w = -lower (the alternation condition for flatness; common practice). Here directly: with
// the centroid z inside both hulls, planes tilted by theta satisfy, vertically, U(z) >= tan
// theta r_u and -lower - L(z) >= tan theta r_l (r: z's distance from each triangle's edges), so
// the orthogonal width is at least lower cos(theta) + (r_u + r_l) sin(theta) >= lower, as
// r_u + r_l >> lower. The tangent minimax plane is w = 0 too, with form `lower`.
struct KnownSupport {
  Eigen::Matrix3Xd points;
  Eigen::Vector3d outward;  // w
  Eigen::Vector3d on_plane;
  Eigen::VectorXd depth;  // h_i >= 0
};

KnownSupport known_support(const Eigen::Vector3d& origin, const Eigen::Vector3d& outward,
                           int interior, double max_depth, double lower, std::uint64_t seed) {
  const Eigen::Vector3d w = outward.normalized();
  const Eigen::Vector3d u = w.unitOrthogonal(), v = w.cross(u);
  const Eigen::Vector2d corner[3] = {{-60.0, -40.0}, {70.0, -35.0}, {5.0, 65.0}};
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::vector<Eigen::Vector3d> local;  // (u, v, -depth)
  for (const Eigen::Vector2d& c : corner) local.emplace_back(c.x(), c.y(), 0.0);
  // The lower contacts: the triangle turned half a turn about its centroid and shrunk to 0.3
  // (barycentric coordinates 0.43, 0.43, 0.13: inside, about 13 mm from every edge), so both
  // hulls contain the centroid.
  const Eigen::Vector2d centre = (corner[0] + corner[1] + corner[2]) / 3.0;
  if (lower > 0.0)
    for (const Eigen::Vector2d& c : corner) {
      const Eigen::Vector2d turned = centre - 0.3 * (c - centre);
      local.emplace_back(turned.x(), turned.y(), -lower);
    }
  // Interior points by barycentric coordinates of at least 0.05 each: at least 0.05 times the
  // triangle's smallest height (about 100 mm) from every edge, i.e. 5 mm >> max_depth.
  while (static_cast<int>(local.size()) < 3 + (lower > 0.0 ? 3 : 0) + interior) {
    double a = unit(rng), b = unit(rng);
    if (a + b > 1.0) a = 1.0 - a, b = 1.0 - b;
    const double c = 1.0 - a - b;
    if (a < 0.05 || b < 0.05 || c < 0.05) continue;
    const Eigen::Vector2d q = a * corner[0] + b * corner[1] + c * corner[2];
    const double h = (lower > 0.0 ? std::min(max_depth, 0.99 * lower) : max_depth) *
                     (0.05 + 0.95 * unit(rng));
    local.emplace_back(q.x(), q.y(), -h);
  }
  KnownSupport k;
  k.outward = w;
  k.on_plane = origin;
  k.points.resize(3, static_cast<Eigen::Index>(local.size()));
  k.depth.resize(static_cast<Eigen::Index>(local.size()));
  for (std::size_t i = 0; i < local.size(); ++i) {
    const auto col = static_cast<Eigen::Index>(i);
    k.points.col(col) = origin + local[i].x() * u + local[i].y() * v + local[i].z() * w;
    k.depth(col) = -local[i].z();
  }
  return k;
}

}  // namespace

TEST_CASE("tangent least-squares plane on a face with a known support is that support",
          "[datum][tangent]") {
  const KnownSupport k = known_support({412.5, -187.25, 233.125},
                                       testing::direction_from_angles(63.0, -141.0), 400, 0.02,
                                       0.0, 41);
  const PlaneFit fit = fit_plane_tangent_least_squares(k.points, -k.outward);
  CHECK((fit.normal - k.outward).norm() <= 1e-12);
  CHECK(std::abs((fit.point - k.on_plane).dot(k.outward)) <= 1e-11);
  // Residuals are minus the depths, the contacts exactly 0.
  CHECK((fit.residuals.values + k.depth).cwiseAbs().maxCoeff() <= 1e-11);
  CHECK(fit.residuals.form == Approx(k.depth.maxCoeff()).epsilon(1e-9));
}

TEST_CASE("tangent minimax plane on a face with a known minimum zone is its outer plane",
          "[datum][tangent]") {
  const double lower = 0.015;
  const KnownSupport k = known_support({-35.0, 640.0, -90.0},
                                       testing::direction_from_angles(141.0, 200.0), 300, 0.02,
                                       lower, 42);
  const PlaneFit minimax = fit_plane_tangent_minimax(k.points, -k.outward);
  CHECK((minimax.normal - k.outward).norm() <= 1e-9);
  CHECK(std::abs((minimax.point - k.on_plane).dot(k.outward)) <= 1e-9);
  CHECK(minimax.residuals.form == Approx(lower).epsilon(1e-9));
  CHECK(minimax.residuals.values.maxCoeff() == 0.0);
  // The least-squares tangent plane of the same face is also the support (the lower
  // contacts are interior points like the others).
  const PlaneFit ls = fit_plane_tangent_least_squares(k.points, -k.outward);
  CHECK((ls.normal - k.outward).norm() <= 1e-12);
  CHECK((ls.residuals.values + k.depth).cwiseAbs().maxCoeff() <= 1e-11);
}

// ================================================================ export for the scipy check

TEST_CASE("write tangent-plane cases and answers for crosscheck_datum.py", "[.][crosscheck]") {
  std::ostringstream json;
  json << "{\n\"planes\": [\n";
  const std::vector<Surface> cases = tangent_plane_cases(150);
  for (std::size_t k = 0; k < cases.size(); ++k) {
    const Surface& s = cases[k];
    const PlaneFit ls = fit_plane_tangent_least_squares(s.points, s.material_side);
    const PlaneFit mm = fit_plane_tangent_minimax(s.points, s.material_side);
    json << (k ? ",\n" : "") << "{\"name\": \"" << s.name << "\",\n\"material_side\": "
         << json_vector(s.material_side) << ",\n\"tangent_least_squares\": {\"normal\": "
         << json_vector(ls.normal) << ", \"point\": " << json_vector(ls.point)
         << "},\n\"tangent_minimax\": {\"normal\": " << json_vector(mm.normal)
         << ", \"point\": " << json_vector(mm.point) << ", \"form\": " << number(mm.residuals.form)
         << "},\n\"points\": " << json_points(s.points) << "}";
  }
  json << "],\n\"lines\": [\n";
  for (int k = 0; k < 3; ++k) {
    std::mt19937_64 rng(50 + k);
    std::uniform_real_distribution<double> unit(-0.5, 0.5);
    const double angle = 0.4 + 1.9 * k;
    const Eigen::Vector2d n(std::cos(angle), std::sin(angle)), t(-n.y(), n.x());
    Eigen::Matrix2Xd p(2, 120);
    for (int i = 0; i < 120; ++i) {
      const double s = 60.0 * unit(rng);
      const double shape = k == 0 ? -0.004 * (s / 30.0) * (s / 30.0)
                                  : (k == 1 ? 0.004 * (s / 30.0) * (s / 30.0)
                                            : 0.003 * std::sin(5.0 * s / 30.0));
      p.col(i) = Eigen::Vector2d(-140.0 + 100.0 * k, 310.0) + s * t +
                 (shape + 0.002 * unit(rng)) * n;
    }
    const detail::TangentLine2d line = detail::fit_line_2d_tangent_least_squares(p, -n, {});
    json << (k ? ",\n" : "") << "{\"name\": \"line-" << k << "\", \"material_side\": "
         << json_vector(Eigen::Vector2d(-n)) << ",\n\"normal\": " << json_vector(line.normal)
         << ", \"point\": " << json_vector(line.point) << ",\n\"points\": " << json_points(p) << "}";
  }
  json << "]\n}\n";

  const std::filesystem::path file =
      cylzone::testing::write_case_file("CYLZONE_DATUM_CASES", json.str());
  CHECK(std::filesystem::file_size(file) > 1000);
}
