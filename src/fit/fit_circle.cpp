// Least-squares circles: the 2D geometric fit shared by circles, fixed-direction cylinders and
// sections (detail/circle_2d.hpp), and the 3D circle in its least-squares plane (Shakarji 1998,
// J. Res. NIST 103(6), section on 3D circles).
#include <Eigen/Cholesky>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <string>

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_circle.hpp"
#include "detail/sse2_lanes.hpp"
#include "fit/detail/circle_2d.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {
namespace detail {
namespace {

// Centred statistics of a 2D set, gathered in one pass: centroid, the largest distance from it,
// whether the set lies on a straight line (the collinearity test, with the spread along and
// across the principal direction where it was needed) and the normal equations of the
// algebraic (Kasa) circle on the centred points.
struct PlanarSpread {
  Eigen::Vector2d centroid;
  double scale = 0.0;
  bool on_a_line = false;    // across_rms <= degenerate_spread_ratio * along_rms
  double along_rms = 0.0;    // rms along the principal direction (0 when not needed)
  double across_rms = 0.0;   // rms perpendicular to it (0 when not needed)
  Eigen::Matrix3d ata;       // sum a a^T with a = (x, y, 1), centred coordinates
  Eigen::Vector3d atb;       // sum a b with b = -(x^2 + y^2)
};

PlanarSpread planar_spread(const Eigen::Matrix2Xd& uv) {
  PlanarSpread s;
  const double n = static_cast<double>(uv.cols());
  s.centroid = uv.rowwise().mean();
  // The distinct sums of a a^T and a b only (a a^T is symmetric; the products with a's constant
  // 1 are exact), and the largest squared distance with one square root at the end (sqrt is
  // monotone and correctly rounded, so that is the largest distance to the bit).
  double xx = 0, xy = 0, yy = 0, sx = 0, sy = 0, bx = 0, by = 0, b = 0, largest2 = 0;
  const Eigen::Index count = uv.cols();
  const double* q = uv.data();
  Eigen::Index i = 0;
#if defined(__SSE2__)
  {
    // The x and y sums of a point side by side in the two lanes of one SSE2 operation: each
    // lane rounds as the scalar instruction does, and every sum takes its terms in the same
    // order as the scalar loop below, so the same bits (test_fit_circle compares them with a
    // copy of that loop).
    const __m128d centre = _mm_loadu_pd(s.centroid.data());
    __m128d squares = _mm_setzero_pd(), sums = _mm_setzero_pd(), moments = _mm_setzero_pd();
    // A pointer, not an index, walks the points (fewer instructions a point).
    for (const double *a = q, *end = q + 2 * count; a != end; a += 2) {
      const __m128d p = _mm_sub_pd(_mm_loadu_pd(a), centre);  // (x, y)
      const __m128d p2 = _mm_mul_pd(p, p);                              // (x x, y y)
      const double r2 = _mm_cvtsd_f64(p2) + _mm_cvtsd_f64(_mm_unpackhi_pd(p2, p2));
      squares = _mm_add_pd(squares, p2);
      xy += _mm_cvtsd_f64(p) * _mm_cvtsd_f64(_mm_unpackhi_pd(p, p));
      sums = _mm_add_pd(sums, p);
      const double minus_r2 = -r2;
      moments = _mm_add_pd(moments, _mm_mul_pd(p, _mm_set1_pd(minus_r2)));
      b += minus_r2;
      largest2 = std::max(largest2, r2);
    }
    i = count;
    split_lanes(squares, sums, moments, xx, yy, sx, sy, bx, by);
  }
#endif
  for (; i < count; ++i) {
    const double x = q[2 * i] - s.centroid.x(), y = q[2 * i + 1] - s.centroid.y();
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
  s.scale = std::sqrt(largest2);
  s.ata << xx, xy, sx, xy, yy, sy, sx, sy, n;
  s.atb << bx, by, b;
  // The collinearity test compares the scatter matrix's eigenvalues, lambda_0 <= lambda_1. Its
  // determinant bounds the smaller one: lambda_0 = det / lambda_1 >= det / trace. Where the
  // computed det is at least 1e-6 trace^2 (its rounding is a few eps trace^2), lambda_0 is at
  // least about 1e-6 lambda_1, far above the test's 1e-20 and above the eigensolver's error
  // (eps times the matrix norm, Golub and Van Loan, Matrix Computations, 4th ed., 2013, 8.1.2
  // and 8.3): the test fails whatever the solver returns, so it is not run (only the message
  // of a set on a line reads the two rms). A full circle's det / trace^2 is about 1/4; NaN or
  // overflowed sums fail this bound and take the solver.
  const double trace = xx + yy;
  if (xx * yy - xy * xy > 1e-6 * (trace * trace)) return s;
  Eigen::Matrix2d m;
  m << xx, xy, xy, yy;
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(m, Eigen::EigenvaluesOnly);
  s.across_rms = std::sqrt(std::max(0.0, eigen.eigenvalues()(0)) / n);
  s.along_rms = std::sqrt(std::max(0.0, eigen.eigenvalues()(1)) / n);
  s.on_a_line = s.across_rms <= degenerate_spread_ratio * s.along_rms;
  return s;
}

}  // namespace

namespace {

/// fit_circle_2d_algebraic from the set's spread (planar_spread(uv)).
Circle2dFit algebraic_from_spread(const Eigen::Matrix2Xd& uv, const PlanarSpread& spread) {
  if (spread.on_a_line)
    throw FitError("the points lie on a straight line (rms " +
                   format_number(spread.across_rms, 9) + " mm off it over " +
                   format_number(2.0 * spread.scale, 6) +
                   " mm); a circle needs points not on one line");
  // Kasa: minimise sum (x^2 + y^2 + D x + E y + F)^2 over (D, E, F), a linear problem, on the
  // centred points (centring keeps the normal equations well scaled).
  const Eigen::Vector3d def = spread.ata.ldlt().solve(spread.atb);
  Circle2dFit fit;
  const Eigen::Vector2d c(-0.5 * def(0), -0.5 * def(1));
  const double r2 = c.squaredNorm() - def(2);
  fit.centre = spread.centroid + c;
  // r2 > 0 for any set not on a line; the mean distance is a safe start otherwise.
  fit.radius = r2 > 0.0 ? std::sqrt(r2) : (uv.colwise() - fit.centre).colwise().norm().mean();
  return fit;
}

}  // namespace

Circle2dFit fit_circle_2d_algebraic(const Eigen::Matrix2Xd& uv) {
  require_point_count(static_cast<std::size_t>(uv.cols()), 3, "circle");
  return algebraic_from_spread(uv, planar_spread(uv));
}

Circle2dFit fit_circle_2d_least_squares(const Eigen::Matrix2Xd& uv, const FitOptions& options) {
  require_point_count(static_cast<std::size_t>(uv.cols()), 3, "circle");
  const PlanarSpread spread = planar_spread(uv);
  const Circle2dFit start = algebraic_from_spread(uv, spread);
  // Work in coordinates centred at the start centre's neighbourhood: subtract the centroid so
  // parts far from the origin keep full precision. Both are the spread's: its centroid is
  // uv.rowwise().mean(), and its scale the largest |q_i - centroid| (the largest square, then
  // one square root: sqrt is monotone and correctly rounded, so that is the largest norm to
  // the bit, for the finite points a fit is given).
  const Eigen::Vector2d origin = spread.centroid;
  const double scale = spread.scale;
  Eigen::Vector3d state(start.centre.x() - origin.x(), start.centre.y() - origin.y(),
                        start.radius);
  // d_i = |q_i - c| - r, J_i = (-(q_i - c)/|q_i - c|, -1) (Forbes 1989, 2D circle). J^T J
  // and J^T d summed entry by entry: J^T J is symmetric (j_a j_b = j_b j_a exactly), and the
  // products with J's last column -1 are exact (-j_0, -j_1, 1, -d), so each sum is the same
  // sequence of roundings as the full outer product's J^T J += j j^T, J^T d += j d, with 9
  // sums a point instead of 12 and no product by -1: the sum of 1.0 a point is the point
  // count, exactly (below 2^53) (tests/test_fit_circle.cpp compares the two bit for bit).
  const Eigen::Index count = uv.cols();
  const double* q = uv.data();
  auto evaluate = [&](const Eigen::Vector3d& p, Eigen::Matrix3d& jtj, Eigen::Vector3d& jtr) {
    double s00 = 0.0, s01 = 0.0, s11 = 0.0, s02 = 0.0, s12 = 0.0;
    double r0 = 0.0, r1 = 0.0, r2 = 0.0, ssr = 0.0;
    Eigen::Index i = 0;
#if defined(__SSE2__)
    {
      // The x and y terms of a point side by side in the two lanes of one SSE2 operation
      // (dx, dy; j0, j1; s00, s11; s02, s12; r0, r1): each lane rounds as the scalar
      // instruction does and every sum takes its terms in the scalar loop's order, so the same
      // bits (-dx * inv is (-dx) * inv, and s + (-j) is s - j, exactly; test_fit_circle
      // compares every figure with a copy of the scalar computation).
      const __m128d offset = _mm_set_pd(origin.y(), origin.x());
      const __m128d centre = _mm_set_pd(p(1), p(0));
      const __m128d sign = _mm_set1_pd(-0.0);
      __m128d squares = _mm_setzero_pd(), sums = _mm_setzero_pd(), moments = _mm_setzero_pd();
      for (const double *a = q, *end = q + 2 * count; a != end; a += 2) {
        const __m128d dxy = _mm_sub_pd(_mm_sub_pd(_mm_loadu_pd(a), offset), centre);
        const __m128d d2 = _mm_mul_pd(dxy, dxy);
        const double rho = std::sqrt(_mm_cvtsd_f64(d2) + _mm_cvtsd_f64(_mm_unpackhi_pd(d2, d2)));
        const double d = rho - p(2);
        const double inv = rho > 0.0 ? 1.0 / rho : 0.0;
        const __m128d j = _mm_mul_pd(_mm_xor_pd(dxy, sign), _mm_set1_pd(inv));  // (j0, j1)
        squares = _mm_add_pd(squares, _mm_mul_pd(j, j));
        s01 += _mm_cvtsd_f64(j) * _mm_cvtsd_f64(_mm_unpackhi_pd(j, j));
        sums = _mm_sub_pd(sums, j);
        moments = _mm_add_pd(moments, _mm_mul_pd(j, _mm_set1_pd(d)));
        r2 -= d;
        ssr += d * d;
      }
      i = count;
      split_lanes(squares, sums, moments, s00, s11, s02, s12, r0, r1);
    }
#endif
    for (; i < count; ++i) {
      const double dx = q[2 * i] - origin.x() - p(0), dy = q[2 * i + 1] - origin.y() - p(1);
      const double rho = std::sqrt(dx * dx + dy * dy);
      const double d = rho - p(2);
      const double inv = rho > 0.0 ? 1.0 / rho : 0.0;
      const double j0 = -dx * inv, j1 = -dy * inv;
      s00 += j0 * j0;
      s01 += j0 * j1;
      s11 += j1 * j1;
      s02 += -j0;
      s12 += -j1;
      r0 += j0 * d;
      r1 += j1 * d;
      r2 += -d;
      ssr += d * d;
    }
    const double s22 = static_cast<double>(count);
    jtj << s00, s01, s02, s01, s11, s12, s02, s12, s22;
    jtr << r0, r1, r2;
    return ssr;
  };
  auto apply = [](const Eigen::Vector3d& p, const Eigen::Vector3d& step) {
    return Eigen::Vector3d(p + step);
  };
  const auto outcome =
      gauss_newton<3>(state, evaluate, apply, Eigen::Vector3d::Ones(), scale, options,
                      "the circle is not determined by the points (too few distinct points)");
  if (!(state(2) > 0.0))
    throw FitError("no least-squares circle exists for these points (the radius tends to zero)");
  Circle2dFit fit;
  fit.centre = origin + state.head<2>();
  fit.radius = state(2);
  fit.ssr = outcome.ssr;
  fit.normal_matrix = outcome.normal_matrix;
  fit.status = outcome.status;
  fit.iterations = outcome.iterations;
  return fit;
}

}  // namespace detail

CircleFit fit_circle_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  const auto n = static_cast<std::size_t>(points.cols());
  detail::require_point_count(n, 3, "circle");
  const Eigen::Vector3d centroid = detail::centroid(points);
  detail::require_distinct_points(points, centroid, "circle");
  Eigen::Vector3d normal;
  if (options.fixed_direction) {
    normal = detail::checked_direction(*options.fixed_direction, "fixed direction");
  } else {
    const detail::PrincipalAxes axes = detail::principal_axes(points, centroid);
    if (axes.rms(1) <= detail::degenerate_spread_ratio * axes.rms(2))
      throw FitError("the points lie on a straight line (rms " +
                     detail::format_number(axes.rms(1), 9) + " mm off it over " +
                     detail::format_number(2.0 * axes.scale, 6) +
                     " mm); a circle needs points not on one line");
    normal = axes.directions.col(0);  // the least-squares plane's normal
  }
  normal = detail::canonical_direction(normal, options.axis_hint);
  const Eigen::Matrix3d basis = detail::basis_from_direction(normal);
  const Eigen::Matrix2Xd uv = detail::planar_coordinates(points, centroid, basis);
  const detail::Circle2dFit planar = detail::fit_circle_2d_least_squares(uv, options);

  CircleFit fit;
  fit.normal = normal;
  fit.radius = planar.radius;
  fit.centre = centroid + basis.leftCols<2>() * planar.centre;
  fit.residuals = detail::make_residuals(
      ((uv.colwise() - planar.centre).colwise().norm().array() - planar.radius).matrix().transpose());
  // Reported only (FitOptions::result_coverage): a Chebyshev circle started from this one
  // measures the coverage it rests on itself when it is off.
  if (options.result_coverage) {
    fit.angular_coverage_deg = detail::angular_coverage_deg(points, fit.centre, basis);
    fit.covariance.basis = basis;
    fit.covariance.matrix =
        detail::covariance_from_normal_matrix(planar.normal_matrix, planar.ssr, n);
  }
  fit.summary.method = FitMethod::least_squares;
  fit.summary.point_count = n;
  fit.summary.status = planar.status;
  fit.summary.iterations = planar.iterations;
  if (options.result_messages)
    fit.summary.message = detail::iteration_message(planar.status, planar.iterations, options);
  detail::warn_on_coverage(fit.summary, fit.angular_coverage_deg, options);
  return fit;
}

}  // namespace cylzone
