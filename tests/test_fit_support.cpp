// Tests of the private fit helpers (src/detail/fit_support.hpp). References: libm's atan2 and a
// sort for angles and gaps; closed-form inverses for the covariance helper; hand-checkable
// geometry for frames and sign rules.
#include <catch2/catch.hpp>

#include <Eigen/QR>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <optional>
#include <random>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "detail/fit_support.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {
constexpr double pi = 3.14159265358979323846;

// Reference coverage by sorting libm angles: 360 minus the largest gap, the definition itself.
double coverage_by_sorting(const std::vector<double>& x, const std::vector<double>& y) {
  std::vector<double> a;
  for (std::size_t i = 0; i < x.size(); ++i)
    if (x[i] != 0.0 || y[i] != 0.0) a.push_back(std::atan2(y[i], x[i]));
  if (a.size() < 2) return 0.0;
  std::sort(a.begin(), a.end());
  double gap = a.front() + 2 * pi - a.back();
  for (std::size_t i = 1; i < a.size(); ++i) gap = std::max(gap, a[i] - a[i - 1]);
  return (2 * pi - gap) * 180.0 / pi;
}

Eigen::Matrix3Xd planar_points(const std::vector<double>& x, const std::vector<double>& y) {
  Eigen::Matrix3Xd p(3, static_cast<Eigen::Index>(x.size()));
  for (std::size_t i = 0; i < x.size(); ++i) p.col(static_cast<Eigen::Index>(i)) << x[i], y[i], 0.0;
  return p;
}
}  // namespace

TEST_CASE("basis_from_direction is a right-handed orthonormal frame with w along the direction",
          "[fit_support]") {
  std::mt19937_64 rng(11);
  std::normal_distribution<double> g;
  for (int k = 0; k < 200; ++k) {
    const Eigen::Vector3d d(g(rng), g(rng), g(rng));
    const Eigen::Matrix3d b = detail::basis_from_direction(d);
    CHECK((b.transpose() * b - Eigen::Matrix3d::Identity()).norm() < 1e-14);
    CHECK(b.determinant() == Approx(1.0).margin(1e-14));
    CHECK((b.col(2) - d.normalized()).norm() < 1e-15);
  }
  // Deterministic: the same direction always gives the same frame.
  CHECK(detail::basis_from_direction({0.3, -0.2, 0.9}) == detail::basis_from_direction({0.3, -0.2, 0.9}));
}

TEST_CASE("canonical_direction follows the hint, then +z, +y, +x", "[fit_support]") {
  const Eigen::Vector3d d(0.2, -0.3, -0.9);
  CHECK(detail::canonical_direction(d, std::nullopt).z() > 0.0);
  CHECK(detail::canonical_direction(-d, std::nullopt).z() > 0.0);
  CHECK(detail::canonical_direction(d, Eigen::Vector3d(0, 0, -1)).z() < 0.0);
  CHECK(detail::canonical_direction({0.0, -1.0, 0.0}, std::nullopt).y() > 0.0);
  CHECK(detail::canonical_direction({-1.0, 0.0, 0.0}, std::nullopt).x() > 0.0);
  // A hint perpendicular to the direction cannot decide; the fixed rule applies.
  CHECK(detail::canonical_direction({0.0, 0.0, -2.0}, Eigen::Vector3d(1, 0, 0)) ==
        Eigen::Vector3d(0, 0, 1));
  CHECK(detail::canonical_direction({0.0, 0.0, -2.0}, std::nullopt).norm() == Approx(1.0));
}

TEST_CASE("canonical_axis puts the point at the foot of the perpendicular from the centroid",
          "[fit_support]") {
  const Eigen::Vector3d centroid(10.0, -4.0, 7.0);
  const Axis a = detail::canonical_axis({1.0, 2.0, 3.0}, {0.0, 0.0, -5.0}, centroid, std::nullopt);
  CHECK(a.direction == Eigen::Vector3d(0, 0, 1));
  CHECK((a.point - Eigen::Vector3d(1.0, 2.0, 7.0)).norm() < 1e-14);
  CHECK(std::abs((centroid - a.point).dot(a.direction)) < 1e-14);
}

TEST_CASE("axial_extent, make_residuals", "[fit_support]") {
  Eigen::Matrix3Xd p(3, 3);
  p << 0, 1, 2,  //
      0, 0, 0,   //
      -1, 4, 2;
  const Axis a{Eigen::Vector3d(0, 0, 1), Eigen::Vector3d(0, 0, 1)};
  const auto [lo, hi] = detail::axial_extent(p, a);
  CHECK(lo == -2.0);
  CHECK(hi == 3.0);
  Eigen::VectorXd v(4);
  v << 3, -4, 0, 1;
  const Residuals r = detail::make_residuals(v);
  CHECK(r.rms == Approx(std::sqrt(26.0 / 4.0)));
  CHECK(r.form == 7.0);
  CHECK(r.values == v);
}

TEST_CASE("scatter_matrix and principal_axes", "[fit_support]") {
  // Points on a 10 x 4 x 1 box's corners about (3, 2, 1): spreads 5, 2, 0.5 along x, y, z.
  Eigen::Matrix3Xd p(3, 8);
  int k = 0;
  for (double x : {-5.0, 5.0})
    for (double y : {-2.0, 2.0})
      for (double z : {-0.5, 0.5}) p.col(k++) = Eigen::Vector3d(3 + x, 2 + y, 1 + z);
  const Eigen::Vector3d c = detail::centroid(p);
  CHECK((c - Eigen::Vector3d(3, 2, 1)).norm() < 1e-15);
  const Eigen::Matrix3d s = detail::scatter_matrix(p, c);
  CHECK((s - Eigen::Vector3d(200.0, 32.0, 2.0).asDiagonal().toDenseMatrix()).norm() < 1e-12);
  const detail::PrincipalAxes axes = detail::principal_axes(p, c);
  CHECK(axes.rms(0) == Approx(0.5));
  CHECK(axes.rms(1) == Approx(2.0));
  CHECK(axes.rms(2) == Approx(5.0));
  CHECK(std::abs(axes.directions.col(0).z()) == Approx(1.0));
  CHECK(std::abs(axes.directions.col(2).x()) == Approx(1.0));
  CHECK(axes.scale == Approx(std::sqrt(25.0 + 4.0 + 0.25)));
}

TEST_CASE("polar_angle agrees with libm atan2 to 1e-15 rad", "[fit_support]") {
  std::mt19937_64 rng(5);
  std::normal_distribution<double> g;
  double worst = 0.0;
  auto reference = [](double x, double y) {
    const double a = std::atan2(y, x);
    return a < 0 ? a + 2 * pi : a;
  };
  std::vector<std::pair<double, double>> cases = {{1, 0}, {0, 1}, {-1, 0}, {0, -1}, {1, 1},
                                                  {-1, 1}, {-1, -1}, {1, -1}, {1, 0.41421356237309503},
                                                  {1e-300, 1}, {3, 1e-300}};
  for (int k = 0; k < 100000; ++k) cases.emplace_back(g(rng), g(rng));
  for (const auto& [x, y] : cases) {
    double diff = std::abs(detail::polar_angle(x, y) - reference(x, y));
    diff = std::min(diff, 2 * pi - diff);  // 0 and 2 pi are the same direction
    worst = std::max(worst, diff);
  }
  CHECK(worst < 1e-15);
  CHECK(detail::polar_angle(0.0, 0.0) == 0.0);
}

TEST_CASE("polar_angles gives polar_angle's bits for every direction", "[fit_support]") {
  // The batch replaces a call of polar_angle per point (two_point_sizes): compared with it to
  // the bit, over random directions and adversarial ones: the centre and signed zeros, the
  // axes and diagonals, the octant's series switch at tan(pi/8) and its neighbours, subnormal
  // and huge components, exact opposites; odd and even counts (the scalar tail).
  std::vector<double> xy;
  const auto add = [&](double x, double y) {
    xy.push_back(x);
    xy.push_back(y);
  };
  const double tan_pi_8 = 0.41421356237309504880;
  const double specials[] = {0.0, -0.0, 1.0, -1.0, tan_pi_8, -tan_pi_8,
                             std::nextafter(tan_pi_8, 0.0), std::nextafter(tan_pi_8, 1.0),
                             1e-300, -1e-300, 4.9e-324, -4.9e-324, 1e300, -1e300, 0.5, 3.0};
  for (double x : specials)
    for (double y : specials) add(x, y);
  std::mt19937_64 rng(11);
  std::normal_distribution<double> g;
  std::uniform_int_distribution<int> scale(-300, 300);
  for (int k = 0; k < 50000; ++k) {
    const double x = g(rng), y = g(rng);
    add(x, y);
    add(-x, -y);  // the opposite direction
    add(std::ldexp(x, scale(rng)), std::ldexp(y, scale(rng)));
  }
  for (std::size_t n : {xy.size() / 2, xy.size() / 2 - 1, std::size_t{1}, std::size_t{0}}) {
    std::vector<double> batch(n + 1, -7.0);
    detail::polar_angles(xy.data(), n, batch.data());
    std::size_t differing = 0;
    for (std::size_t k = 0; k < n; ++k) {
      const double one = detail::polar_angle(xy[2 * k], xy[2 * k + 1]);
      differing += std::memcmp(&one, &batch[k], sizeof(double)) != 0;
    }
    CHECK(differing == 0);
    CHECK(batch[n] == -7.0);  // nothing written past n
  }
}

TEST_CASE("angular coverage agrees with sorting libm angles", "[fit_support]") {
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  SECTION("random arcs, exact range (up to 2^15 points)") {
    for (const int n : {2, 3, 10, 100, 5000, 32768}) {
      for (const double arc_deg : {30.0, 90.0, 200.0, 359.0, 360.0}) {
        std::vector<double> x, y;
        const double start = 2 * pi * unit(rng);
        for (int i = 0; i < n; ++i) {
          const double a = start + arc_deg * pi / 180 * unit(rng);
          const double r = 5.0 + unit(rng);
          x.push_back(r * std::cos(a));
          y.push_back(r * std::sin(a));
        }
        const double got = detail::angular_coverage_deg(planar_points(x, y), Eigen::Vector3d::Zero(),
                                                        Eigen::Matrix3d::Identity());
        CHECK(got == Approx(coverage_by_sorting(x, y)).margin(1e-9));
      }
    }
  }
  SECTION("exact range: the sorted libm angles' largest gap, also for patterns and repeats") {
    // Reference: coverage_by_sorting (std::atan2 and std::sort, the definition itself). Cases
    // where the pseudo-angle's slope factor matters: equally spaced patterns (every gap a
    // candidate), the same angles repeated on rows at several radii (a CMM's levels), a
    // pattern with one wide gap, points on the coordinate axes.
    std::vector<std::pair<std::vector<double>, std::vector<double>>> sets;
    for (const int n : {3, 12, 30, 360, 1000, 32768}) {
      std::vector<double> x, y;
      for (int i = 0; i < n; ++i) {
        x.push_back(std::cos(2 * pi * i / n));
        y.push_back(std::sin(2 * pi * i / n));
      }
      sets.emplace_back(x, y);
    }
    {
      std::vector<double> x, y;
      for (int row = 0; row < 7; ++row)
        for (int i = 0; i < 30; ++i) {
          const double a = 2 * pi * i / 30 + 0.1 * row;
          x.push_back((5.0 + 0.001 * row) * std::cos(a));
          y.push_back((5.0 + 0.001 * row) * std::sin(a));
        }
      sets.emplace_back(x, y);
    }
    {
      std::vector<double> x, y;
      for (int row = 0; row < 9; ++row)
        for (int i = 0; i < 40; ++i) {  // 40 points over 300 degrees, the same on every row
          const double a = 0.3 + 300.0 * pi / 180 * i / 39;
          x.push_back((2.0 + row) * std::cos(a));
          y.push_back((2.0 + row) * std::sin(a));
        }
      sets.emplace_back(x, y);
    }
    sets.push_back({{1.0, 0.0, -1.0, 0.0, 2.0}, {0.0, 1.0, 0.0, -1.0, 0.0}});
    // Directions just below and just above the +x axis (atan2 just below 2 pi and just above
    // 0), as a rotated section gives them: they lie at opposite ends of the angle range.
    for (const double tiny : {-1e-17, 1e-17, -1e-300, -5e-324, 5e-324, -0.0}) {
      std::vector<double> x, y;
      for (int i = 0; i < 36; ++i) {
        x.push_back(5.0 * std::cos(2 * pi * i / 36));
        y.push_back(i == 0 ? tiny : 5.0 * std::sin(2 * pi * i / 36));
      }
      sets.emplace_back(x, y);
      x.resize(20);  // and an arc of 190 degrees starting there
      y.resize(20);
      sets.emplace_back(x, y);
    }
    for (const auto& [x, y] : sets) {
      const double got = detail::angular_coverage_deg(planar_points(x, y), Eigen::Vector3d::Zero(),
                                                      Eigen::Matrix3d::Identity());
      CHECK(got == Approx(coverage_by_sorting(x, y)).margin(1e-12));
    }
  }
  SECTION("probed rings as a Monte Carlo trial perturbs them: the bits of every gap converted") {
    // Evenly spaced rings make every gap a candidate; degrees() ranks them without
    // trigonometry and converts only the leaders (fit_support.cpp). Reference: the largest gap
    // of the sorted libm angles on [0, 2 pi), written as degrees() writes it, so the two must
    // agree bit for bit. Rings of 8 to 60 points at 1 to 9 levels, angles jittered by 0 (the
    // nominal pattern: ties within rounding) to 1e-3 rad (1 um to 5 um on a 5 mm radius).
    constexpr double two_pi = 2 * pi;
    std::normal_distribution<double> jitter;
    int compared = 0;
    // 64 and 65 a ring: the candidates just fill, and just overflow, degrees()' stack buffer.
    for (const int per_ring : {8, 24, 60, 64, 65})
      for (const int levels : {1, 4, 9})
        for (const double spread : {0.0, 1e-6, 2e-4, 1e-3}) {
          std::vector<double> x, y, a;
          for (int level = 0; level < levels; ++level)
            for (int i = 0; i < per_ring; ++i) {
              const double angle = 2 * pi * i / per_ring + 0.01 * level + spread * jitter(rng);
              x.push_back(5.0 * std::cos(angle));
              y.push_back(5.0 * std::sin(angle));
            }
          for (std::size_t i = 0; i < x.size(); ++i) {
            const double t = std::atan2(y[i], x[i]);
            a.push_back(t < 0.0 ? t + two_pi : t);
          }
          std::sort(a.begin(), a.end());
          double gap = a.front() + two_pi - a.back();
          for (std::size_t i = 1; i < a.size(); ++i) gap = std::max(gap, a[i] - a[i - 1]);
          const double expected = (two_pi - gap) * 360.0 / two_pi;
          const double got = detail::angular_coverage_deg(
              planar_points(x, y), Eigen::Vector3d::Zero(), Eigen::Matrix3d::Identity());
          INFO(per_ring << " points a ring, " << levels << " levels, jitter " << spread);
          CHECK(got == expected);
          ++compared;
        }
    CHECK(compared == 60);
  }
  SECTION("large sets: exact when the largest gap exceeds 0.014 degrees, else within it") {
    for (const double arc_deg : {90.0, 300.0, 359.9, 360.0}) {
      std::vector<double> x, y;
      for (int i = 0; i < 200000; ++i) {
        const double a = 1.0 + arc_deg * pi / 180 * unit(rng);
        x.push_back(std::cos(a));
        y.push_back(std::sin(a));
      }
      const double expected = coverage_by_sorting(x, y);
      const double got = detail::angular_coverage_deg(planar_points(x, y), Eigen::Vector3d::Zero(),
                                                      Eigen::Matrix3d::Identity());
      if (360.0 - expected >= 0.014)
        CHECK(got == Approx(expected).margin(1e-9));
      else
        CHECK(std::abs(got - expected) <= 0.014);
    }
    // Equally spaced points (a scan): every gap is 360/n degrees.
    std::vector<double> x, y;
    for (int i = 0; i < 100000; ++i) {
      x.push_back(std::cos(2 * pi * i / 100000.0));
      y.push_back(std::sin(2 * pi * i / 100000.0));
    }
    const double got = detail::angular_coverage_deg(planar_points(x, y), Eigen::Vector3d::Zero(),
                                                    Eigen::Matrix3d::Identity());
    CHECK(got <= 360.0);
    CHECK(got >= 360.0 - 0.014);
  }
  SECTION("points on the axis have no angle and are ignored; fewer than 2 give 0") {
    CHECK(detail::angular_coverage_deg(planar_points({0.0, 1.0}, {0.0, 0.0}), Eigen::Vector3d::Zero(),
                                       Eigen::Matrix3d::Identity()) == 0.0);
    CHECK(detail::angular_coverage_deg(planar_points({0.0, 1.0, 0.0}, {0.0, 0.0, 1.0}),
                                       Eigen::Vector3d::Zero(),
                                       Eigen::Matrix3d::Identity()) == Approx(90.0));
  }
  SECTION("merging per-thread accumulators equals one accumulator") {
    detail::ArcCoverage whole(100000), first(100000), second(100000);
    for (int i = 0; i < 100000; ++i) {
      const double a = 4.0 * unit(rng);  // 229 degrees of arc
      whole.add(std::cos(a), std::sin(a));
      (i % 2 ? first : second).add(std::cos(a), std::sin(a));
    }
    first.merge(second);
    CHECK(first.degrees() == whole.degrees());
    CHECK(whole.degrees() == Approx(4.0 * 180 / pi).margin(0.014));
  }
  SECTION("merging in the exact range equals one accumulator and the sorted angles") {
    detail::ArcCoverage whole(3000), first(3000), second(3000);
    std::vector<double> x, y;
    for (int i = 0; i < 3000; ++i) {
      const double a = 5.0 * unit(rng);  // 286 degrees of arc
      x.push_back(std::cos(a));
      y.push_back(std::sin(a));
      whole.add(x.back(), y.back());
      (i < 1700 ? first : second).add(x.back(), y.back());
    }
    first.merge(second);
    CHECK(first.degrees() == whole.degrees());
    CHECK(whole.degrees() == Approx(coverage_by_sorting(x, y)).margin(1e-12));
  }
}

TEST_CASE("covariance_from_normal_matrix is sigma^2 (J^T J)^-1 with sigma^2 = ssr / (n - p)",
          "[fit_support]") {
  Eigen::Matrix2d jtj;
  jtj << 4, 1, 1, 3;
  // Closed-form inverse of a 2x2 matrix: [d -b; -c a] / (ad - bc).
  Eigen::Matrix2d inverse;
  inverse << 3, -1, -1, 4;
  inverse /= 11.0;
  const Eigen::MatrixXd c = detail::covariance_from_normal_matrix(jtj, 6.0, 5);  // sigma^2 = 2
  CHECK((c - 2.0 * inverse).norm() < 1e-15);
  CHECK(detail::covariance_from_normal_matrix(jtj, 6.0, 2).norm() == 0.0);  // no redundancy
}

TEST_CASE("normal_matrix_is_singular", "[fit_support]") {
  Eigen::Matrix3d m = Eigen::Matrix3d::Identity();
  CHECK_FALSE(detail::normal_matrix_is_singular(m));
  // Badly scaled but regular: Jacobi scaling makes it the identity.
  m.diagonal() << 1e-20, 1.0, 1e20;
  CHECK_FALSE(detail::normal_matrix_is_singular(m));
  Eigen::Matrix3d dependent;
  dependent << 1, 2, 3, 2, 4, 6, 3, 6, 10;  // rank 2
  CHECK(detail::normal_matrix_is_singular(dependent));
  m = Eigen::Matrix3d::Identity();
  m(1, 1) = 0.0;
  CHECK(detail::normal_matrix_is_singular(m));
}

TEST_CASE("normal_matrix_is_singular decides by the eigenvalue ratio at every conditioning",
          "[fit_support]") {
  // The rule: singular when lambda_min < 1e-14 lambda_max of the Jacobi-scaled matrix. A
  // well-conditioned matrix is recognised by a Cholesky bound first; the decision must be the
  // eigenvalues' own on either side of the threshold. Matrices Q diag(lambda) Q^T with known
  // eigenvalues (a random orthogonal Q, then rows and columns scaled, which Jacobi scaling
  // undoes up to the change of eigenvalues that the unit-diagonal matrix itself shows).
  std::mt19937_64 rng(5);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (const double ratio : {1.0, 1e-3, 1e-8, 1e-11, 1e-12, 1e-13, 1e-15, 1e-16, 0.0}) {
    for (int trial = 0; trial < 20; ++trial) {
      INFO("ratio " << ratio << ", trial " << trial);
      Eigen::Matrix<double, 5, 5> g;
      for (int k = 0; k < 25; ++k) g(k) = normal(rng);
      const Eigen::Matrix<double, 5, 5> q = Eigen::HouseholderQR<Eigen::Matrix<double, 5, 5>>(g).householderQ();
      Eigen::Matrix<double, 5, 1> lambda;
      lambda << 1.0, 0.7, 0.4, 0.2, ratio;
      Eigen::Matrix<double, 5, 5> m = q * lambda.asDiagonal() * q.transpose();
      // The rule as stated, on the scaled matrix, by Eigen's eigenvalues (the reference).
      const Eigen::Matrix<double, 5, 1> s = m.diagonal().cwiseSqrt().cwiseInverse();
      const Eigen::Matrix<double, 5, 5> scaled = s.asDiagonal() * m * s.asDiagonal();
      const Eigen::Matrix<double, 5, 1> e =
          Eigen::SelfAdjointEigenSolver<Eigen::Matrix<double, 5, 5>>(scaled).eigenvalues();
      const bool expected = !(e(0) > 1e-14 * e(4));
      CHECK(detail::normal_matrix_is_singular(m) == expected);
      Eigen::Matrix<double, 5, 1> units;
      units << 1e-3, 1.0, 1e4, 1e-6, 10.0;  // mixed parameter units
      CHECK(detail::normal_matrix_is_singular(Eigen::Matrix<double, 5, 5>(units.asDiagonal() * m * units.asDiagonal())) == expected);
      if (ratio >= 1e-11) CHECK_FALSE(expected);
      if (ratio <= 1e-16) CHECK(expected);
    }
  }
}

namespace {

// The decision as it was computed before the fixed-size Cholesky bound (Eigen's LLT, the
// inverse by a solve with the identity, its Frobenius norm), kept here as the reference the
// new path must match on every input; the eigenvalues (Eigen's SelfAdjointEigenSolver) decide
// when the bound does not.
template <int N>
Eigen::Matrix<double, N, N> jacobi_scaled(const Eigen::Matrix<double, N, N>& m) {
  const auto scale = m.diagonal().cwiseSqrt().cwiseInverse().eval();
  return scale.asDiagonal() * m * scale.asDiagonal();
}

template <int N>
bool previous_bound_clears(const Eigen::Matrix<double, N, N>& scaled) {
  const Eigen::LLT<Eigen::Matrix<double, N, N>> cholesky(scaled);
  if (cholesky.info() != Eigen::Success) return false;
  const double norm = cholesky.solve(Eigen::Matrix<double, N, N>::Identity()).norm();
  return std::isfinite(norm) && 1.0 / norm > 1e-12 * static_cast<double>(N);
}

template <int N>
bool previous_normal_matrix_is_singular(const Eigen::Matrix<double, N, N>& m) {
  if (!m.allFinite() || (m.diagonal().array() <= 0.0).any()) return true;
  const Eigen::Matrix<double, N, N> scaled = jacobi_scaled<N>(m);
  if (previous_bound_clears<N>(scaled)) return false;
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix<double, N, N>> eigen(scaled,
                                                                          Eigen::EigenvaluesOnly);
  return !(eigen.eigenvalues()(0) > 1e-14 * eigen.eigenvalues()(N - 1));
}

// J^T J of a random N-column Jacobian of 40 rows whose last column is a random combination of
// the others plus `independent` times fresh noise (0: exactly dependent up to rounding), rows
// and columns then given mixed units.
template <int N>
Eigen::Matrix<double, N, N> random_normal_matrix(std::mt19937_64& rng, double independent) {
  std::normal_distribution<double> normal(0.0, 1.0);
  Eigen::Matrix<double, 40, N> j;
  for (int k = 0; k < 40 * N; ++k) j(k) = normal(rng);
  Eigen::Matrix<double, N - 1, 1> mix;
  for (int k = 0; k < N - 1; ++k) mix(k) = normal(rng);
  Eigen::Matrix<double, 40, 1> noise;
  for (int k = 0; k < 40; ++k) noise(k) = normal(rng);
  j.col(N - 1) = j.leftCols(N - 1) * mix + independent * noise;
  Eigen::Matrix<double, N, 1> units;
  for (int k = 0; k < N; ++k) units(k) = std::pow(10.0, static_cast<double>((3 * k) % 7) - 3.0);
  const Eigen::Matrix<double, 40, N> scaled = j * units.asDiagonal();
  return scaled.transpose() * scaled;
}

template <int N>
void compare_singularity_decisions(std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::uniform_real_distribution<double> exponent(-18.0, 0.0);
  int singular = 0, regular = 0;
  for (int trial = 0; trial < 3000; ++trial) {
    // Independence from 1 down to 1e-18 (log-uniform), every 10th exactly dependent: the
    // decisions on both sides of the 1e-14 threshold.
    const double independent = trial % 10 == 0 ? 0.0 : std::pow(10.0, exponent(rng));
    const Eigen::Matrix<double, N, N> m = random_normal_matrix<N>(rng, independent);
    INFO("size " << N << ", trial " << trial << ", independence " << independent);
    const bool expected = previous_normal_matrix_is_singular<N>(m);
    CHECK(detail::normal_matrix_is_singular(m) == expected);
    (expected ? singular : regular) += 1;
  }
  // Both outcomes were exercised many times (the sample is not one-sided).
  CHECK(singular > 300);
  CHECK(regular > 300);
  // Q diag(1, 0.5, r, ..., r) Q^T with r from 10^-15.5 to 10^-9.5: the band where the new bound
  // (trace of the inverse) is up to sqrt(N - 2) weaker than the previous one (its Frobenius
  // norm), so the eigenvalues decide where the previous bound did, and the 1e-14 threshold.
  std::uniform_real_distribution<double> small(-15.5, -9.5);
  int band = 0;
  for (int trial = 0; trial < 3000; ++trial) {
    Eigen::Matrix<double, N, N> g;
    for (int k = 0; k < N * N; ++k) g(k) = normal(rng);
    const Eigen::Matrix<double, N, N> q =
        Eigen::HouseholderQR<Eigen::Matrix<double, N, N>>(g).householderQ();
    Eigen::Matrix<double, N, 1> lambda = Eigen::Matrix<double, N, 1>::Constant(std::pow(10.0, small(rng)));
    lambda(0) = 1.0;
    lambda(1) = 0.5;
    const Eigen::Matrix<double, N, N> m = q * lambda.asDiagonal() * q.transpose();
    INFO("size " << N << ", eigenvalue trial " << trial << ", r " << lambda(N - 1));
    CHECK(detail::normal_matrix_is_singular(m) == previous_normal_matrix_is_singular<N>(m));
    const Eigen::Matrix<double, N, N> scaled = jacobi_scaled<N>(m);
    if (previous_bound_clears<N>(scaled) && !detail::cholesky_clears_singularity<N>(scaled)) ++band;
    // The bound never clears what the previous bound did not: for N >= 4 it is weaker by at
    // least sqrt(2) here, far beyond the inverses' rounding (for N = 3 the two nearly coincide).
    if (N >= 4 && detail::cholesky_clears_singularity<N>(scaled))
      CHECK(previous_bound_clears<N>(scaled));
  }
  if (N >= 4) CHECK(band > 20);  // the band was reached (for N = 3 it is one eigenvalue wide)
}

}  // namespace

TEST_CASE("normal_matrix_is_singular decides as the previous LLT-inverse bound and eigenvalues",
          "[fit_support]") {
  // Reference: the previous computation (above), itself checked against the eigenvalue rule by
  // the test before this one. Random normal matrices, nearly and exactly singular ones.
  compare_singularity_decisions<3>(31);
  compare_singularity_decisions<4>(41);
  compare_singularity_decisions<5>(51);
  // Special inputs: zero, negative and non-finite diagonals, an indefinite matrix with a unit
  // diagonal, an exactly rank-one matrix, the identity, a huge spread of units.
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  std::vector<Eigen::Matrix<double, 5, 5>> special;
  special.push_back(Eigen::Matrix<double, 5, 5>::Identity());
  special.push_back(Eigen::Matrix<double, 5, 5>::Zero());
  special.push_back(Eigen::Matrix<double, 5, 5>::Ones());
  Eigen::Matrix<double, 5, 5> m = Eigen::Matrix<double, 5, 5>::Identity();
  m(2, 2) = -1.0;
  special.push_back(m);
  m = Eigen::Matrix<double, 5, 5>::Identity();
  m(0, 3) = m(3, 0) = 2.0;  // indefinite: eigenvalues -1 and 3
  special.push_back(m);
  m = Eigen::Matrix<double, 5, 5>::Identity();
  m(1, 4) = nan;
  special.push_back(m);
  m = Eigen::Matrix<double, 5, 5>::Identity();
  m(4, 4) = inf;
  special.push_back(m);
  m = Eigen::Matrix<double, 5, 5>::Identity();
  m.diagonal() << 1e-300, 1.0, 1e300, 5e-324, 1e150;
  special.push_back(m);
  for (std::size_t k = 0; k < special.size(); ++k) {
    INFO("special matrix " << k);
    CHECK(detail::normal_matrix_is_singular(special[k]) ==
          previous_normal_matrix_is_singular<5>(special[k]));
  }
  // The bound itself: it clears the identity and never a matrix the eigenvalues call singular.
  CHECK(detail::cholesky_clears_singularity<5>(Eigen::Matrix<double, 5, 5>::Identity()));
  CHECK_FALSE(detail::cholesky_clears_singularity<5>(Eigen::Matrix<double, 5, 5>::Ones()));
}

TEST_CASE("gauss_newton solves a small nonlinear problem and reports the iteration limit",
          "[fit_support]") {
  // Fit y = exp(b t) to exact data with b = 0.7: residual r_i = exp(b t_i) - y_i,
  // J_i = t_i exp(b t_i). The solution is known exactly.
  std::vector<double> t, y;
  for (int i = 0; i < 20; ++i) {
    t.push_back(0.1 * i);
    y.push_back(std::exp(0.7 * 0.1 * i));
  }
  auto evaluate = [&](const Eigen::Matrix<double, 1, 1>& b, Eigen::Matrix<double, 1, 1>& jtj,
                      Eigen::Matrix<double, 1, 1>& jtr) {
    jtj.setZero();
    jtr.setZero();
    double ssr = 0.0;
    for (std::size_t i = 0; i < t.size(); ++i) {
      const double e = std::exp(b(0) * t[i]);
      const double r = e - y[i], j = t[i] * e;
      jtj(0) += j * j;
      jtr(0) += j * r;
      ssr += r * r;
    }
    return ssr;
  };
  auto apply = [](const Eigen::Matrix<double, 1, 1>& b, const Eigen::Matrix<double, 1, 1>& step) {
    return Eigen::Matrix<double, 1, 1>(b + step);
  };
  FitOptions options;
  Eigen::Matrix<double, 1, 1> b;
  b << 3.0;  // far start: the first full steps overshoot and are halved
  const auto outcome = detail::gauss_newton<1>(b, evaluate, apply, Eigen::Matrix<double, 1, 1>::Ones(),
                                               1.0, options, "singular");
  CHECK(outcome.status == FitStatus::converged);
  CHECK(b(0) == Approx(0.7).margin(1e-12));
  CHECK(outcome.ssr < 1e-20);
  b << 3.0;
  options.max_iterations = 2;
  const auto limited = detail::gauss_newton<1>(b, evaluate, apply, Eigen::Matrix<double, 1, 1>::Ones(),
                                               1.0, options, "singular");
  CHECK(limited.status == FitStatus::iteration_limit);
  CHECK(limited.iterations == 2);
  CHECK(std::abs(b(0) - 0.7) > 1e-6);
}

TEST_CASE("degeneracy helpers give one-line messages", "[fit_support]") {
  CHECK_THROWS_WITH(detail::require_point_count(2, 3, "circle"),
                    "a circle needs at least 3 points, got 2");
  Eigen::Matrix3Xd same(3, 4);
  same.colwise() = Eigen::Vector3d(2500.0, -1800.0, 3200.0);
  CHECK_THROWS_WITH(detail::require_distinct_points(same, detail::centroid(same), "line"),
                    "all 4 points coincide; a line needs distinct points");
  CHECK_THROWS_AS(detail::centroid(Eigen::Matrix3Xd(3, 0)), FitError);
  CHECK_THROWS_WITH(detail::checked_direction(Eigen::Vector3d::Zero(), "fixed direction"),
                    Contains("fixed direction must be a finite, non-zero vector"));
  CHECK(detail::checked_direction({0, 3, 4}, "x") == Eigen::Vector3d(0, 0.6, 0.8));
  FitOptions options;
  CHECK(detail::iteration_message(FitStatus::converged, 1, options) == "converged in 1 iteration");
  CHECK_THAT(detail::iteration_message(FitStatus::iteration_limit, 100, options),
             Contains("iteration limit (100)"));
  FitSummary summary;
  detail::warn_on_coverage(summary, 84.04, options);
  REQUIRE(summary.warnings.size() == 1);
  CHECK_THAT(summary.warnings[0], Contains("84.0 degrees"));
  detail::warn_on_coverage(summary, 270.0, options);
  CHECK(summary.warnings.size() == 1);
  CHECK(detail::format_number(0.12345, 4) == "0.1235");
}

TEST_CASE("finiteness checks refuse overflowing and non-finite data in words",
          "[fit_support][overflow]") {
  // IEEE 754 binary64 (IEEE 754-2019, 3.6): the largest finite value is (2 - 2^-52) 2^1023,
  // std::numeric_limits<double>::max(). require_finite_sums accepts `count` fourth powers of
  // `scale` exactly while their sum stays below it.
  const double largest = std::numeric_limits<double>::max();
  const std::size_t count = 1000;
  const double limit = std::pow(largest / static_cast<double>(count), 0.25);
  CHECK_NOTHROW(detail::require_finite_sums(limit * (1.0 - 1e-9), count, "plane"));
  CHECK_THROWS_WITH(detail::require_finite_sums(limit * (1.0 + 1e-9), count, "plane"),
                    Contains("coordinates too large") && Contains("a plane cannot be fitted"));
  CHECK_THROWS_AS(detail::require_finite_sums(std::numeric_limits<double>::infinity(), 1, "line"),
                  FitError);

  // require_distinct_points: a NaN or an infinite coordinate, a mean that overflows, squared
  // offsets that overflow.
  Eigen::Matrix3Xd p(3, 4);
  p << 0, 1, 0, 1, 0, 0, 1, 1, 0, 0, 0, 1;
  Eigen::Matrix3Xd bad = p;
  bad(2, 3) = std::numeric_limits<double>::quiet_NaN();
  CHECK_THROWS_WITH(detail::require_distinct_points(bad, detail::centroid(bad), "sphere"),
                    Contains("not finite"));
  bad(2, 3) = std::numeric_limits<double>::infinity();
  CHECK_THROWS_WITH(detail::require_distinct_points(bad, detail::centroid(bad), "sphere"),
                    Contains("not finite"));
  const Eigen::Matrix3Xd beyond = 0.9 * largest * p;  // the sum of two such x overflows
  CHECK_THROWS_WITH(detail::require_distinct_points(beyond, detail::centroid(beyond), "plane"),
                    Contains("mean overflows"));
  const Eigen::Matrix3Xd spread = 1e200 * p;  // finite mean, squared offsets overflow
  CHECK_THROWS_WITH(detail::require_distinct_points(spread, detail::centroid(spread), "plane"),
                    Contains("coordinates too large") && Contains("7.5e+199 mm"));
  CHECK(detail::require_distinct_points(p, detail::centroid(p), "plane") ==
        Approx(std::sqrt(1.0625)));  // (1, 1, 1) is farthest from the centroid (0.5, 0.5, 0.25)

  // Results: residuals and directions that are not finite never leave a fit.
  Eigen::VectorXd values(3);
  values << 0.1, -0.2, std::numeric_limits<double>::quiet_NaN();
  CHECK_THROWS_WITH(detail::make_residuals(values), Contains("coordinates too large"));
  values(2) = 1e200;  // finite, but the rms squares it
  CHECK_THROWS_AS(detail::make_residuals(values), FitError);
  values(2) = 0.3;
  const Residuals r = detail::make_residuals(values);
  CHECK(r.form == Approx(0.5));
  CHECK(r.rms == Approx(std::sqrt((0.01 + 0.04 + 0.09) / 3.0)));
  CHECK_THROWS_WITH(detail::canonical_direction(
                        Eigen::Vector3d(std::numeric_limits<double>::quiet_NaN(), 0.0, 1.0),
                        std::nullopt),
                    Contains("not finite"));
}

// local_coordinates_into replaces a model's local coordinates in place with a plain loop;
// every figure of a dense scan must keep its bits, so it must equal local_coordinates exactly
// (Eigen's product, the reference: its coefficient-wise evaluation of the fixed 3 x 3 factor),
// signed zeros included (memcmp, not ==), for sizes short of and past Eigen's small-product
// threshold and past the 4096-column blocks other callers use, with points at the origin and
// with -0.0 coordinates against a basis with zero and negative entries.
TEST_CASE("local_coordinates_into gives the bits of local_coordinates", "[fit_support]") {
  std::mt19937_64 rng(4097);
  std::uniform_real_distribution<double> coordinate(-250.0, 250.0);
  const Eigen::Matrix3d rotated =
      Eigen::AngleAxisd(0.7, Eigen::Vector3d(0.3, -0.5, 0.8).normalized()).toRotationMatrix();
  Eigen::Matrix3d signs;  // a column of negative entries, a column with -0.0 entries
  signs << -0.6, -0.0, 0.8, -0.8, -1.0, 0.6, -0.0, -0.0, 0.0;
  for (const Eigen::Matrix3d& basis : {rotated, signs}) {
    for (const Eigen::Vector3d& origin :
         {Eigen::Vector3d(12.25, -7.5, 301.125), Eigen::Vector3d(0.0, 0.0, 0.0)}) {
      for (const Eigen::Index n : {Eigen::Index{0}, Eigen::Index{1}, Eigen::Index{13},
                                   Eigen::Index{14}, Eigen::Index{4095}, Eigen::Index{4096},
                                   Eigen::Index{4097}, Eigen::Index{4096 + 13},
                                   Eigen::Index{10000}}) {
        Eigen::Matrix3Xd points(3, n);
        for (Eigen::Index i = 0; i < n; ++i)
          points.col(i) = Eigen::Vector3d(coordinate(rng), coordinate(rng), coordinate(rng));
        if (n > 2) {
          points.col(0) = origin;  // w = +0.0: the products take the basis' signs
          points.col(1) = Eigen::Vector3d(-0.0, origin.y(), -0.0);
          points.col(n - 1) = Eigen::Vector3d(origin.x(), -0.0, origin.z());
        }
        const Eigen::Matrix3Xd expected = detail::local_coordinates(points, origin, basis);
        Eigen::Matrix3Xd local = Eigen::Matrix3Xd::Constant(3, 5, 1.0);  // resized, overwritten
        detail::local_coordinates_into(points, origin, basis, local);
        INFO("n = " << n << ", origin " << origin.transpose());
        REQUIRE(local.cols() == n);
        const auto bytes = static_cast<std::size_t>(3 * n) * sizeof(double);
        CHECK((n == 0 || std::memcmp(local.data(), expected.data(), bytes) == 0));
        detail::local_coordinates_into(points, origin, basis, local);  // in place, same size
        CHECK((n == 0 || std::memcmp(local.data(), expected.data(), bytes) == 0));
      }
    }
  }
}

// scatter_matrix, principal_axes and make_residuals run in every fit of every trial; their
// passes were rewritten (SSE2 lanes, one pass fewer) without changing a bit of what they
// return. The references are the previous code, kept here: scatter_matrix's six scalar sums,
// principal_axes' projection through Eigen's (D^T d).cwiseAbs2() and d.squaredNorm(), and
// make_residuals' test with allFinite(). Compared with memcmp, so signed zeros count.
namespace {

Eigen::Matrix3d reference_scatter_matrix(const Eigen::Matrix3Xd& points,
                                         const Eigen::Vector3d& centre) {
  double xx = 0, xy = 0, xz = 0, yy = 0, yz = 0, zz = 0;
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const double x = points(0, i) - centre.x();
    const double y = points(1, i) - centre.y();
    const double z = points(2, i) - centre.z();
    xx += x * x;
    xy += x * y;
    xz += x * z;
    yy += y * y;
    yz += y * z;
    zz += z * z;
  }
  Eigen::Matrix3d s;
  s << xx, xy, xz, xy, yy, yz, xz, yz, zz;
  return s;
}

detail::PrincipalAxes reference_principal_axes(const Eigen::Matrix3Xd& points,
                                               const Eigen::Vector3d& centre) {
  detail::PrincipalAxes axes;
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eigen(
      reference_scatter_matrix(points, centre));
  axes.directions = eigen.eigenvectors();
  Eigen::Vector3d sum2 = Eigen::Vector3d::Zero();
  double scale2 = 0.0;
  const Eigen::Matrix3d dt = axes.directions.transpose();
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const Eigen::Vector3d d = points.col(i) - centre;
    sum2 += (dt * d).cwiseAbs2();
    scale2 = std::max(scale2, d.squaredNorm());
  }
  const double n = static_cast<double>(std::max<Eigen::Index>(points.cols(), 1));
  axes.rms = (sum2 / n).cwiseSqrt();
  axes.scale = std::sqrt(scale2);
  return axes;
}

// Outcome of make_residuals or of the previous test: thrown, or the figures.
struct ResidualsOutcome {
  bool thrown = false;
  double rms = 0.0, form = 0.0;
};

ResidualsOutcome reference_make_residuals(const Eigen::VectorXd& values) {
  ResidualsOutcome o;
  if (values.size() > 0) {
    o.rms = std::sqrt(values.squaredNorm() / static_cast<double>(values.size()));
    o.form = values.maxCoeff() - values.minCoeff();
  }
  o.thrown = !values.allFinite() || !std::isfinite(o.rms) || !std::isfinite(o.form);
  return o;
}

template <class T>
bool same_bits(const T& a, const T& b) {
  return std::memcmp(&a, &b, sizeof(T)) == 0;
}

// Test clouds: a bore-like ring with noise, a near-plane, a near-line, points on the centre,
// -0.0 coordinates, coincident points, odd and even sizes, far from the origin.
Eigen::Matrix3Xd varied_cloud(std::mt19937_64& rng, int kind, Eigen::Index n) {
  std::normal_distribution<double> g;
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  Eigen::Matrix3Xd p(3, n);
  const Eigen::Vector3d offset(u(rng) * 400.0, u(rng) * 300.0, u(rng) * 100.0);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double t = u(rng) * 3.14159265358979323846;
    switch (kind % 6) {
      case 0:  // a bore: radius 5, 40 deep, micrometre noise
        p.col(i) = offset + Eigen::Vector3d(5.0 * std::cos(t), 5.0 * std::sin(t), 40.0 * u(rng)) +
                   1e-3 * Eigen::Vector3d(g(rng), g(rng), g(rng));
        break;
      case 1:  // nearly a plane
        p.col(i) = offset + Eigen::Vector3d(50.0 * u(rng), 30.0 * u(rng), 1e-9 * g(rng));
        break;
      case 2:  // nearly a line
        p.col(i) = offset + Eigen::Vector3d(1e-10 * g(rng), 1e-10 * g(rng), 20.0 * u(rng));
        break;
      case 3:  // exact zeros and signed zeros about the origin
        p.col(i) = Eigen::Vector3d(i % 3 == 0 ? -0.0 : u(rng), i % 4 == 0 ? 0.0 : g(rng),
                                   i % 5 == 0 ? -0.0 : g(rng));
        break;
      case 4:  // coincident points
        p.col(i) = offset;
        break;
      default:  // a cloud of all scales
        p.col(i) = Eigen::Vector3d(g(rng) * std::pow(10.0, 6 * u(rng)), g(rng) * 1e-3, g(rng) * 1e3);
    }
  }
  return p;
}

}  // namespace

TEST_CASE("scatter_matrix and principal_axes give the previous computation's bits",
          "[fit_support]") {
  std::mt19937_64 rng(20261204);
  int compared = 0;
  for (int kind = 0; kind < 6; ++kind) {
    for (Eigen::Index n : {0, 1, 2, 3, 4, 5, 7, 8, 33, 64, 145, 211, 290, 1001}) {
      for (int rep = 0; rep < 4; ++rep) {
        const Eigen::Matrix3Xd p = varied_cloud(rng, kind, n);
        // The centroid, and a centre that is not the centroid (every caller passes a centre).
        const Eigen::Vector3d c = n > 0 ? detail::centroid(p) : Eigen::Vector3d::Zero();
        for (const Eigen::Vector3d& centre : {c, Eigen::Vector3d(c + Eigen::Vector3d(0.5, -0.0, 2.0))}) {
          const Eigen::Matrix3d s = detail::scatter_matrix(p, centre);
          const Eigen::Matrix3d s_ref = reference_scatter_matrix(p, centre);
          REQUIRE(std::memcmp(s.data(), s_ref.data(), sizeof(double) * 9) == 0);
          const detail::PrincipalAxes a = detail::principal_axes(p, centre);
          const detail::PrincipalAxes a_ref = reference_principal_axes(p, centre);
          REQUIRE(std::memcmp(a.directions.data(), a_ref.directions.data(), sizeof(double) * 9) == 0);
          REQUIRE(std::memcmp(a.rms.data(), a_ref.rms.data(), sizeof(double) * 3) == 0);
          REQUIRE(same_bits(a.scale, a_ref.scale));
          ++compared;
        }
      }
    }
  }
  CHECK(compared == 6 * 14 * 4 * 2);
  // A non-finite coordinate: the same NaN or infinity where the old code had one.
  Eigen::Matrix3Xd p = varied_cloud(rng, 0, 9);
  const Eigen::Vector3d c = detail::centroid(p);
  p(1, 4) = std::numeric_limits<double>::infinity();
  const Eigen::Matrix3d s = detail::scatter_matrix(p, c);
  const Eigen::Matrix3d s_ref = reference_scatter_matrix(p, c);
  CHECK(std::memcmp(s.data(), s_ref.data(), sizeof(double) * 9) == 0);
}

TEST_CASE("make_residuals decides as with the pass over every value", "[fit_support]") {
  std::mt19937_64 rng(77);
  std::normal_distribution<double> g;
  const double inf = std::numeric_limits<double>::infinity();
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double big = std::numeric_limits<double>::max();
  int thrown = 0, kept = 0;
  for (Eigen::Index n : {0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 31, 64, 211}) {
    for (int trial = 0; trial < 40; ++trial) {
      Eigen::VectorXd v(n);
      for (Eigen::Index i = 0; i < n; ++i) v(i) = g(rng) * 1e-3;
      if (n > 0) {
        const auto at = static_cast<Eigen::Index>(rng() % static_cast<std::uint64_t>(n));
        switch (trial % 10) {
          case 1: v(at) = nan; break;
          case 2: v(at) = inf; break;
          case 3: v(at) = -inf; break;
          case 4: v(at) = 1e200; break;  // finite, but its square overflows
          case 5: v(at) = big; v((at + 1) % n) = -big; break;  // the form overflows
          case 6: v(at) = -0.0; break;
          case 7: v.setZero(); break;
          case 8: v(at) = inf; v((at + 1) % n) = -inf; break;
          default: break;
        }
      }
      const ResidualsOutcome ref = reference_make_residuals(v);
      ResidualsOutcome got;
      try {
        const Residuals r = detail::make_residuals(v);
        got.rms = r.rms;
        got.form = r.form;
        REQUIRE(r.values.size() == n);
      } catch (const FitError&) {
        got.thrown = true;
      }
      REQUIRE(got.thrown == ref.thrown);
      if (!ref.thrown) {
        REQUIRE(same_bits(got.rms, ref.rms));
        REQUIRE(same_bits(got.form, ref.form));
        ++kept;
      } else {
        ++thrown;
      }
    }
  }
  CHECK(thrown > 100);  // both outcomes were exercised
  CHECK(kept > 100);
}

TEST_CASE("ArcCoverage moved, grown in a vector and merged gives the sorted angles' coverage",
          "[fit_support]") {
  // ArcCoverage's arrays are written once (the bounds) or by a bucket's first point (its
  // ends) instead of zero-filled first; the prepare stage keeps them in a vector grown by
  // emplace_back (moved at every growth) and merges per-worker ones. Reference: 360 minus the
  // largest gap of the sorted libm angles (coverage_by_sorting), exact in this range, on
  // arcs from 20 to 359 degrees, few and many points, sparse buckets and buckets hit twice.
  std::mt19937_64 rng(8);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::vector<detail::ArcCoverage> arcs;  // no reserve: every growth moves them
  std::vector<std::vector<double>> xs, ys;
  for (int k = 0; k < 40; ++k) {
    const std::size_t n = 2 + static_cast<std::size_t>(k * k * 3);
    const double arc = (20.0 + 339.0 * unit(rng)) * pi / 180.0;
    arcs.emplace_back(n);
    xs.emplace_back();
    ys.emplace_back();
    for (std::size_t i = 0; i < n; ++i) {
      const double a = arc * unit(rng) + (k % 3 == 0 ? 2.0 : 0.0);
      const double r = 0.5 + unit(rng);
      xs.back().push_back(r * std::cos(a));
      ys.back().push_back(r * std::sin(a));
    }
  }
  for (std::size_t k = 0; k < arcs.size(); ++k)
    for (std::size_t i = 0; i < xs[k].size(); ++i) arcs[k].add(xs[k][i], ys[k][i]);
  for (std::size_t k = 0; k < arcs.size(); ++k) {
    INFO("set " << k);
    CHECK(arcs[k].degrees() == Approx(coverage_by_sorting(xs[k], ys[k])).margin(1e-12));
    // Split between two accumulators, merged into one of them (its empty buckets take the
    // other's ends), then moved.
    detail::ArcCoverage first(xs[k].size()), second(xs[k].size());
    for (std::size_t i = 0; i < xs[k].size(); ++i)
      (i % 3 == 0 ? first : second).add(xs[k][i], ys[k][i]);
    first.merge(second);
    const detail::ArcCoverage moved = std::move(first);
    CHECK(moved.degrees() == arcs[k].degrees());
  }
}
