// Datum reference frame: the constrained least-squares solver, the tangent datum planes and the
// frame built from A, B and C.
//
// References outside the code under test:
//  * the Karush-Kuhn-Tucker conditions (Nocedal & Wright, Numerical Optimization, 2nd ed.,
//    Theorems 12.1 and 16.4: for a convex quadratic programme a KKT point is the global
//    minimiser), checked by exhaustive enumeration of active sets and, for the tangent planes,
//    on the orthogonal-distance formulation itself;
//  * scipy.optimize SLSQP and linprog, in tests/reference/crosscheck_datum.py, on cases and
//    answers written by the hidden test case "[crosscheck]" below;
//  * constructed parts with known answers: points on exact planes and cylinders in part
//    coordinates, moved by a known rigid motion; the frame must be the inverse motion. Datum
//    features carry form chosen so that the associated feature is known exactly: a face whose
//    lower regions lie inside the hull of its high points (the tangent plane is the high face)
//    and three-lobed bores (Forbes & Minh, Int. J. Metrol. Qual. Eng. 3(3), 2012: the lobed set's
//    maximum inscribed radius is r - eps, minimum circumscribed r + eps, axis unchanged).
#include <Eigen/Geometry>
#include <Eigen/LU>
#include <Eigen/QR>
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "cylzone/datum/datum_frame.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/datum/tangent_plane.hpp"
#include "datum/detail/constrained_least_squares.hpp"
#include "datum/detail/tangent_line.hpp"
#include "case_file.hpp"
#include "datum_inputs.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

constexpr double pi = 3.14159265358979323846;

// ---------------------------------------------------------------- constrained least squares

struct LsiProblem {
  Eigen::MatrixXd a;
  Eigen::VectorXd b;
  Eigen::MatrixXd c;
  Eigen::VectorXd d;
  Eigen::VectorXd start;
};

// Random problem whose unconstrained minimiser violates some constraints: the constraints are
// strictly satisfied at a start placed away from it.
LsiProblem random_lsi_problem(int unknowns, int rows, int constraints, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  auto random_matrix = [&](int r, int c) {
    Eigen::MatrixXd m(r, c);
    for (int i = 0; i < r; ++i)
      for (int j = 0; j < c; ++j) m(i, j) = normal(rng);
    return m;
  };
  LsiProblem p;
  p.a = random_matrix(rows, unknowns);
  p.b = random_matrix(rows, 1);
  p.c = random_matrix(constraints, unknowns);
  const Eigen::VectorXd unconstrained = p.a.colPivHouseholderQr().solve(p.b);
  p.start = unconstrained + 3.0 * random_matrix(unknowns, 1);
  p.d = p.c * p.start;
  for (int i = 0; i < constraints; ++i) p.d(i) += 0.5 * std::abs(normal(rng));
  return p;
}

// The minimiser by the KKT conditions alone: for every set S of at most n constraints held as
// equalities, solve [A^T A  C_S^T; C_S  0] [x; lambda] = [A^T b; d_S]; the unique minimiser of
// the strictly convex problem is the x that is feasible with lambda >= 0 (Nocedal & Wright,
// Theorem 16.4). Exhaustive, so only for small problems.
Eigen::VectorXd minimiser_by_enumeration(const LsiProblem& p) {
  const int n = static_cast<int>(p.a.cols());
  const int m = static_cast<int>(p.c.rows());
  const Eigen::MatrixXd h = p.a.transpose() * p.a;
  const Eigen::VectorXd g = p.a.transpose() * p.b;
  for (unsigned mask = 0; mask < (1u << m); ++mask) {
    std::vector<int> set;
    for (int i = 0; i < m; ++i)
      if (mask & (1u << i)) set.push_back(i);
    if (static_cast<int>(set.size()) > n) continue;
    const int k = static_cast<int>(set.size());
    Eigen::MatrixXd kkt = Eigen::MatrixXd::Zero(n + k, n + k);
    Eigen::VectorXd rhs(n + k);
    kkt.topLeftCorner(n, n) = h;
    rhs.head(n) = g;
    for (int j = 0; j < k; ++j) {
      kkt.block(n + j, 0, 1, n) = p.c.row(set[j]);
      kkt.block(0, n + j, n, 1) = p.c.row(set[j]).transpose();
      rhs(n + j) = p.d(set[j]);
    }
    const Eigen::FullPivLU<Eigen::MatrixXd> lu(kkt);
    if (lu.rank() < n + k) continue;
    const Eigen::VectorXd sol = lu.solve(rhs);
    const Eigen::VectorXd x = sol.head(n);
    if (((p.c * x - p.d).array() > 1e-10).any()) continue;
    if ((sol.tail(k).array() < -1e-10).any()) continue;
    return x;
  }
  FAIL("no KKT point found by enumeration");
  return {};
}

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

// ---------------------------------------------------------------- constructed parts

struct Motion {
  Eigen::Matrix3d rotation;
  Eigen::Vector3d translation;
  Eigen::Matrix3Xd apply(const Eigen::Matrix3Xd& p) const {
    return (rotation * p).colwise() + translation;
  }
  Eigen::Vector3d direction(const Eigen::Vector3d& d) const { return rotation * d; }
};

Motion generic_motion() {
  Motion m;
  m.rotation = (Eigen::AngleAxisd(0.43, Eigen::Vector3d::UnitX()) *
                Eigen::AngleAxisd(-0.31, Eigen::Vector3d::UnitY()) *
                Eigen::AngleAxisd(1.17, Eigen::Vector3d::UnitZ()))
                   .toRotationMatrix();
  m.translation = Eigen::Vector3d(412.5, -187.25, 233.125);
  return m;
}

// Face A in part coordinates: 130 points exactly on z = 0 over a 120 x 90 grid and 60 points
// in shallow dents (0.001 to 0.02 deep) inside that grid. The material is below (z < 0). Any
// plane on the material side lies on or above z = 0 at the grid, hence at every dent (a convex
// combination of grid points), so z = 0 makes every term of the sum of squares least: it is the
// tangent least-squares plane, and (no tilt narrows the zone) the outer minimum-zone plane.
Eigen::Matrix3Xd face_a_points() {
  std::mt19937_64 rng(21);
  std::uniform_real_distribution<double> x(-55.0, 55.0), y(-40.0, 40.0), depth(0.001, 0.02);
  Eigen::Matrix3Xd p(3, 190);
  int k = 0;
  for (int i = 0; i < 13; ++i)
    for (int j = 0; j < 10; ++j) p.col(k++) << -60.0 + 10.0 * i, -45.0 + 10.0 * j, 0.0;
  while (k < 190) p.col(k++) << x(rng), y(rng), -depth(rng);
  return p;
}

// A bore or pin along z at (cx, cy), three-lobed with amplitude eps, 6 levels x 36 points.
Eigen::Matrix3Xd lobed_feature(double cx, double cy, double radius, double z0, double z1,
                               double eps, double phase_deg = 0.0) {
  return testing::make_lobed_cylinder(Axis{Eigen::Vector3d(cx, cy, 0.0), Eigen::Vector3d::UnitZ()},
                                      radius, z0, z1, 6, 36, eps, phase_deg)
      .points;
}

// Face C at y = -45 (outward normal -y), perpendicular to A: points exactly on it over
// x in [-50, 50], z in [-20, -2], and dents up to 0.01 deep inside that range. By the argument
// of face A in the plane of A, the tangent plane perpendicular to A is y = -45.
Eigen::Matrix3Xd face_c_points() {
  std::mt19937_64 rng(22);
  std::uniform_real_distribution<double> x(-48.0, 48.0), z(-19.0, -3.0), depth(0.001, 0.01);
  Eigen::Matrix3Xd p(3, 80);
  int k = 0;
  for (int i = 0; i < 11; ++i)
    for (int j = 0; j < 4; ++j) p.col(k++) << -50.0 + 10.0 * i, -45.0, -2.0 - 6.0 * j;
  while (k < 80) p.col(k++) << x(rng), -45.0 + depth(rng), z(rng);
  return p;
}

PointCloud cloud(const Eigen::Matrix3Xd& points, const std::string& source) {
  PointCloud c;
  c.points = points;
  c.source = source;
  return c;
}

PlanDatum plane_datum(char label) {
  PlanDatum d;
  d.label = label;
  d.kind = FeatureKind::plane;
  return d;
}

PlanDatum size_datum(char label, FeatureKind kind) {
  PlanDatum d;
  d.label = label;
  d.kind = kind;
  return d;
}

// The frame must be the inverse of the motion that placed the part: rows of the rotation are
// the part's axes in measurement coordinates, the origin is the part's origin.
void check_frame_is_inverse(const DatumFrame& frame, const Motion& motion, double tolerance) {
  CHECK((frame.rotation - motion.rotation.transpose()).cwiseAbs().maxCoeff() <= tolerance);
  CHECK((frame.origin - motion.translation).norm() <= tolerance);
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

// ================================================================ constrained least squares

TEST_CASE("constrained least squares agrees with the KKT minimiser found by enumeration",
          "[datum][lsi]") {
  for (int unknowns = 2; unknowns <= 4; ++unknowns) {
    for (std::uint64_t seed = 1; seed <= 12; ++seed) {
      const LsiProblem p = random_lsi_problem(unknowns, 40, 9, 100 * unknowns + seed);
      const detail::LeastSquaresObjective objective(p.a, p.b);
      const auto solution = detail::solve_constrained_least_squares(objective, p.c, p.d, p.start);
      const Eigen::VectorXd expected = minimiser_by_enumeration(p);
      INFO("unknowns " << unknowns << ", seed " << seed);
      CHECK((solution.x - expected).norm() <= 1e-10 * (1.0 + expected.norm()));
      CHECK(solution.objective == Approx(0.5 * (p.a * expected - p.b).squaredNorm()).epsilon(1e-12));
    }
  }
}

TEST_CASE("constrained least squares returns multipliers satisfying the KKT conditions",
          "[datum][lsi]") {
  // Nocedal & Wright (16.37): A^T (A x - b) + C^T lambda = 0, lambda >= 0, lambda_i = 0 unless
  // constraint i is active, C x <= d.
  for (std::uint64_t seed = 1; seed <= 20; ++seed) {
    const int unknowns = 2 + static_cast<int>(seed % 3);
    const LsiProblem p = random_lsi_problem(unknowns, 2000, 300, seed);
    const detail::LeastSquaresObjective objective(p.a, p.b);
    const auto s = detail::solve_constrained_least_squares(objective, p.c, p.d, p.start);
    const Eigen::VectorXd slack = p.d - p.c * s.x;
    const Eigen::VectorXd stationarity = p.a.transpose() * (p.a * s.x - p.b) + p.c.transpose() * s.multipliers;
    const double scale = p.a.norm() * (p.a * s.x - p.b).norm();
    INFO("seed " << seed);
    CHECK(slack.minCoeff() >= -1e-12 * (1.0 + p.d.cwiseAbs().maxCoeff()));
    CHECK(s.multipliers.minCoeff() >= -1e-10 * scale);
    CHECK(stationarity.norm() <= 1e-10 * scale);
    CHECK(s.working_set.size() >= 1);  // the start was chosen so that some constraint binds
    for (const Eigen::Index i : s.working_set) CHECK(std::abs(slack(i)) <= 1e-10 * (1.0 + std::abs(p.d(i))));
    for (Eigen::Index i = 0; i < slack.size(); ++i)
      if (slack(i) > 1e-8) CHECK(s.multipliers(i) == 0.0);
  }
}

TEST_CASE("constrained least squares without binding constraints is the plain least-squares "
          "solution", "[datum][lsi]") {
  const LsiProblem p = random_lsi_problem(3, 50, 5, 7);
  const Eigen::VectorXd unconstrained = p.a.colPivHouseholderQr().solve(p.b);
  // Bounds far beyond the unconstrained minimiser.
  const Eigen::VectorXd far = p.c * unconstrained + Eigen::VectorXd::Constant(5, 10.0);
  const detail::LeastSquaresObjective objective(p.a, p.b);
  const Eigen::VectorXd start = unconstrained;
  const auto s = detail::solve_constrained_least_squares(objective, p.c, far, start);
  CHECK((s.x - unconstrained).norm() <= 1e-12 * (1.0 + unconstrained.norm()));
  CHECK(s.working_set.empty());
}

TEST_CASE("constrained least squares fails clearly", "[datum][lsi][errors]") {
  const LsiProblem p = random_lsi_problem(3, 30, 6, 3);
  const detail::LeastSquaresObjective objective(p.a, p.b);
  Eigen::VectorXd tight = p.d;
  tight(4) = p.c.row(4).dot(p.start) - 1.0;  // the start violates constraint 4 by 1
  CHECK_THROWS_WITH(detail::solve_constrained_least_squares(objective, p.c, tight, p.start),
                    Contains("starting point violates constraint 4"));
  detail::ConstrainedLeastSquaresOptions few;
  few.max_iterations = 0;
  CHECK_THROWS_WITH(detail::solve_constrained_least_squares(objective, p.c, p.d, p.start, few),
                    Contains("did not converge"));
  Eigen::MatrixXd dependent = p.a;
  dependent.col(2) = 2.0 * dependent.col(0) - dependent.col(1);
  CHECK_THROWS_WITH(detail::LeastSquaresObjective(dependent, p.b), Contains("rank deficient"));
  CHECK_THROWS_WITH(detail::LeastSquaresObjective(p.a.topRows(2), p.b.head(2)),
                    Contains("2 rows for 3 unknowns"));
  CHECK_THROWS_AS(detail::solve_constrained_least_squares(objective, p.c.leftCols(2), p.d, p.start),
                  FitError);
}

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

// ================================================================ datum reference frame

TEST_CASE("frame from A, B bore and C bore is the inverse of the part's placement",
          "[datum][frame]") {
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = {
      plane_datum('A'), size_datum('B', FeatureKind::bore), [] {
        PlanDatum c = size_datum('C', FeatureKind::bore);
        c.basic_location = Eigen::Vector2d(55.0, 25.0);
        return c;
      }()};
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv"),
      cloud(motion.apply(lobed_feature(55.0, 25.0, 4.0, -25.0, -3.0, 0.002, 10.0)), "C.csv")};
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());

  for (const PlaneAssociation method :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax}) {
    DatumFrameOptions options;
    options.a_association = method;
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material, options);
    INFO(std::string(association_name(method)));
    check_frame_is_inverse(r.frame, motion, 1e-9);
    CHECK(r.rotation_fixed);
    CHECK(r.translation_fixed);
    CHECK(r.a.association == method);
    // The zone of face A is z = 0 down to its deepest dent (no tilt narrows it).
    CHECK(r.a.flatness == Approx(-face_a_points().row(2).minCoeff()).epsilon(1e-9));
    REQUIRE(r.b);
    REQUIRE(r.c_feature);
    CHECK(!r.c_plane);
    // Lobed sets: maximum inscribed radius r - eps (Forbes & Minh 2012).
    CHECK(r.b->mating_size == Approx(2.0 * (10.0 - 0.004)).epsilon(1e-12));
    CHECK(r.c_feature->mating_size == Approx(2.0 * (4.0 - 0.002)).epsilon(1e-12));
    CHECK((r.b->axis_on_a - motion.translation).norm() <= 1e-9);
    CHECK((r.frame.point_to_frame(r.c_feature->axis_on_a) - Eigen::Vector3d(55.0, 25.0, 0.0))
              .norm() <= 1e-9);
    CHECK(r.b->boundary == MaterialBoundary::rmb);
    CHECK(r.b->shift_allowance == 0.0);  // no size given: no MMB to shift against
  }
}

TEST_CASE("C bore clocks by direction only: a C off its basic distance keeps the angle",
          "[datum][frame]") {
  // C's axis at (70, 0) with basic location (35, 0): the same direction, twice the distance.
  // Common practice for a tertiary feature of size at RMB: rotation only.
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                   size_datum('C', FeatureKind::bore)};
  datums[2].basic_location = Eigen::Vector2d(35.0, 0.0);
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv"),
      cloud(motion.apply(lobed_feature(70.0, 0.0, 4.0, -25.0, -3.0, 0.002)), "C.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  check_frame_is_inverse(r.frame, motion, 1e-9);
  CHECK(std::any_of(r.notes.begin(), r.notes.end(),
                    [](const std::string& n) { return n.find("clocks the frame only") != std::string::npos; }));
}

TEST_CASE("frame from A, B bore and C plane", "[datum][frame]") {
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                   plane_datum('C')};
  datums[2].outward_normal = Eigen::Vector2d(0.0, -1.0);
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv"),
      cloud(motion.apply(face_c_points()), "C.csv")};
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());

  SECTION("material side of C from B's axis") {
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    REQUIRE(r.c_plane);
    CHECK(!r.c_feature);
    CHECK((r.c_plane->plane.normal - motion.direction(-Eigen::Vector3d::UnitY())).norm() <= 1e-9);
    CHECK(r.c_plane->plane.residuals.values.maxCoeff() == 0.0);
    CHECK(r.frame.point_to_frame(r.c_plane->plane.point).y() == Approx(-45.0).epsilon(1e-12));
  }
  SECTION("material side of C given") {
    datums[2].material_side = motion.direction(Eigen::Vector3d(0.2, 1.0, 0.3));
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
  }
  SECTION("another basic direction turns the frame") {
    // Outward normal declared as +x in the frame: the frame turns by -90 degrees about z
    // relative to the part's own axes, so the part's -y axis becomes the frame's +x axis.
    datums[2].outward_normal = Eigen::Vector2d(1.0, 0.0);
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), into_material);
    const Eigen::Vector3d frame_x = r.frame.rotation.row(0).transpose();
    CHECK((frame_x - motion.direction(-Eigen::Vector3d::UnitY())).norm() <= 1e-9);
    CHECK((r.frame.rotation.row(2).transpose() - motion.direction(Eigen::Vector3d::UnitZ())).norm() <= 1e-9);
  }
}

TEST_CASE("frame with a pin as datum B", "[datum][frame]") {
  // A boss of radius 8 standing on face A (outside the material, z > 0), lobed: its minimum
  // circumscribed radius is r + eps (Forbes & Minh 2012).
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::pin),
                                   size_datum('C', FeatureKind::bore)};
  datums[1].size = SizeLimits{15.990, 16.010};
  datums[2].basic_location = Eigen::Vector2d(-30.0, 30.0);
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 8.0, 3.0, 25.0, 0.003)), "B.csv"),
      cloud(motion.apply(lobed_feature(-30.0, 30.0, 3.0, -20.0, -2.0, 0.001)), "C.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  check_frame_is_inverse(r.frame, motion, 1e-9);
  REQUIRE(r.b);
  CHECK(r.b->kind == FeatureKind::pin);
  CHECK(r.b->mating_size == Approx(16.006).epsilon(1e-12));
  // MMB defaults to the MMC size (pin: upper limit); shift = (MMB - mating) / 2 for a pin
  // (datum feature shift, ASME Y14.5-2018; common practice).
  REQUIRE(r.b->mmb_size);
  CHECK(*r.b->mmb_size == 16.010);
  CHECK(r.b->shift_allowance == Approx(0.002).epsilon(1e-9));
}

TEST_CASE("datum B size: MMB, shift allowance and a violated boundary", "[datum][frame]") {
  const Motion motion = generic_motion();
  std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore)};
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv")};
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  // Mating size 19.992 (lobed: 2 (10 - 0.004)).
  SECTION("MMB from the MMC size") {
    datums[1].size = SizeLimits{19.980, 20.021};
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), side);
    CHECK(*r.b->mmb_size == 19.980);
    CHECK(r.b->shift_allowance == Approx(0.006).epsilon(1e-9));
    CHECK(r.b->size->upper == 20.021);
  }
  SECTION("MMB given") {
    datums[1].size = SizeLimits{19.980, 20.021};
    datums[1].mmb_size = 19.985;
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), side);
    CHECK(*r.b->mmb_size == 19.985);
    CHECK(r.b->shift_allowance == Approx(0.0035).epsilon(1e-9));
  }
  SECTION("a bore smaller than its MMB has no shift and a note") {
    datums[1].size = SizeLimits{19.995, 20.021};
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, clouds), side);
    CHECK(r.b->shift_allowance == 0.0);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("violates its MMB") != std::string::npos;
    }));
  }
}

TEST_CASE("frame without C: x is the measurement x axis projected onto A", "[datum][frame]") {
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore)};
  const std::vector<PointCloud> clouds = {
      cloud(motion.apply(face_a_points()), "A.csv"),
      cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  const Eigen::Vector3d z = motion.direction(Eigen::Vector3d::UnitZ());
  const Eigen::Vector3d x = (Eigen::Vector3d::UnitX() - z.x() * z).normalized();
  CHECK((r.frame.rotation.row(2).transpose() - z).norm() <= 1e-9);
  CHECK((r.frame.rotation.row(0).transpose() - x).norm() <= 1e-9);
  CHECK((r.frame.rotation.row(1).transpose() - z.cross(x)).norm() <= 1e-9);
  CHECK((r.frame.origin - motion.translation).norm() <= 1e-9);
  CHECK(!r.rotation_fixed);
  CHECK(r.translation_fixed);

  SECTION("measurement y is used when A's normal is nearly measurement x") {
    Motion side_on;
    side_on.rotation = Eigen::AngleAxisd(pi / 2, Eigen::Vector3d::UnitY()).toRotationMatrix();
    side_on.translation = Eigen::Vector3d(10.0, 20.0, 30.0);
    const std::vector<PointCloud> turned = {
        cloud(side_on.apply(face_a_points()), "A.csv"),
        cloud(side_on.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv")};
    const DatumFrameResult s =
        establish_datum_frame(test::paired(datums, turned), side_on.direction(-Eigen::Vector3d::UnitZ()));
    CHECK((s.frame.rotation.row(2).transpose() - Eigen::Vector3d::UnitX()).norm() <= 1e-9);
    CHECK((s.frame.rotation.row(0).transpose() - Eigen::Vector3d::UnitY()).norm() <= 1e-9);
  }
}

TEST_CASE("frame without B: origin is the measurement origin projected onto A",
          "[datum][frame]") {
  const Motion motion = generic_motion();
  const std::vector<PlanDatum> datums = {plane_datum('A')};
  const std::vector<PointCloud> clouds = {cloud(motion.apply(face_a_points()), "A.csv")};
  const DatumFrameResult r =
      establish_datum_frame(test::paired(datums, clouds), motion.direction(-Eigen::Vector3d::UnitZ()));
  const Eigen::Vector3d z = motion.direction(Eigen::Vector3d::UnitZ());
  CHECK((r.frame.origin - motion.translation.dot(z) * z).norm() <= 1e-9);
  CHECK(std::abs(r.frame.point_to_frame(motion.translation).z()) <= 1e-9);
  CHECK(!r.translation_fixed);
  CHECK(!r.rotation_fixed);
  CHECK(!r.b);
}

TEST_CASE("datum A by every association", "[datum][frame]") {
  const Motion motion = generic_motion();
  const Eigen::Matrix3Xd a = motion.apply(face_a_points());
  const std::vector<PlanDatum> datums = {plane_datum('A')};
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PlaneFit ls = fit_plane_least_squares(a);
  const PlaneFit zone = fit_plane_minimum_zone(a);
  for (const PlaneAssociation method :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax,
        PlaneAssociation::least_squares, PlaneAssociation::minimum_zone}) {
    DatumFrameOptions options;
    options.a_association = method;
    const DatumFrameResult r = establish_datum_frame(test::paired(datums, {cloud(a, "A.csv")}), side, options);
    INFO(std::string(association_name(method)));
    CHECK(r.a.plane.normal.dot(side) < 0.0);
    CHECK(r.a.flatness == Approx(zone.residuals.form).epsilon(1e-12));
    const PlaneFit& same = method == PlaneAssociation::least_squares ? ls : zone;
    if (method == PlaneAssociation::least_squares || method == PlaneAssociation::minimum_zone) {
      CHECK(std::abs(std::abs(r.a.plane.normal.dot(same.normal)) - 1.0) <= 1e-15);
      CHECK(std::abs((r.a.plane.point - same.point).dot(same.normal)) <= 1e-12);
    } else {
      CHECK((r.a.plane.normal - motion.direction(Eigen::Vector3d::UnitZ())).norm() <= 1e-9);
    }
  }
}

TEST_CASE("material side of A inferred from the bores", "[datum][frame]") {
  const Motion motion = generic_motion();
  const Eigen::Matrix3Xd a = motion.apply(face_a_points());
  const PlaneFit ls = fit_plane_least_squares(a);
  const Eigen::Matrix3Xd b = motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004));
  const Eigen::Matrix3Xd c = motion.apply(lobed_feature(55.0, 25.0, 4.0, -25.0, -3.0, 0.002));
  const Eigen::Vector3d side = infer_material_side(ls, {&b, &c});
  // The least-squares normal of A, turned towards the bores.
  CHECK(std::abs(std::abs(side.dot(ls.normal)) - 1.0) <= 1e-15);
  CHECK(side.dot(motion.direction(-Eigen::Vector3d::UnitZ())) > 0.999);

  // A bore with points on both sides of A, evenly: no side can be told.
  const Eigen::Matrix3Xd straddle = motion.apply(lobed_feature(20.0, 0.0, 5.0, -20.0, 20.0, 0.0));
  CHECK_THROWS_WITH(infer_material_side(ls, {&straddle}), Contains("cannot infer the material side"));
  // Points only at the mouth (within A's form) cannot tell either.
  const Eigen::Matrix3Xd mouth = motion.apply(lobed_feature(20.0, 0.0, 5.0, -0.001, -0.001, 0.0));
  CHECK_THROWS_WITH(infer_material_side(ls, {&mouth}), Contains("no bore point lies off A"));
  // The frame records that the side was inferred (the plan gave none).
  const DatumFrameResult r = establish_datum_frame(test::paired({plane_datum('A')}, {cloud(a, "A.csv")}), side);
  CHECK(r.a.material_side_inferred);
}

TEST_CASE("degenerate datum features give a FitError naming the datum", "[datum][frame][errors]") {
  const Motion motion = generic_motion();
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");

  SECTION("B parallel to A") {
    // A bore along the part's x axis, 15 below A.
    const Eigen::Matrix3Xd lying = testing::make_cylinder_reference(
        Axis{Eigen::Vector3d(0.0, 0.0, -15.0), Eigen::Vector3d::UnitX()}, 5.0, -20.0, 20.0, 8,
        24, 360.0, 0.0, 41).points;
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore)},
                              {a, cloud(motion.apply(lying), "B.csv")}), side),
        Contains("datum B: axis parallel to A"));
  }
  SECTION("C coincident with B") {
    PlanDatum c = size_datum('C', FeatureKind::bore);
    c.basic_location = Eigen::Vector2d(40.0, 0.0);
    const PointCloud concentric =
        cloud(motion.apply(lobed_feature(0.0, 0.0, 4.0, -30.0, -5.0, 0.001)), "C.csv");
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                              {a, b, concentric}), side),
        Contains("datum C: its axis coincides with the axis of datum B"));
  }
  SECTION("too few points on A") {
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A')},
                                            {cloud(a.points.leftCols(2), "A.csv")}), side),
                      Contains("datum A: "));
  }
  SECTION("too few points on B") {
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore)},
                              {a, cloud(b.points.leftCols(2), "B.csv")}), side),
        Contains("datum B: "));
  }
  SECTION("C plane parallel to A") {
    PlanDatum c = plane_datum('C');
    c.outward_normal = Eigen::Vector2d(1.0, 0.0);
    const Eigen::Matrix3Xd floor = testing::make_plane_reference(
        Eigen::Vector3d(0.0, 0.0, -50.0), Eigen::Vector3d::UnitZ(), 60.0, 60.0, 50, 0.0, 42).points;
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                              {a, b, cloud(motion.apply(floor), "C.csv")}), side),
        Contains("datum C: plane parallel to A"));
  }
  SECTION("C plane through B's axis without a material side") {
    PlanDatum c = plane_datum('C');
    c.outward_normal = Eigen::Vector2d(1.0, 0.0);
    const Eigen::Matrix3Xd through = testing::make_plane_reference(
        Eigen::Vector3d(0.0, 0.0, -20.0), Eigen::Vector3d::UnitX(), 30.0, 30.0, 50, 0.0, 43).points;
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                              {a, b, cloud(motion.apply(through), "C.csv")}), side),
        Contains("datum C: the axis of datum B lies in plane C"));
  }
  SECTION("a plane as datum B") {
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), plane_datum('B')}, {a, a}), side),
                      Contains("datum B: a secondary datum plane is not supported"));
  }
  SECTION("material side of A in its plane") {
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A')}, {a}),
                                            motion.direction(Eigen::Vector3d::UnitX())),
                      Contains("datum A: the material side direction lies almost in the plane"));
  }
}

// ================================================================ datum C as a slot or tab

namespace {

// A width feature of size in part coordinates: two faces |v| = half (v across the centre
// plane) for u in [35, 55] along the direction at `angle` (radians) from the part's x axis,
// offset by `offset` across it, over z in [z0, z1]. Each face has 15 points exactly on it and
// 10 points receding into the material by 0.001 to 0.01 (away from the gap for a slot, into
// the tab for a tab). At the related mating width every exact point is a contact, so with
// offset 0 the centre plane is the direction `angle` and the width 2 half: any rotation of the
// simulator's planes about the origin would cut the exact points at one end of a face.
Eigen::Matrix3Xd width_feature(bool slot, double angle, double offset, double half, double z0,
                               double z1) {
  std::mt19937_64 rng(slot ? 23 : 24);
  std::uniform_real_distribution<double> u(36.0, 54.0), z(std::min(z0, z1) + 0.5,
                                                          std::max(z0, z1) - 0.5),
      depth(0.001, 0.01);
  const Eigen::Vector3d along(std::cos(angle), std::sin(angle), 0.0);
  const Eigen::Vector3d across(-std::sin(angle), std::cos(angle), 0.0);
  Eigen::Matrix3Xd p(3, 50);
  int k = 0;
  for (const double side : {1.0, -1.0}) {
    for (int i = 0; i < 5; ++i)
      for (int j = 0; j < 3; ++j)
        p.col(k++) = (35.0 + 5.0 * i) * along + (offset + side * half) * across +
                     (z0 + 0.5 * (z1 - z0) * j) * Eigen::Vector3d::UnitZ();
    for (int i = 0; i < 10; ++i) {
      const double recede = slot ? depth(rng) : -depth(rng);
      p.col(k++) = u(rng) * along + (offset + side * (half + recede)) * across +
                   z(rng) * Eigen::Vector3d::UnitZ();
    }
  }
  return p;
}

PlanDatum width_datum(FeatureKind kind, double angle) {
  PlanDatum c = size_datum('C', kind);
  c.basic_location = 45.0 * Eigen::Vector2d(std::cos(angle), std::sin(angle));
  return c;
}

}  // namespace

TEST_CASE("frame from A, B bore and C slot or tab is the inverse of the part's placement",
          "[datum][frame][slot]") {
  // Constructed parts (see width_feature): the simulator of a tertiary width feature at RMB,
  // two parallel planes perpendicular to A about a centre plane through B's axis, expanding
  // (slot) or contracting (tab) to the feature (ASME Y14.5-2018 datum feature simulators;
  // from memory for the clause) settles on the exact faces.
  const Motion motion = generic_motion();
  const double angle = 0.5;  // the centre plane's direction in the part, about 28.6 degrees
  const Eigen::Vector3d into_material = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");

  SECTION("slot cut into the material") {
    const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                           width_datum(FeatureKind::slot, angle)};
    const DatumFrameResult r = establish_datum_frame(test::paired(
        datums, {a, b, cloud(motion.apply(width_feature(true, angle, 0.0, 3.0, -2.0, -12.0)), "C.csv")}),
        into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    REQUIRE(r.c_width);
    CHECK_FALSE(r.c_feature);
    CHECK_FALSE(r.c_plane);
    CHECK(r.rotation_fixed);
    CHECK(r.c_width->kind == FeatureKind::slot);
    CHECK(r.c_width->mating_width == Approx(6.0).epsilon(1e-12));
    CHECK((r.c_width->centre_direction -
           motion.direction(Eigen::Vector3d(std::cos(angle), std::sin(angle), 0.0)))
              .norm() <= 1e-9);
    // The centre plane's normal is A's normal x the centre direction.
    CHECK((r.c_width->centre_plane_normal -
           motion.direction(Eigen::Vector3d(-std::sin(angle), std::cos(angle), 0.0)))
              .norm() <= 1e-9);
    CHECK(r.c_width->positive_face.cols() == 25);
    CHECK(r.c_width->negative_face.cols() == 25);
    // The centre on A lies on the centre line, at the centroid's distance along it (45 for
    // the exact points; the receding ones are spread over [36, 54]).
    const Eigen::Vector3d centre = r.frame.point_to_frame(r.c_width->centre_on_a);
    CHECK(std::abs(centre.z()) <= 1e-9);
    CHECK(std::abs(-std::sin(angle) * centre.x() + std::cos(angle) * centre.y()) <= 1e-9);
    CHECK(centre.norm() > 36.0);
    CHECK(centre.norm() < 54.0);
    CHECK_FALSE(r.c_width->mmb_size);
    CHECK(r.c_width->shift_allowance == 0.0);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("datum C (slot): its simulator") != std::string::npos;
    }));
  }
  SECTION("tab standing out of face A") {
    const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                           width_datum(FeatureKind::tab, angle)};
    const DatumFrameResult r = establish_datum_frame(test::paired(
        datums, {a, b, cloud(motion.apply(width_feature(false, angle, 0.0, 2.5, 2.0, 10.0)), "C.csv")}),
        into_material);
    check_frame_is_inverse(r.frame, motion, 1e-9);
    REQUIRE(r.c_width);
    CHECK(r.c_width->kind == FeatureKind::tab);
    CHECK(r.c_width->mating_width == Approx(5.0).epsilon(1e-12));
  }
  SECTION("a slot whose centre plane misses B's axis") {
    // Faces at v = e +- h for u in [t1, t2], all points exact (the receding ones are dropped).
    // The slot's objective min(h + e) cos d - t2 sin d, (h - e) cos d + t1 sin d (d > 0 for
    // e > 0) is largest where the two are equal: tan d = 2 e / (t1 + t2), with half-width
    // (h - e) cos d + t1 sin d (derived here, on the problem statement of
    // detail/clocking_width.hpp).
    const double e = 0.02, h = 3.0, t1 = 35.0, t2 = 55.0;
    Eigen::Matrix3Xd exact(3, 30);
    const Eigen::Matrix3Xd all = width_feature(true, angle, e, h, -2.0, -12.0);
    exact << all.middleCols(0, 15), all.middleCols(25, 15);
    const double d = std::atan(2.0 * e / (t1 + t2));
    const std::vector<PlanDatum> datums = {plane_datum('A'), size_datum('B', FeatureKind::bore),
                                           width_datum(FeatureKind::slot, angle)};
    const DatumFrameResult r =
        establish_datum_frame(test::paired(datums, {a, b, cloud(motion.apply(exact), "C.csv")}), into_material);
    REQUIRE(r.c_width);
    CHECK(r.c_width->mating_width ==
          Approx(2.0 * ((h - e) * std::cos(d) + t1 * std::sin(d))).epsilon(1e-12));
    CHECK((r.c_width->centre_direction -
           motion.direction(Eigen::Vector3d(std::cos(angle + d), std::sin(angle + d), 0.0)))
              .norm() <= 1e-9);
    // The frame is clocked so the centre plane runs along C's basic direction.
    const Eigen::Vector3d in_frame = r.frame.rotation * r.c_width->centre_direction;
    CHECK((in_frame - Eigen::Vector3d(std::cos(angle), std::sin(angle), 0.0)).norm() <= 1e-12);
    // The origin is still B's axis on A.
    CHECK((r.frame.origin - motion.translation).norm() <= 1e-9);
  }
}

TEST_CASE("C slot or tab: MMB, shift allowance and a violated boundary", "[datum][frame][slot]") {
  // A slot is internal like a bore (MMC its lower limit, shift (mating - MMB) / 2), a tab
  // external like a pin (MMC its upper limit, shift (MMB - mating) / 2) (ASME Y14.5-2018 datum
  // feature shift; common practice).
  const Motion motion = generic_motion();
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");
  const PointCloud slot = cloud(motion.apply(width_feature(true, 0.0, 0.0, 3.0, -2.0, -12.0)), "C.csv");
  const PointCloud tab = cloud(motion.apply(width_feature(false, 0.0, 0.0, 3.0, 2.0, 10.0)), "C.csv");
  PlanDatum c = width_datum(FeatureKind::slot, 0.0);
  SECTION("slot, MMB from the MMC width") {
    c.size = SizeLimits{5.990, 6.030};
    const DatumFrameResult r =
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, slot}), side);
    REQUIRE(r.c_width->mmb_size);
    CHECK(*r.c_width->mmb_size == 5.990);
    CHECK(r.c_width->shift_allowance == Approx(0.005).epsilon(1e-9));
  }
  SECTION("tab, MMB given") {
    c = width_datum(FeatureKind::tab, 0.0);
    c.size = SizeLimits{5.970, 6.010};
    c.mmb_size = 6.016;
    const DatumFrameResult r =
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, tab}), side);
    CHECK(*r.c_width->mmb_size == 6.016);
    CHECK(r.c_width->shift_allowance == Approx(0.008).epsilon(1e-9));
  }
  SECTION("a slot narrower than its MMB has no allowance and a note") {
    c.size = SizeLimits{6.010, 6.040};
    const DatumFrameResult r =
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, slot}), side);
    CHECK(r.c_width->shift_allowance == 0.0);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("datum C: related mating width 6.0000 mm violates its MMB 6.0100 mm") !=
             std::string::npos;
    }));
  }
}

TEST_CASE("C slot or tab: leaning faces, wrong features and missing datums",
          "[datum][frame][slot][errors]") {
  const Motion motion = generic_motion();
  const Eigen::Vector3d side = motion.direction(-Eigen::Vector3d::UnitZ());
  const PointCloud a = cloud(motion.apply(face_a_points()), "A.csv");
  const PointCloud b = cloud(motion.apply(lobed_feature(0.0, 0.0, 10.0, -40.0, -3.0, 0.004)), "B.csv");
  const PlanDatum c = width_datum(FeatureKind::slot, 0.0);
  const Eigen::Matrix3Xd exact = width_feature(true, 0.0, 0.0, 3.0, -2.0, -12.0);

  SECTION("faces drafted by 2 degrees: a note, planes held perpendicular to A") {
    // Each face opens by 2 degrees toward the mouth (z = 0): v = +-(3 - z tan 2deg) for z < 0.
    Eigen::Matrix3Xd drafted = exact;
    const double t = std::tan(2.0 * pi / 180.0);
    for (Eigen::Index i = 0; i < drafted.cols(); ++i)
      drafted(1, i) += (drafted(1, i) > 0 ? 1.0 : -1.0) * (-drafted(2, i)) * t;
    const DatumFrameResult r = establish_datum_frame(test::paired(
        {plane_datum('A'), size_datum('B', FeatureKind::bore), c}, {a, b, cloud(motion.apply(drafted), "C.csv")}),
        side);
    CHECK(std::any_of(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("datum C: the face of the slot left of its centre line (seen from outside the material "
                    "looking from B toward C) is 2.0") != std::string::npos;
    }));
    CHECK(std::count_if(r.notes.begin(), r.notes.end(), [](const std::string& n) {
      return n.find("degrees out of perpendicular to A") != std::string::npos;
    }) == 2);
    check_frame_is_inverse(r.frame, motion, 1e-9);
  }
  SECTION("a face parallel to A") {
    // The negative face replaced by a floor patch at z = -12 beside the centre line.
    Eigen::Matrix3Xd floor = exact;
    for (Eigen::Index i = 25; i < 50; ++i) {
      const Eigen::Index k = i - 25;
      floor.col(i) << 36.0 + 4.0 * static_cast<double>(k % 5), -1.0 - 0.4 * static_cast<double>(k / 5), -12.0;
    }
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                                            {a, b, cloud(motion.apply(floor), "C.csv")}), side),
                      Contains("datum C: the face of the slot right of its centre line (seen from outside the material "
                               "looking from B toward C) is parallel to A"));
  }
  SECTION("all points on one face") {
    const Eigen::Matrix3Xd one = exact.leftCols(25);
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), c},
                                            {a, b, cloud(motion.apply(one), "C.csv")}), side),
                      Contains("datum C: its two faces are not told apart"));
  }
  SECTION("no basic location") {
    PlanDatum bare = c;
    bare.basic_location.reset();
    CHECK_THROWS_WITH(establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::bore), bare},
                                            {a, b, cloud(motion.apply(exact), "C.csv")}), side),
                      Contains("datum C: its basic location (away from B's axis) is needed"));
  }
  SECTION("a slot as datum B") {
    CHECK_THROWS_WITH(
        establish_datum_frame(test::paired({plane_datum('A'), size_datum('B', FeatureKind::slot)},
                              {a, cloud(motion.apply(exact), "B.csv")}), side),
        Contains("datum B: a slot cannot be datum B"));
  }
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
