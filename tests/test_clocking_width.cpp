// The related mating width of a slot or tab about datum B's axis
// (detail/clocking_width.hpp, fit_width_about_origin), the kernel of a clocking datum C that is a
// width feature of size.
//
// References outside the code under test:
//  * closed forms derived below from the problem statement (a max-min / min-max of sinusoids)
//    for two straight faces y = e +- h, x in [t1, t2], turned by an arbitrary angle;
//  * tests/reference/crosscheck_clocking_width.py: an exact enumeration, with numpy, of every
//    crossing of two points' sinusoids, every sinusoid's peak and every end of the interval of
//    rotations keeping each point on its face, on random noisy slots and tabs written by the
//    hidden case "[width-cases]" below (the optimum of a max-min of finitely many smooth
//    functions lies at a breakpoint, a stationary point of one of them or an end of the domain;
//    common practice for piecewise-smooth minimax problems).
#include <catch2/catch.hpp>

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <iomanip>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <tuple>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "datum/detail/clocking_width.hpp"
#include "case_file.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;
using cylzone::detail::fit_width_about_origin;
using cylzone::detail::WidthAboutAxis;

namespace {

constexpr double pi = 3.14159265358979323846;

// A centre line and its reverse are the same line: the difference of two line angles, reduced
// to (-pi/2, pi/2].
double line_angle_difference(double a, double b) {
  double d = std::remainder(a - b, pi);
  if (d <= -0.5 * pi) d += pi;
  return d;
}

Eigen::Matrix2d rotation(double phi) {
  Eigen::Matrix2d r;
  r << std::cos(phi), -std::sin(phi), std::sin(phi), std::cos(phi);
  return r;
}

// Two straight faces of a slot or tab in its own frame: face +1 on y = e + h, face -1 on
// y = e - h, each with `per_face` points evenly spaced over x in [t1, t2] (both ends and the
// points between), the faces interleaved in the point order; then the whole set turned by phi
// about the origin (datum B's axis). face(i) is the generator's face of point i: +1 is left of
// the direction from B toward the feature (counterclockwise), as the header defines it.
struct TwoFaces {
  Eigen::Matrix2Xd points;
  Eigen::VectorXi face;
};

TwoFaces two_faces(double e, double h, double t1, double t2, int per_face, double phi) {
  TwoFaces f;
  f.points.resize(2, 2 * per_face);
  f.face.resize(2 * per_face);
  const Eigen::Matrix2d turn = rotation(phi);
  for (int k = 0; k < per_face; ++k) {
    const double x = t1 + (t2 - t1) * k / (per_face - 1);
    f.points.col(2 * k) = turn * Eigen::Vector2d(x, e + h);
    f.face(2 * k) = 1;
    f.points.col(2 * k + 1) = turn * Eigen::Vector2d(x, e - h);
    f.face(2 * k + 1) = -1;
  }
  return f;
}

// As two_faces, with `plus` points on face +1 and `minus` on face -1 (each at least 2), face +1
// first.
TwoFaces unbalanced_faces(double e, double h, double t1, double t2, int plus, int minus,
                          double phi) {
  TwoFaces f;
  f.points.resize(2, plus + minus);
  f.face.resize(plus + minus);
  const Eigen::Matrix2d turn = rotation(phi);
  int i = 0;
  for (const auto& [side, count] : {std::pair{1, plus}, std::pair{-1, minus}})
    for (int k = 0; k < count; ++k, ++i) {
      f.points.col(i) = turn * Eigen::Vector2d(t1 + (t2 - t1) * k / (count - 1), e + side * h);
      f.face(i) = side;
    }
  return f;
}

// Closed form (derived here from the problem statement of detail/clocking_width.hpp).
//
// In the feature's own frame (before the turn by phi) a centre line through the origin at
// angle theta has the normal n = (-sin theta, cos theta); with c = cos theta, s = sin theta a
// point (x, y) has d = y c - x s, so on the faces
//     face +1 (y = e + h):   s_i d_i =  (e + h) c - x s,
//     face -1 (y = e - h):   s_i d_i = -(e - h) c + x s = (h - e) c + x s.
// Over x in [t1, t2] these are linear in x, so only the face ends matter.
//
// Slot (w/2 = max over theta of the least s_i d_i). Take e > 0, so theta > 0 (the centre line
// turns toward the gap's centre): the least on face +1 is at x = t2, (e + h) c - t2 s, falling
// in theta; the least on face -1 at x = t1, (h - e) c + t1 s, rising while t1 > (h - e) tan
// theta. The maximum of the smaller of the two is where they are equal:
//     (e + h) c - t2 s = (h - e) c + t1 s   <=>   tan theta = 2 e / (t1 + t2) =: tan delta,
//     w = 2 [(h - e) cos delta + t1 sin delta].
// For e < 0 the mirror image y -> -y (which swaps the faces and maps theta -> -theta) gives the
// same delta = atan(2e / (t1 + t2)) (now negative) and w = 2 [(h + e) cos delta - t1 sin delta];
// both signs together: w_slot = 2 [(h - |e|) cos delta + t1 |sin delta|]. (The formula
// 2 [(h - e) cos delta + t1 sin delta] holds for e >= 0 only: for e < 0 it would be the
// simulator's width at delta measured to the wrong ends of the faces.)
//
// Tab (w/2 = min over theta of the largest s_i d_i). For e > 0, theta > 0: the largest on face
// +1 is at x = t1, (e + h) c - t1 s, falling; on face -1 at x = t2, (h - e) c + t2 s, rising
// while t2 > (h - e) tan theta. They are equal at the same delta, and
//     w = 2 [(e + h) cos delta - t1 sin delta],
// and by the mirror image for both signs w_tab = 2 [(h + |e|) cos delta - t1 |sin delta|].
//
// Both are global optima when t1 > h (the cases below): then on the whole interval of
// rotations keeping every point on its face (|theta| < atan((h + |e|) / t1)) the falling and
// rising branches stay falling and rising, so the crossing is the only candidate. e = 0 gives
// delta = 0 and w = 2h for both. Turning the whole set by phi turns the centre line by phi.
struct ClosedForm {
  double angle = 0.0;
  double width = 0.0;
};

ClosedForm closed_form(bool internal, double e, double h, double t1, double t2, double phi) {
  const double delta = std::atan(2.0 * e / (t1 + t2));
  const double c = std::cos(delta), s = std::abs(std::sin(delta));
  ClosedForm f;
  f.angle = phi + delta;
  f.width = internal ? 2.0 * ((h - std::abs(e)) * c + t1 * s)
                     : 2.0 * ((h + std::abs(e)) * c - t1 * s);
  return f;
}

// The objective of the header evaluated directly at angle theta with the given faces: the
// half-width 2 * (least (slot) or largest (tab) s_i d_i).
double width_at(const Eigen::Matrix2Xd& points, const Eigen::VectorXi& face, bool internal,
                double theta) {
  const Eigen::Vector2d n(-std::sin(theta), std::cos(theta));
  double best = internal ? std::numeric_limits<double>::infinity()
                         : -std::numeric_limits<double>::infinity();
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const double v = face(i) * n.dot(points.col(i));
    best = internal ? std::min(best, v) : std::max(best, v);
  }
  return 2.0 * best;
}

void check_closed_form(bool internal, double e, double h, double t1, double t2, int per_face,
                       double phi, double tolerance) {
  const TwoFaces f = two_faces(e, h, t1, t2, per_face, phi);
  const ClosedForm expected = closed_form(internal, e, h, t1, t2, phi);
  INFO((internal ? "slot" : "tab") << ": e " << e << ", h " << h << ", t1 " << t1 << ", t2 "
                                   << t2 << ", " << per_face << " points per face, phi " << phi);
  const WidthAboutAxis r = fit_width_about_origin(f.points, internal);
  INFO(std::setprecision(17) << "width " << r.mating_width << " (expected " << expected.width
                             << "), angle " << r.angle << " (expected " << expected.angle << ")");
  CHECK(std::abs(r.mating_width - expected.width) <= tolerance);
  CHECK(std::abs(line_angle_difference(r.angle, expected.angle)) <= tolerance);
  // The faces are the generator's, and the reported width is the objective at the reported
  // angle (not merely a number near the closed form).
  CHECK(r.face == f.face);
  CHECK(std::abs(width_at(f.points, f.face, internal, r.angle) - r.mating_width) <= tolerance);
  CHECK(r.evaluations > 0);
}

// A slot of 8 points in its own frame (faces y = 2 +- 1.5 over x in [10, 30]), turned by
// 0.7 rad: the base of the bad-input cases.
Eigen::Matrix2Xd good_points() { return two_faces(0.4, 1.5, 10.0, 30.0, 4, 0.7).points; }

}  // namespace

// ================================================================ closed forms

TEST_CASE("clocking width: slot and tab of straight faces match the closed form",
          "[clocking-width]") {
  // Closed form derived above (comment at closed_form), from the problem statement only.
  const double phi = 2.4137;  // nothing axis-aligned
  for (const bool internal : {true, false}) {
    SECTION(std::string(internal ? "slot" : "tab") + ", centre plane off B's axis (e > 0)") {
      check_closed_form(internal, 1.25, 4.0, 18.0, 52.0, 9, phi, 1e-12);
    }
    SECTION(std::string(internal ? "slot" : "tab") + ", centre plane off B's axis (e < 0)") {
      check_closed_form(internal, -0.83, 3.1, 12.5, 47.0, 7, -1.1903, 1e-12);
    }
    SECTION(std::string(internal ? "slot" : "tab") + ", symmetric about B's axis (e = 0)") {
      const TwoFaces f = two_faces(0.0, 2.75, 15.0, 40.0, 6, phi);
      const WidthAboutAxis r = fit_width_about_origin(f.points, internal);
      CHECK(std::abs(r.mating_width - 5.5) <= 1e-12);  // 2h
      CHECK(std::abs(line_angle_difference(r.angle, phi)) <= 1e-12);
      CHECK(r.face == f.face);
    }
    SECTION(std::string(internal ? "slot" : "tab") + ", exactly 2 points per face") {
      check_closed_form(internal, 0.61, 2.0, 6.0, 14.0, 2, 0.3718, 1e-12);
      check_closed_form(internal, -0.61, 2.0, 6.0, 14.0, 2, -2.8, 1e-12);
    }
    SECTION(std::string(internal ? "slot" : "tab") + ", far from B's axis and large") {
      // t of order 1000 mm. A distance of a few mm computed in double from coordinates of size
      // |q| carries a rounding error of a few units of eps |q| (each coordinate alone is
      // rounded to eps |q| / 2; standard floating-point error analysis, common practice), here
      // up to 3e-13 mm per distance; the width is twice one. 8 eps |q| allows for it; the
      // angle, a ratio of differences, stays near 1e-16 rad.
      for (const auto& [e, h, t1, t2, per_face, turn] :
           {std::tuple{-3.7, 12.0, 980.0, 1130.0, 25, 4.0021},
            std::tuple{2.2, 6.0, 1500.0, 1510.0, 11, -0.5512}}) {
        const double far = std::hypot(t2, std::abs(e) + h);
        check_closed_form(internal, e, h, t1, t2, per_face, turn,
                          std::max(1e-12, 8.0 * std::numeric_limits<double>::epsilon() * far));
      }
    }
    SECTION(std::string(internal ? "slot" : "tab") + ", wider than it is long") {
      // Faces 1.5 mm long, 14 mm apart: the points' major principal direction runs across the
      // feature, so the centre line must come from the other one.
      check_closed_form(internal, 1.9, 7.0, 22.0, 23.5, 4, 1.05, 1e-12);
    }
  }
}

TEST_CASE("clocking width: interior points and receding points do not move the optimum",
          "[clocking-width]") {
  // Points receding from the simulator (into the material: away from the gap for a slot, into
  // the tab for a tab) are never active, so the closed form of the straight faces still holds.
  const double e = 0.9, h = 3.5, t1 = 25.0, t2 = 61.0, phi = -0.37;
  for (const bool internal : {true, false}) {
    TwoFaces f = two_faces(e, h, t1, t2, 5, phi);
    const Eigen::Matrix2d turn = rotation(phi);
    std::mt19937_64 rng(internal ? 71 : 72);
    std::uniform_real_distribution<double> along(t1, t2), recede(0.001, 0.05);
    const Eigen::Index exact = f.points.cols();
    f.points.conservativeResize(2, exact + 20);
    f.face.conservativeResize(exact + 20);
    for (int k = 0; k < 20; ++k) {
      const int side = k % 2 ? -1 : 1;
      const double into = internal ? recede(rng) : -recede(rng);  // away from the centre line
      f.points.col(exact + k) = turn * Eigen::Vector2d(along(rng), e + side * (h + into));
      f.face(exact + k) = side;
    }
    const ClosedForm expected = closed_form(internal, e, h, t1, t2, phi);
    const WidthAboutAxis r = fit_width_about_origin(f.points, internal);
    CHECK(std::abs(r.mating_width - expected.width) <= 1e-12);
    CHECK(std::abs(line_angle_difference(r.angle, expected.angle)) <= 1e-12);
    CHECK(r.face == f.face);
  }
}

TEST_CASE("clocking width: faces with very different point counts", "[clocking-width]") {
  // The least-squares line through B's axis leans toward the face with more points; for these
  // sets it cuts through that face, so it cannot be what tells the faces apart. The closed form
  // (comment at closed_form) depends only on the faces' ends, not on the counts.
  for (const bool internal : {true, false}) {
    for (const auto& [e, h, t1, t2, plus, minus, phi] :
         {std::tuple{0.8, 2.5, 20.0, 80.0, 30, 2, 0.77},
          std::tuple{-0.8, 2.5, 20.0, 80.0, 2, 30, -2.9},
          std::tuple{1.0, 3.0, 12.0, 60.0, 4, 36, 1.6}}) {
      INFO((internal ? "slot" : "tab") << ": " << plus << " points on face +1, " << minus
                                       << " on face -1, e " << e);
      const TwoFaces f = unbalanced_faces(e, h, t1, t2, plus, minus, phi);
      const ClosedForm expected = closed_form(internal, e, h, t1, t2, phi);
      const WidthAboutAxis r = fit_width_about_origin(f.points, internal);
      CHECK(r.face == f.face);
      CHECK(std::abs(r.mating_width - expected.width) <= 1e-12);
      CHECK(std::abs(line_angle_difference(r.angle, expected.angle)) <= 1e-12);
    }
  }
}

// ================================================================ bad input

TEST_CASE("clocking width: every documented error is a FitError with its reason",
          "[clocking-width][errors]") {
  // Messages as documented in detail/clocking_width.hpp. No input leaves a face empty: the
  // start either lies strictly between two non-empty faces or is an eigenvector u of sum q q^T,
  // for which sum t_i d_i = u^T (sum q q^T) u_perp = 0 (to rounding) with every t_i > 0 and
  // every |d_i| > 1e-9 |q|max checked before, so the d_i cannot all have one sign.
  for (const bool internal : {true, false}) {
    const std::string feature = internal ? "slot" : "tab";
    INFO(feature);
    SECTION(feature + ": fewer than 4 points") {
      const Eigen::Matrix2Xd p = good_points().leftCols(3);
      CHECK_THROWS_AS(fit_width_about_origin(p, internal), FitError);
      CHECK_THROWS_WITH(fit_width_about_origin(p, internal),
                        Contains("a " + feature +
                                 " needs at least 4 points, 2 on each face, got 3"));
    }
    SECTION(feature + ": a face with 1 point (right)") {
      // Four points on the left face, one on the right one (the faces are told apart as they
      // are: 4 + 1).
      Eigen::Matrix2Xd p(2, 5);
      p << 10.0, 20.0, 30.0, 40.0, 25.0,  //
          2.0, 2.0, 2.0, 2.0, -3.0;
      p = rotation(-2.2) * p;
      CHECK_THROWS_AS(fit_width_about_origin(p, internal), FitError);
      CHECK_THROWS_WITH(fit_width_about_origin(p, internal),
                        Contains("the face right of the centre line") &&
                            Contains("has 1 point; each face of a " + feature +
                                     " needs at least 2"));
    }
    SECTION(feature + ": a face with 1 point (left)") {
      Eigen::Matrix2Xd p(2, 5);
      p << 10.0, 20.0, 30.0, 40.0, 25.0,  //
          -2.0, -2.0, -2.0, -2.0, 3.0;
      p = rotation(1.3) * p;
      CHECK_THROWS_AS(fit_width_about_origin(p, internal), FitError);
      CHECK_THROWS_WITH(fit_width_about_origin(p, internal),
                        Contains("the face left of the centre line") &&
                            Contains("has 1 point; each face of a " + feature +
                                     " needs at least 2"));
    }
    SECTION(feature + ": points on a line through B's axis") {
      // No line through the origin separates points that all lie on one line through it: every
      // start passes within rounding of them, and the first is named.
      Eigen::Matrix2Xd p(2, 6);
      p << 10.0, 20.0, 30.0, 40.0, 15.0, 25.0,  //
          1.0, 2.0, 3.0, 4.0, 1.5, 2.5;
      p = rotation(0.9) * p;
      CHECK_THROWS_AS(fit_width_about_origin(p, internal), FitError);
      CHECK_THROWS_WITH(fit_width_about_origin(p, internal),
                        Contains("point #1 lies on the centre line through datum B's axis") &&
                            Contains("so the faces of the " + feature + " are not separated"));
    }
    SECTION(feature + ": points behind B's axis") {
      Eigen::Matrix2Xd p = good_points();
      p.col(2) = -p.col(2);  // through the origin to the far side
      p.col(5) = -0.01 * p.col(5);
      CHECK_THROWS_AS(fit_width_about_origin(p, internal), FitError);
      CHECK_THROWS_WITH(fit_width_about_origin(p, internal),
                        Contains("its points are not all on one side of datum B's axis: 2 of 8") &&
                            Contains("so the direction from B to the " + feature +
                                     " cannot be told"));
    }
    SECTION(feature + ": centroid on B's axis") {
      // A slot straddling the axis: its points' centroid is the origin.
      Eigen::Matrix2Xd p(2, 8);
      p << 10.0, 20.0, -10.0, -20.0, 10.0, 20.0, -10.0, -20.0,  //
          1.5, 1.5, 1.5, 1.5, -1.5, -1.5, -1.5, -1.5;
      p = rotation(0.25) * p;
      CHECK_THROWS_AS(fit_width_about_origin(p, internal), FitError);
      CHECK_THROWS_WITH(fit_width_about_origin(p, internal),
                        Contains("the centroid of its points lies on the axis of datum B") &&
                            Contains("so the direction from B to the " + feature +
                                     " cannot be told"));
    }
    SECTION(feature + ": a coordinate not finite") {
      for (const double bad : {std::numeric_limits<double>::quiet_NaN(),
                               std::numeric_limits<double>::infinity(),
                               -std::numeric_limits<double>::infinity()}) {
        Eigen::Matrix2Xd p = good_points();
        p(1, 6) = bad;
        CHECK_THROWS_AS(fit_width_about_origin(p, internal), FitError);
        CHECK_THROWS_WITH(fit_width_about_origin(p, internal),
                          Contains("a coordinate of the " + feature + " is not finite"));
      }
    }
    SECTION(feature + ": the good points pass") {
      // The base of the cases above is itself accepted, so each error comes from its defect.
      const WidthAboutAxis r = fit_width_about_origin(good_points(), internal);
      CHECK(r.face.size() == 8);
      CHECK(r.mating_width > 0.0);
    }
  }
}

// ================================================================ export for the reference check

namespace {

std::string json_number(double x) {
  std::ostringstream s;
  s << std::setprecision(17) << x;
  return s.str();
}

}  // namespace

TEST_CASE("write random slots and tabs with cylzone's widths for crosscheck_clocking_width.py",
          "[.][width-cases]") {
  // Random noisy slots and tabs: faces y = e +- h (+ gaussian noise across them, 0.3 to 3 um)
  // over x in [t1, t2] in the feature's own frame, turned by a random phi about B's axis. The
  // generator's face of each point is written with it; the reference solves the problem again
  // from the points and those faces.
  std::mt19937_64 rng(20240917);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::ostringstream json;
  json << "{\"cases\": [\n";
  const int count = 400;
  int mismatched_faces = 0;
  for (int k = 0; k < count; ++k) {
    const bool internal = k % 2 == 0;
    const double phi = pi * (2.0 * unit(rng) - 1.0);
    const double h = 0.5 + 14.5 * unit(rng);
    double e = k % 10 == 4 || k % 10 == 5 ? 0.0 : h * 0.7 * (2.0 * unit(rng) - 1.0);
    double t1 = h + 2.0 + 250.0 * unit(rng);
    double length = 1.0 + 120.0 * unit(rng);
    if (k % 5 == 3) {
      t1 = 800.0 + 700.0 * unit(rng);  // far from B's axis: t of order 1000 mm
    } else if (k % 8 >= 6) {
      // Short and starting close to B's axis (t1 < h/2) with the centre plane well off it: a
      // slot's optimum is then often the smooth peak of one point's sinusoid (the point whose
      // direction from B becomes perpendicular to the centre line) rather than a crossing.
      t1 = h * (0.2 + 0.3 * unit(rng));
      length = 0.5 + 2.0 * h * unit(rng);
      e = (unit(rng) < 0.5 ? -h : h) * (0.3 + 0.2 * unit(rng));
    }
    const double t2 = t1 + length;
    const double sigma = 0.0003 + 0.0027 * unit(rng);
    std::normal_distribution<double> noise(0.0, sigma);
    const int n = 6 + static_cast<int>(75.0 * unit(rng));  // 6 .. 80
    const int positive = 3 + static_cast<int>((n - 5) * unit(rng));  // 3 .. n - 3
    const Eigen::Matrix2d turn = rotation(phi);
    Eigen::Matrix2Xd points(2, n);
    Eigen::VectorXi face(n);
    std::vector<int> order(static_cast<std::size_t>(n));
    for (int i = 0; i < n; ++i) order[static_cast<std::size_t>(i)] = i;
    std::shuffle(order.begin(), order.end(), rng);
    for (int i = 0; i < n; ++i) {
      const int side = order[static_cast<std::size_t>(i)] < positive ? 1 : -1;
      const double x = t1 + (t2 - t1) * unit(rng);
      points.col(i) = turn * Eigen::Vector2d(x, e + side * h + noise(rng));
      face(i) = side;
    }
    INFO("case " << k << std::setprecision(17) << ": phi " << phi << ", e " << e << ", h " << h
                  << ", t1 " << t1 << ", t2 " << t2 << ", " << n << " points, " << positive
                  << " on face +1");
    const WidthAboutAxis r = fit_width_about_origin(points, internal);
    if (r.face != face) ++mismatched_faces;
    json << (k ? ",\n" : "") << "{\"name\": \"" << (internal ? "slot" : "tab") << "-" << k
         << "\", \"internal\": " << (internal ? "true" : "false")
         << ", \"generator\": {\"phi\": " << json_number(phi) << ", \"e\": " << json_number(e)
         << ", \"h\": " << json_number(h) << ", \"t1\": " << json_number(t1)
         << ", \"t2\": " << json_number(t2) << ", \"sigma\": " << json_number(sigma)
         << "},\n\"points\": [";
    for (int i = 0; i < n; ++i)
      json << (i ? ", " : "") << "[" << json_number(points(0, i)) << ", "
           << json_number(points(1, i)) << "]";
    json << "],\n\"face\": [";
    for (int i = 0; i < n; ++i) json << (i ? ", " : "") << face(i);
    json << "],\n\"result\": {\"angle\": " << json_number(r.angle)
         << ", \"width\": " << json_number(r.mating_width) << ", \"face\": [";
    for (int i = 0; i < n; ++i) json << (i ? ", " : "") << r.face(i);
    json << "]}}";
  }
  json << "\n]}\n";
  // cylzone tells the faces as the generator made them (the noise is far below the widths).
  CHECK(mismatched_faces == 0);
  const std::filesystem::path file =
      cylzone::testing::write_case_file("CYLZONE_WIDTH_CASES", json.str());
  CHECK(std::filesystem::file_size(file) > 100000);
}
