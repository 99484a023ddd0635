#pragma once
// Private helpers shared by the fit modules: centring, frames, sign conventions, residual
// statistics, coverage and degeneracy checks. Not installed.

#include <Eigen/Cholesky>
#include <Eigen/Core>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_types.hpp"

namespace cylzone::detail {

/// A fit again from its own start, after an earlier fit's (FitOptions::start) did not lead to
/// its convergence test or certificate: `fit(options without the start)`, its summary marked
/// StartOutcome::restarted.
template <class Fit>
auto fit_from_own_start(const FitOptions& options, Fit&& fit) {
  FitOptions own = options;
  own.start.reset();
  auto result = fit(own);
  result.summary.start = StartOutcome::restarted;
  return result;
}

/// Mean of the columns. Throws FitError on an empty set.
Eigen::Vector3d centroid(const Eigen::Matrix3Xd& points);

/// Largest distance of a point from `centre`: the data's size, used to scale tolerances.
double data_scale(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre);

/// Largest distance of a planar point from the planar points' centroid (the 2D data scale).
double planar_scale(const Eigen::Matrix2Xd& uv);

/// Right-handed orthonormal basis (u, v, w) with w = direction / |direction|. Deterministic:
/// u is the unit vector orthogonal to w closest to whichever of x, y is less parallel to w.
Eigen::Matrix3d basis_from_direction(const Eigen::Vector3d& direction);

/// Unit `direction` with the project's sign rule: same side as `hint` if given (and not
/// perpendicular to it), otherwise toward +z, then +y, then +x. Throws FitError when
/// `direction` is not finite (a fit whose arithmetic overflowed).
Eigen::Vector3d canonical_direction(const Eigen::Vector3d& direction,
                                    const std::optional<Eigen::Vector3d>& hint);

/// Coordinates of the points in a local frame: column i is basis^T (p_i - origin).
Eigen::Matrix3Xd local_coordinates(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& origin,
                                   const Eigen::Matrix3d& basis);

/// local_coordinates written into `local` (resized to 3 x n) in one pass, with no
/// temporary of the whole cloud beside it: the Chebyshev models replace their local
/// coordinates of a large face in place at every step. The same bits as local_coordinates.
void local_coordinates_into(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& origin,
                            const Eigen::Matrix3d& basis, Eigen::Matrix3Xd& local);

/// The first two local coordinates only: the points projected onto the plane through `origin`
/// spanned by basis columns 0 and 1 (used for circles and fixed-direction cylinders).
Eigen::Matrix2Xd planar_coordinates(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& origin,
                                    const Eigen::Matrix3d& basis);

/// Canonical axis: direction by canonical_direction, point = foot of the perpendicular from
/// `centroid` onto the line through `point_on_axis`.
Axis canonical_axis(const Eigen::Vector3d& point_on_axis, const Eigen::Vector3d& direction,
                    const Eigen::Vector3d& centroid, const std::optional<Eigen::Vector3d>& hint);

/// [min, max] of (p - axis.point).axis.direction.
std::pair<double, double> axial_extent(const Eigen::Matrix3Xd& points, const Axis& axis);

/// rms and form = max - min of the values. Throws FitError ("coordinates too large ...") when a
/// value, the rms or the form is not finite: every fit's residuals pass through here, so no fit
/// returns a non-finite element.
Residuals make_residuals(Eigen::VectorXd values);

/// 360 minus the largest angular gap, in degrees, of the points' angles about `centre` in the
/// plane of `basis` columns 0 and 1 (see ArcCoverage for the method and its resolution).
double angular_coverage_deg(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre,
                            const Eigen::Matrix3d& basis);

/// Angular coverage accumulated point by point (so a fit's final pass can feed it): add() the
/// in-plane offset (x, y) of each point from the centre, then degrees() = 360 minus the largest
/// angular gap. O(n), no sort: the maximum-gap bucket method (Gonzalez 1975; Preparata & Shamos,
/// Computational Geometry, 1985, 6.4): with n angles in n equal buckets the largest gap is at
/// least one bucket wide, so it runs between neighbouring non-empty buckets and only each
/// bucket's lowest and highest angle is kept. Points are bucketed by a cheap monotone
/// pseudo-angle, the "diamond angle" y / (|x| + |y|) per half-plane, whose slope against the
/// true angle varies by a factor 2: a true gap lies between 1 and 2 times its pseudo-gap, so
/// only the gaps of at least half the largest pseudo-gap are converted to true angles.
/// Up to 2^15 points (as announced to the constructor) there are 1.5 buckets per point, no
/// gap inside a bucket can be the largest (at most 2 x 4 / 1.5n < 2 pi / n), each bucket
/// keeps its extreme points themselves, and the candidates' ends are exact atan2 angles: the
/// result is the sorted libm angles' largest gap (to the rounding of the pseudo-angle, which
/// could only swap two directions within about 1e-16 rad of each other). Beyond that, 2^15
/// buckets (512 KB, cache-resident) keep only pseudo-angles, converted back to true angles:
/// exact whenever the largest gap is at least 0.014 degrees (a bucket's widest true span),
/// otherwise within that.
class ArcCoverage {
 public:
  explicit ArcCoverage(std::size_t expected_points);
  void add(double x, double y) {  // inline: it runs once per point in the fits' final passes
    if (x == 0.0 && y == 0.0) return;  // a point on the axis has no angle
    // The "diamond angle" in [0, 4]: p = y / (|x| + |y|) is monotone in the true angle on
    // each half-plane: p for x >= 0, 2 - p for x < 0, plus 4 below zero. Written with
    // copysign, not branches: random quadrants would mispredict (3x slower, measured).
    const double p = y / (std::abs(x) + std::abs(y));
    double a;
    if (exact_) {
      // Selects, not arithmetic on p: 1 - (1 - p) would round a tiny negative p (a direction
      // just below the +x axis, atan2 just below 2 pi) to +0, the other end of the circle from
      // the atan2 angle its bucket's end is converted to.
      a = std::signbit(x) ? 2.0 - p : p;
      a = a < 0.0 ? a + 4.0 : a;
    } else {
      a = 1.0 - std::copysign(1.0, x) * (1.0 - p);
      a += 2.0 - 2.0 * std::copysign(1.0, a);
    }
    const std::size_t b = std::min(buckets_ - 1, static_cast<std::size_t>(a * per_unit_));
    double* pair = bounds_.get() + 2 * b;
    if (exact_) {
      // Selects, not branches: the first point of a bucket sets both ends, later ones one or
      // none, in no predictable pattern.
      Ends& e = ends_[b];
      const bool lower = a < pair[0], higher = a > pair[1];
      pair[0] = lower ? a : pair[0];
      e.low_x = lower ? x : e.low_x;
      e.low_y = lower ? y : e.low_y;
      pair[1] = higher ? a : pair[1];
      e.high_x = higher ? x : e.high_x;
      e.high_y = higher ? y : e.high_y;
    } else {
      pair[0] = std::min(pair[0], a);
      pair[1] = std::max(pair[1], a);
    }
    ++count_;
  }
  /// Adds the points of `other` (built with the same expected_points), e.g. from another thread.
  void merge(const ArcCoverage& other);
  double degrees() const;

 private:
  /// The points at a bucket's lowest and highest pseudo-angle (exact range only). Left
  /// unwritten until the bucket's first point, which sets all four (its pseudo-angle is below
  /// the empty bucket's +inf and above its -inf); only filled buckets' ends are ever read.
  struct Ends {
    double low_x, low_y, high_x, high_y;
  };
  bool exact_;
  std::size_t count_ = 0;
  std::size_t buckets_;
  double per_unit_;  // buckets per pseudo-angle unit
  // Lowest and highest pseudo-angle of each bucket, interleaved, and (exact range) their
  // points: arrays written once by the constructor (bounds) or by the first point (ends), not
  // zero-filled first, which cost more than the fill itself in a small fit's final pass.
  std::unique_ptr<double[]> bounds_;
  std::unique_ptr<Ends[]> ends_;
};

/// Throws FitError "a <element> needs at least <needed> points, got <n>" when n < needed.
void require_point_count(std::size_t n, std::size_t needed, const char* element);

/// sigma^2 (J^T J)^-1 with sigma^2 = ssr / (n - p); zero sigma^2 when n == p.
Eigen::MatrixXd covariance_from_normal_matrix(const Eigen::MatrixXd& jtj, double ssr,
                                              std::size_t n);

/// Adds the coverage warning to `summary` when coverage < options.coverage_warning_deg; none
/// when FitOptions::result_coverage is off.
void warn_on_coverage(FitSummary& summary, double coverage_deg, const FitOptions& options);

/// Fixed-precision number for messages, e.g. format_number(0.12345, 4) == "0.1235".
std::string format_number(double value, int decimals);

/// Centred scatter matrix sum (p - centre)(p - centre)^T, accumulated without temporaries.
Eigen::Matrix3d scatter_matrix(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre);

/// Principal axes of the points about `centre`: `directions` columns in ascending order of
/// spread (column 0 = normal of the least-squares plane, column 2 = least-squares line
/// direction), `rms` the rms spread along each, `scale` the largest distance from `centre`.
struct PrincipalAxes {
  Eigen::Matrix3d directions = Eigen::Matrix3d::Identity();
  Eigen::Vector3d rms = Eigen::Vector3d::Zero();
  double scale = 0.0;
};
PrincipalAxes principal_axes(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre);

/// A set whose rms spread across a line (or plane) is below this fraction of its spread along
/// it is treated as lying exactly on it: coordinate rounding alone gives ~1e-16.
inline constexpr double degenerate_spread_ratio = 1e-10;

/// Throws FitError "all N points coincide; a <element> needs distinct points" when the largest
/// distance from the centroid is at the rounding level of the coordinates (1e-12 relative), and
/// FitError "coordinates too large ..." when the centroid is not finite (a NaN or infinite
/// coordinate, or a sum that overflowed) or when require_finite_sums refuses the set.
/// Returns that largest distance (data_scale), so callers need not compute it again.
double require_distinct_points(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid,
                             const char* element);

/// Throws FitError "coordinates too large: ..." unless `count` fourth powers of `scale` (the
/// data's size about its centroid) can be summed in double precision: the fits sum centred
/// squared distances and, in the circle, sphere and cylinder fits, their squares; overflowed
/// sums would make every result derived from them NaN. The limit, about 1e76 mm, is far beyond
/// any part, so only corrupt or mis-scaled coordinates meet it.
void require_finite_sums(double scale, std::size_t count, const char* element);

/// direction / |direction|; throws FitError naming `what` when it is zero or not finite.
Eigen::Vector3d checked_direction(const Eigen::Vector3d& direction, const char* what);

/// Summary line of an iterative fit: "converged in N iterations" or the iteration-limit text.
std::string iteration_message(FitStatus status, int iterations, const FitOptions& options);

/// atan2(y, x) mapped to [0, 2 pi), within 1e-15 rad of the correctly rounded value: octant
/// reduction, then the Taylor series of atan on |s| <= tan(pi/8) (remainder below 2e-16).
double polar_angle(double x, double y) noexcept;

/// polar_angle of n directions, given interleaved (x0, y0, x1, y1, ...) as a 2 x n column-major
/// matrix stores them, into angle[0 .. n): the same bits as polar_angle on each, two at a time
/// (the per-point cost of a section's angles in the two-point sizes).
void polar_angles(const double* xy, std::size_t n, double* angle) noexcept;

/// Outcome of gauss_newton().
template <int P>
struct GaussNewtonResult {
  FitStatus status = FitStatus::converged;
  int iterations = 0;  ///< Gauss-Newton steps taken
  double ssr = 0.0;    ///< sum of squared residuals at the returned state
  Eigen::Matrix<double, P, P> normal_matrix = Eigen::Matrix<double, P, P>::Zero();  ///< J^T J there
};

/// Gauss-Newton with step halving for small dense problems (Forbes 1989, section 3; Bjorck,
/// Numerical Methods for Least Squares Problems, 1996, 9.2). `evaluate(state, jtj, jtr)` returns
/// the sum of squares at `state` and fills J^T J and J^T r; `apply(state, step)` returns the state
/// moved by `step`. Stops (converged) when |step_weights .* step| <= step_tolerance * scale, or
/// when a step that fails to lower the sum predicts a reduction the sum cannot resolve in double
/// precision (the rounding floor of ill-conditioned sets, e.g. short arcs); returns the last
/// evaluated state, so normal_matrix belongs to it. Throws FitError(singular_message) when J^T J
/// is numerically singular.
template <int P, class State, class Evaluate, class Apply>
GaussNewtonResult<P> gauss_newton(State& state, Evaluate&& evaluate, Apply&& apply,
                                  const Eigen::Matrix<double, P, 1>& step_weights, double scale,
                                  const FitOptions& options, const char* singular_message);

/// True when the Cholesky factor L of the Jacobi-scaled normal matrix `scaled` (N x N, unit
/// diagonal up to rounding, lower triangle read) proves its smallest eigenvalue far above the
/// singularity test: lambda_min = 1 / lambda_max(A^-1) >= 1 / trace(A^-1) = 1 / ||L^-1||_F^2
/// (Golub and Van Loan, Matrix Computations, 4th ed., 2013, 4.2 and 2.3: trace bounds the
/// largest eigenvalue of a positive definite matrix). False (undecided) when the factor fails
/// or the bound does not clear 1e-12 n, i.e. a factor 100 above the test (lambda_max <= n),
/// far beyond the factor's rounding, n^2 eps of a unit-diagonal matrix (Higham, Accuracy and
/// Stability of Numerical Algorithms, 2002, theorem 10.3). A fixed-size factor and triangular
/// inverse without Eigen's general solve: the same decision with less work.
template <int N>
bool cholesky_clears_singularity(const Eigen::Matrix<double, N, N>& scaled) {
  double factor[N][N];   // L, lower triangle
  double inverse[N][N];  // L^-1, lower triangle
  for (int j = 0; j < N; ++j) {
    for (int i = j; i < N; ++i) {
      double a = scaled(i, j);
      for (int k = 0; k < j; ++k) a -= factor[i][k] * factor[j][k];
      if (i == j) {
        if (!(a > 0.0)) return false;  // not positive definite to working precision (or NaN)
        factor[j][j] = std::sqrt(a);
      } else {
        factor[i][j] = a / factor[j][j];
      }
    }
  }
  double trace = 0.0;  // ||L^-1||_F^2 = trace(A^-1)
  for (int j = 0; j < N; ++j) {
    inverse[j][j] = 1.0 / factor[j][j];
    trace += inverse[j][j] * inverse[j][j];
    for (int i = j + 1; i < N; ++i) {
      double sum = 0.0;
      for (int k = j; k < i; ++k) sum += factor[i][k] * inverse[k][j];
      inverse[i][j] = -sum / factor[i][i];
      trace += inverse[i][j] * inverse[i][j];
    }
  }
  return std::isfinite(trace) && 1.0 / trace > 1e-12 * static_cast<double>(N);
}

/// True when the Jacobi-scaled normal matrix has a reciprocal condition number below 1e-14
/// (or a zero or non-finite diagonal): the parameters are not determined by the points.
/// Fixed-size matrices are handled without heap allocation.
template <class Derived>
bool normal_matrix_is_singular(const Eigen::MatrixBase<Derived>& jtj) {
  using Matrix = typename Derived::PlainObject;
  const Matrix m = jtj;
  if (!m.allFinite() || (m.diagonal().array() <= 0.0).any()) return true;
  // Jacobi scaling makes the test independent of the parameters' units (lengths, angles).
  const auto scale = m.diagonal().cwiseSqrt().cwiseInverse().eval();
  const Matrix scaled = scale.asDiagonal() * m * scale.asDiagonal();
  // The common, well-conditioned case without the eigenvalues (they cost more than the rest of
  // a small fit's iteration): a Cholesky bound on lambda_min that clears the test by a factor
  // 100 means the eigenvalues would clear it too: same decision, found cheaply.
  if constexpr (Matrix::RowsAtCompileTime != Eigen::Dynamic) {
    if (cholesky_clears_singularity<Matrix::RowsAtCompileTime>(scaled)) return false;
  }
  const Eigen::SelfAdjointEigenSolver<Matrix> eigen(scaled, Eigen::EigenvaluesOnly);
  const auto& lambda = eigen.eigenvalues();
  return !(lambda(0) > 1e-14 * lambda(lambda.size() - 1));
}

// ---------------------------------------------------------------- template definitions

template <int P, class State, class Evaluate, class Apply>
GaussNewtonResult<P> gauss_newton(State& state, Evaluate&& evaluate, Apply&& apply,
                                  const Eigen::Matrix<double, P, 1>& step_weights, double scale,
                                  const FitOptions& options, const char* singular_message) {
  using Matrix = Eigen::Matrix<double, P, P>;
  using Vector = Eigen::Matrix<double, P, 1>;
  // A sum of n squares carries a relative rounding error of order n * eps at worst; a predicted
  // reduction below this fraction cannot be confirmed or refuted by re-evaluating the sum.
  constexpr double unresolvable_reduction = 1e-12;
  // A Gauss-Newton direction is a descent direction; if 1/4096 of the step still does not
  // descend, the point is a minimum to working precision.
  constexpr int max_halvings = 12;
  GaussNewtonResult<P> result;
  Matrix jtj;
  Vector jtr;
  double ssr = evaluate(state, jtj, jtr);
  const double tolerance = options.step_tolerance * scale;
  for (int iteration = 0;; ++iteration) {
    if (normal_matrix_is_singular(jtj)) throw FitError(singular_message);
    if (iteration == options.max_iterations) {
      result.status = FitStatus::iteration_limit;
      break;
    }
    const Vector step = jtj.ldlt().solve(-jtr);
    if (!step.allFinite()) throw FitError(singular_message);
    if (step_weights.cwiseProduct(step).norm() <= tolerance) break;
    // Gauss-Newton's predicted reduction of the sum, -2 jtr.step - step' jtj step = step' jtj step.
    const double predicted = step.dot(jtj * step);
    double fraction = 1.0;
    bool accepted = false;
    for (int halving = 0; halving < max_halvings; ++halving, fraction *= 0.5) {
      State trial = apply(state, Vector(fraction * step));
      Matrix trial_jtj;
      Vector trial_jtr;
      const double trial_ssr = evaluate(trial, trial_jtj, trial_jtr);
      if (trial_ssr < ssr || (trial_ssr == ssr && fraction == 1.0)) {
        state = std::move(trial);
        ssr = trial_ssr;
        jtj = trial_jtj;
        jtr = trial_jtr;
        accepted = true;
        break;
      }
      if (fraction * fraction * predicted <= unresolvable_reduction * ssr ||
          fraction * step_weights.cwiseProduct(step).norm() <= tolerance)
        break;
    }
    result.iterations = iteration + 1;
    if (!accepted) break;  // at the rounding floor: the last evaluated state is the solution
  }
  result.ssr = ssr;
  result.normal_matrix = jtj;
  return result;
}

}  // namespace cylzone::detail
